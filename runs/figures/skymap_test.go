package figures

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// TestSkyMap writes PNG, SVG and PDF, and a map without positions is
// ErrNoData rather than a panic or an empty file.
func TestSkyMap(t *testing.T) {
	dir := t.TempDir()
	m := &SkyMap{Title: "Corvid-12 (invented)", Unit: "mas", Features: []SkyFeature{
		{X: 0, Y: 0, EVPA: 0.3, Ml: 0.2, FieldPA: 0.3 + math.Pi/2},
		{X: 12, Y: -5, EVPA: 1.2, Ml: 0.05, FieldPA: 1.2, Ambiguous: true},
		{X: -7, Y: 9, EVPA: math.NaN(), Ml: math.NaN(), FieldPA: math.NaN()},
	}}
	paths, err := m.Save(filepath.Join(dir, "sky"), []string{"png", "svg", "pdf"})
	if err != nil || len(paths) != 3 {
		t.Fatalf("%v %v", paths, err)
	}
	for _, p := range paths {
		if st, err := os.Stat(p); err != nil || st.Size() < 500 {
			t.Errorf("%s: %v", p, err)
		}
	}
	empty := &SkyMap{Unit: "mas", Features: []SkyFeature{{X: math.NaN(), Y: math.NaN()}}}
	if _, err := empty.Save(filepath.Join(dir, "none"), []string{"png"}); !errors.Is(err, ErrNoData) {
		t.Errorf("no positions: %v, want ErrNoData", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "none.png")); err == nil {
		t.Error("a file was written for an empty map")
	}
}
