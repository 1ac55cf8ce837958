package transfer

import (
	"math"
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

// A given span that cuts through a line is widened to hold it whole
// instead of clipping its emission; with a reference line the span is
// centred on it (velocity 0).
func TestSpanCoversLines(t *testing.T) {
	sp, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	j, err := levels.SelectComponent(cs, "2-1")
	if err != nil {
		t.Fatal(err)
	}
	ref := sp.Referenced(cs[j].Offset) // F=2-1 at 0; F=1-1 at +4.84 km/s, F=0-1 at -7.07 km/s
	tr, err := levels.NewTransition(ref, 1)
	if err != nil {
		t.Fatal(err)
	}
	vd := 300.0
	// 10 km/s centred on F=2-1 cuts F=1-1 (+4.84 km/s) and leaves out F=0-1.
	m, err := NewModel(tr, Params{Theta: 1, Doppler: vd, Span: 10e3, Channels: 512})
	if err != nil {
		t.Fatal(err)
	}
	v := m.Velocity()
	c := levels.SpeedOfLight
	v11 := -c * (cs[0].Offset - cs[j].Offset) / ref.Frequency
	if v[0] > -5e3+1 || v[len(v)-1] < v11+2*vd {
		t.Errorf("grid %.4g..%.4g km/s: want from -5 km/s (centred on the reference) to past F=1-1 at %.4g km/s + 2 Doppler widths", v[0]/1e3, v[len(v)-1]/1e3, v11/1e3)
	}
	var widened, dropped bool
	for _, w := range m.warnings {
		widened = widened || strings.Contains(w, "widened")
		dropped = dropped || strings.Contains(w, "outside the channel span")
	}
	if !widened || !dropped {
		t.Errorf("warnings %q: want the widening and the line left out named", m.warnings)
	}
	// Without a reference, the span is centred between the lines as before.
	tr0, _ := levels.NewTransition(sp, 1)
	m0, err := NewModel(tr0, Params{Theta: 1, Doppler: vd, Span: 20e3, Channels: 512})
	if err != nil {
		t.Fatal(err)
	}
	v0 := m0.Velocity()
	if mid := (v0[0] + v0[len(v0)-1]) / 2; math.Abs(mid-(-c*(cs[0].Offset+cs[2].Offset)/2/sp.Frequency)) > 1 {
		t.Errorf("span centre %.4g km/s, want midway between the outer lines", mid/1e3)
	}
}
