package figures

import (
	"bytes"
	"errors"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
)

func TestSaveFormats(t *testing.T) {
	dir := t.TempDir()
	n := 64
	v := make([]float64, n)
	i, q, u, vv := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for k := range v {
		v[k] = -3 + 6*float64(k)/float64(n-1)
		i[k] = 100 * math.Exp(-v[k]*v[k])
		q[k] = 0.2 * i[k]
		vv[k] = -2 * v[k] * i[k] * 0.01
	}
	s := Spectra("m0001", v, []Stokes{{Label: "R/Γ = 0.1", I: i, Q: q, U: u, V: vv}, {Label: "R/Γ = 10", I: i, Q: q, U: u, V: vv}})
	paths, err := s.Save(filepath.Join(dir, "spec"), []string{"png", "svg", "pdf", "eps"})
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) != 4 {
		t.Fatalf("paths %v", paths)
	}
	data, _ := os.ReadFile(paths[0])
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	if w := img.Bounds().Dx(); w != int(3.5*DPI) {
		t.Errorf("PNG width %d px, want %d (3.5 in at %d dpi)", w, int(3.5*DPI), DPI)
	}
	svg, _ := os.ReadFile(paths[1])
	for _, want := range []string{"velocity (km/s)", "I (K)", "V (K)", "R/Γ = 10"} {
		if !bytes.Contains(svg, []byte(want)) {
			t.Errorf("SVG lacks %q", want)
		}
	}
	ents, _ := os.ReadDir(dir)
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp-") {
			t.Errorf("temporary file left: %s", e.Name())
		}
	}
}

func TestLogAxisSkipsNonPositive(t *testing.T) {
	s := Saturation("x", []Curve{{Label: "a", X: []float64{0, 1e-2, 1, 100}, Y: []float64{0, 0.01, 0.1, 0.3}}},
		[]Curve{{X: []float64{0, 1e-2, 1, 100}, Y: []float64{0, 0.001, 0.01, 0.02}}})
	if _, err := s.Save(filepath.Join(t.TempDir(), "sat"), []string{"svg"}); err != nil {
		t.Fatal(err)
	}
	bad := &Stack{Panels: []Panel{{Curves: []Curve{{X: []float64{math.NaN()}, Y: []float64{1}}}}}}
	if _, err := bad.Save(filepath.Join(t.TempDir(), "bad"), []string{"svg"}); err == nil {
		t.Error("figure without finite data accepted")
	}
	if _, err := s.Save(filepath.Join(t.TempDir(), "x"), []string{"gif"}); err == nil {
		t.Error("unknown format accepted")
	}
}

func labels(ts []plot.Tick) string {
	var out []string
	for _, t := range ts {
		if t.Label != "" {
			out = append(out, t.Label)
		}
	}
	return strings.Join(out, " ")
}

func TestStepTicks(t *testing.T) {
	for _, c := range []struct {
		min, max float64
		n        int
		want     string
	}{
		// Fractions at fixed steps, not 0.05, 0.25, 0.45.
		{0, 0.65, 6, "0 0.2 0.4 0.6"},
		{0.002, 0.48, 6, "0.1 0.2 0.3 0.4"},
		{-0.26, 0.01, 6, "-0.25 -0.20 -0.15 -0.10 -0.05 0"},
		// Velocity axis of a spectrum: five labels, not three.
		{-4, 4, 7, "-4 -2 0 2 4"},
		{30, 90, 7, "30 40 50 60 70 80 90"},
		{0, 1.45e-2, 6, "0 0.005 0.010"},
		{-3.2e-7, 3.1e-7, 6, "-2e-07 0 2e-07"},
	} {
		if got := labels(stepTicks{maxLabels: c.n}.Ticks(c.min, c.max)); got != c.want {
			t.Errorf("ticks on [%g, %g]: %q, want %q", c.min, c.max, got, c.want)
		}
	}
}

func TestSingleValuesOnLogAxes(t *testing.T) {
	// One checkpoint: one x value, which a log axis must not widen to <= 0,
	// and a P_V of round-off. The curve becomes a marker.
	s := Saturation("one checkpoint", []Curve{{Label: "m0000", X: []float64{7e-7}, Y: []float64{4e-5}}},
		[]Curve{{X: []float64{7e-7}, Y: []float64{9e-19}}})
	if !ZeroRoundoff(&s.Panels[1], RoundoffLevel, "P_V = 0 (θ = 90 deg)") {
		t.Fatal("round-off P_V not zeroed")
	}
	logY := &Stack{LogX: true, Panels: []Panel{{LogY: true, Curves: []Curve{{X: []float64{1, 2}, Y: []float64{3, 3}}}},
		{LogY: true, Curves: []Curve{{X: []float64{1, 2}, Y: []float64{0, -1}}}}}}
	for _, st := range []*Stack{s, logY} {
		paths, err := st.Save(filepath.Join(t.TempDir(), "f"), []string{"svg", "png"})
		if err != nil || len(paths) != 2 {
			t.Fatalf("%v %v", paths, err)
		}
	}
	empty := &Stack{Title: "empty", LogX: true, Panels: []Panel{{Curves: []Curve{{X: []float64{0, -1}, Y: []float64{1, 2}}}}}}
	if _, err := empty.Save(filepath.Join(t.TempDir(), "e"), []string{"svg"}); !errors.Is(err, ErrNoData) {
		t.Errorf("figure with nothing on a log axis: %v, want ErrNoData", err)
	}
}

func TestLegendOutsideAndCapped(t *testing.T) {
	var cs []Curve
	for i := 0; i < 9; i++ {
		cs = append(cs, Curve{Label: "θ = " + strconv.Itoa(10*i) + " deg", X: []float64{1, 2}, Y: []float64{float64(i), float64(i + 1)}, Style: i})
	}
	with := &Stack{Panels: []Panel{{Curves: cs, Legend: true}}}
	without := &Stack{Panels: []Panel{{Curves: cs}}}
	fw, err := with.layout()
	if err != nil {
		t.Fatal(err)
	}
	fo, _ := without.layout()
	// The legend takes rows of its own above the panel.
	if fw.h <= fo.h {
		t.Errorf("figure with legend %v high, without %v: legend not outside the panel", fw.h, fo.h)
	}
	es := fw.panels[0].legend
	if len(es) != DefaultMaxLegend+1 || es[len(es)-1].text != "+3 more" || len(es[len(es)-1].thumbs) != 0 {
		t.Errorf("legend entries: %d, last %q", len(es), es[len(es)-1].text)
	}
	path := filepath.Join(t.TempDir(), "legend")
	if _, err := with.Save(path, []string{"svg"}); err != nil {
		t.Fatal(err)
	}
	svg, _ := os.ReadFile(path + ".svg")
	if !bytes.Contains(svg, []byte("+3 more")) || bytes.Contains(svg, []byte("θ = 80 deg")) {
		t.Error("SVG legend is not capped with +3 more")
	}
}

func TestSegmentsBreakAtFlips(t *testing.T) {
	xy := plotter.XYs{{X: 30, Y: 20}, {X: 55, Y: -70}, {X: 70, Y: -70}, {X: 90, Y: -69}}
	if n := len(segments(xy, EVPABreak)); n != 2 {
		t.Errorf("EVPA with a 90 deg flip: %d segments, want 2", n)
	}
	if n := len(segments(xy, 0)); n != 1 {
		t.Errorf("no break: %d segments", n)
	}
}

func TestPowerOfTenLabels(t *testing.T) {
	big := Panel{YLabel: "I (K)", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{0, 7.1e10}}}}
	small := Panel{YLabel: "m_l", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{1e-6, 4.2e-5}}}}
	plain := Panel{YLabel: "Q (K)", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{0, 0.017}}}}
	if e := powerOfTen(big, false); e != 10 || scaledLabel(big.YLabel, e) != "I (10^10 K)" {
		t.Errorf("big: e = %d, %q", e, scaledLabel(big.YLabel, e))
	}
	if e := powerOfTen(small, false); e != -5 || scaledLabel(small.YLabel, e) != "m_l (10^-5)" {
		t.Errorf("small: e = %d, %q", e, scaledLabel(small.YLabel, e))
	}
	if e := powerOfTen(plain, false); e != 0 {
		t.Errorf("0.017 scaled by 10^%d", e)
	}
}
