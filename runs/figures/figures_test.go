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

	"os/exec"
	"regexp"

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
	if e := powerOfTen(big, false); e != 10 || scaledLabel(big.YLabel, e) != "I (10^{10} K)" {
		t.Errorf("big: e = %d, %q", e, scaledLabel(big.YLabel, e))
	}
	if e := powerOfTen(small, false); e != -5 || scaledLabel(small.YLabel, e) != "m_l (10^{-5})" {
		t.Errorf("small: e = %d, %q", e, scaledLabel(small.YLabel, e))
	}
	if e := powerOfTen(plain, false); e != 0 {
		t.Errorf("0.017 scaled by 10^%d", e)
	}
	// A band counts: a small median inside a wide range is not rescaled.
	banded := Panel{YLabel: "P_V", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{-5e-4, -4e-4}}},
		Bands: []Band{{X: []float64{0, 1}, Lo: []float64{-0.02, -0.02}, Hi: []float64{0.02, 0.02}}}}
	if e := powerOfTen(banded, false); e != 0 {
		t.Errorf("band to 0.02 scaled by 10^%d", e)
	}
}

func TestParseScripts(t *testing.T) {
	for _, c := range []struct {
		in   string
		want []scriptRun
	}{
		{"m_l", []scriptRun{{"m", 0}, {"l", -1}}},
		{"P_V (10^{-3})", []scriptRun{{"P", 0}, {"V", -1}, {" (10", 0}, {"-3", 1}, {")", 0}}},
		{`B\_mG x^`, []scriptRun{{"B_mG x^", 0}}},
		{"T_{seed} = 3 K", []scriptRun{{"T", 0}, {"seed", -1}, {" = 3 K", 0}}},
	} {
		got := parseScripts(c.in)
		if len(got) != len(c.want) {
			t.Errorf("%q: %+v, want %+v", c.in, got, c.want)
			continue
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("%q: %+v, want %+v", c.in, got, c.want)
			}
		}
	}
	if Escape("file_a^2.toml") != `file\_a\^2.toml` {
		t.Error(Escape("file_a^2.toml"))
	}
	// Sub- and superscripts make text no wider than the plain string.
	st := textStyle(8)
	if w1, w2 := st.Width("m_l"), textStyle(8).Width("ml"); w1 >= w2 {
		t.Errorf("m_l is %v wide, ml %v: the subscript is not smaller", w1, w2)
	}
}

// sampleStack has every element a figure draws: Greek letters, sub- and
// superscripts, a band, error bars, markers, a log axis and a note.
func sampleStack() *Stack {
	x := []float64{0.01, 0.1, 1, 10, 100}
	return &Stack{Title: "m_l and P_V against R/Γ", XLabel: "saturation R/Γ", LogX: true, Panels: []Panel{
		{YLabel: "m_l", Legend: true, Bands: []Band{{Label: "θ = 0–90°", X: x, Lo: []float64{0, 0, 0.01, 0.05, 0.1}, Hi: []float64{0.01, 0.05, 0.2, 0.3, 0.33}}},
			Curves: []Curve{{Label: "measured", X: []float64{30}, Y: []float64{0.2}, YErr: []float64{0.03}, Style: 1, Points: true}}, Extra: []string{"markers: R/gΩ > 0.1"}},
		{YLabel: "P_V", AutoLogY: true, Curves: []Curve{{X: x, Y: []float64{-1e-5, -1e-4, -1e-3, -2e-3, -3e-3}}}, Note: "χ = 0°"},
	}}
}

// Every panel of a PNG figure shows ink; an empty panel is detected.
func TestPNGPanelsNotEmpty(t *testing.T) {
	dir := t.TempDir()
	s := sampleStack()
	paths, err := s.Save(filepath.Join(dir, "f"), []string{"png"})
	if err != nil {
		t.Fatal(err)
	}
	if e, err := EmptyPanels(paths[0], s); err != nil || len(e) > 0 {
		t.Errorf("empty panels %v (%v)", e, err)
	}
	// The P_V values span 2.5 decades with one sign: log axis of -P_V.
	if pn := autoLog(s.Panels[1]); !pn.LogY || pn.YLabel != "−P_V" {
		t.Errorf("auto log: LogY %v, label %q", pn.LogY, pn.YLabel)
	}
	// A panel whose curve lies outside the x range of the others is empty.
	e := &Stack{XLabel: "x", Panels: []Panel{
		{YLabel: "a", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{0, 1}}}},
		{YLabel: "b", Curves: []Curve{{X: []float64{0, 1}, Y: []float64{math.NaN(), math.NaN()}}}},
	}}
	paths, err = e.Save(filepath.Join(dir, "e"), []string{"png"})
	if err != nil {
		t.Fatal(err)
	}
	if got, _ := EmptyPanels(paths[0], e); len(got) != 1 || got[0] != 1 {
		t.Errorf("empty panels %v, want [1]", got)
	}
}

// GhostscriptRenders renders a PDF or EPS file with Ghostscript (an
// outside PostScript and PDF interpreter) and fails on any error or
// warning; it skips when gs is not installed.
func ghostscriptRenders(t *testing.T, path string) {
	t.Helper()
	gs, err := exec.LookPath("gs")
	if err != nil {
		t.Skip("Ghostscript not installed (Debian: apt-get install ghostscript); .ci/run installs it")
	}
	out := filepath.Join(t.TempDir(), "gs.png")
	args := []string{"-q", "-dSAFER", "-dBATCH", "-dNOPAUSE", "-dPDFSTOPONERROR", "-sDEVICE=png16m", "-r72", "-sOutputFile=" + out}
	if strings.HasSuffix(path, ".eps") {
		args = append(args, "-dEPSCrop")
	}
	msg, err := exec.Command(gs, append(args, path)...).CombinedOutput()
	if err != nil || len(bytes.TrimSpace(msg)) > 0 {
		t.Errorf("gs %s: %v\n%s", path, err, msg)
		return
	}
	f, err := os.Open(out)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if n := inkPixels(img, img.Bounds()); n < 1000 {
		t.Errorf("gs renders %s nearly blank (%d ink pixels)", path, n)
	}
}

// PDF and EPS are valid (Ghostscript renders them without a message), EPS
// starts with the EPSF 3.0 header (Adobe DSC 3.0, EPSF 3.0 specification)
// with an integer bounding box, and neither depends on a font: text is
// drawn as glyph outlines, so Greek letters survive code page 1252.
func TestVectorFormatsValid(t *testing.T) {
	dir := t.TempDir()
	paths, err := sampleStack().Save(filepath.Join(dir, "f"), []string{"pdf", "eps"})
	if err != nil {
		t.Fatal(err)
	}
	eps, _ := os.ReadFile(paths[1])
	if !bytes.HasPrefix(eps, []byte("%!PS-Adobe-3.0 EPSF-3.0\n")) {
		t.Errorf("EPS header %q", eps[:min(40, len(eps))])
	}
	if !regexp.MustCompile(`(?m)^%%BoundingBox: \d+ \d+ \d+ \d+$`).Match(eps) {
		t.Error("EPS bounding box not integer")
	}
	if bytes.Contains(eps, []byte("findfont")) {
		t.Error("EPS refers to a font that it does not embed")
	}
	pdf, _ := os.ReadFile(paths[0])
	if bytes.Contains(pdf, []byte("/BaseFont")) {
		t.Error("PDF refers to a font; text should be outlines")
	}
	for _, p := range paths {
		ghostscriptRenders(t, p)
	}
}
