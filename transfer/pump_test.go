package transfer

import (
	"context"
	"math"
	"testing"

	"maserpol/levels/species"
)

// Pumping by {F1, F} level: the named upper level takes its weight, the
// others 0 with OnlyNamed; the weights keep mean 1 over the level.
func TestPumpByLevel(t *testing.T) {
	tr := presetAt(t, "synthetic-j6-5", 0.01)
	s0 := tr.Upper.States[0]
	pm := Pump{Kind: Hyperfine, UpperLevels: map[[2]float64]float64{{s0.F1, s0.F}: 2}, OnlyNamed: true}
	w, err := levelPumpWeights(pm, tr.Upper, true)
	if err != nil {
		t.Fatal(err)
	}
	sum, named := 0.0, 0
	for i, s := range tr.Upper.States {
		sum += w[i]
		if s.F1 == s0.F1 && s.F == s0.F {
			named++
			if w[i] == 0 {
				t.Errorf("named state %d has weight 0", i)
			}
		} else if w[i] != 0 {
			t.Errorf("state %d (F1=%g F=%g) pumped with OnlyNamed: %g", i, s.F1, s.F, w[i])
		}
	}
	if named != int(2*s0.F+1) || math.Abs(sum/float64(len(w))-1) > 1e-12 {
		t.Errorf("%d named states (want %g), mean weight %g", named, 2*s0.F+1, sum/float64(len(w)))
	}
	// The lower level keeps weight 1 where nothing names it.
	wl, err := levelPumpWeights(pm, tr.Lower, false)
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range wl {
		if x != 1 {
			t.Fatalf("lower state %d: weight %g, want 1", i, x)
		}
	}
	if _, err := levelPumpWeights(Pump{Kind: Hyperfine, UpperLevels: map[[2]float64]float64{{1, 1}: -1}}, tr.Upper, true); err == nil {
		t.Error("negative level weight accepted")
	}
}

// Pumping one component of HCN J=1-0 (its upper level F=0 only): the maser
// then peaks at that component's velocity (-7.9 km/s, Lovas 1992 offsets)
// instead of at the strongest one, F=2-1 (-0.8 km/s), which isotropic
// pumping favours (strengths 5:3:1).
func TestPumpOneComponent(t *testing.T) {
	sp, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	peakV := func(pm Pump) float64 {
		tj, err := Run(context.Background(), Params{Species: sp, Field: 1, Theta: 1, Doppler: 300, Channels: 512, Saturation: 10, Pump: pm})
		if err != nil {
			t.Fatal(err)
		}
		c := tj.Checkpoints[len(tj.Checkpoints)-1]
		best := 0
		for k := range c.I {
			if c.I[k] > c.I[best] {
				best = k
			}
		}
		return tj.Velocity[best]
	}
	if v := peakV(Pump{}); math.Abs(v+830) > 100 {
		t.Errorf("isotropic pump: peak at %.0f m/s, want the F=2-1 component near -830 m/s", v)
	}
	one := Pump{Kind: Hyperfine, UpperLevels: map[[2]float64]float64{{0, 0}: 1}, OnlyNamed: true}
	if v := peakV(one); math.Abs(v+7890) > 100 {
		t.Errorf("F=0 pumped: peak at %.0f m/s, want the F=0-1 component near -7890 m/s", v)
	}
}
