package figures

import (
	"bytes"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
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
