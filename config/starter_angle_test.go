package config

import (
	"math"
	"testing"

	"maserpol/levels/species"
)

// Every starter sets a field direction at which V, Q and U are all
// non-zero: theta away from 0 and 90 deg, chi away from multiples of 45
// deg (V = 0 at theta = 90 deg, Q = U = 0 at theta = 0; U = 0 at chi = 0,
// 90 deg and Q = 0 at chi = 45 deg in the sky frame).
func TestStarterDirection(t *testing.T) {
	for _, name := range species.Names() {
		text, err := StarterNamed(name, "x")
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		st, err := Parse([]byte(text), name+".toml")
		if err != nil {
			t.Fatalf("%s: starter does not parse: %v", name, err)
		}
		p := st.Models[0].Params
		deg := 180 / math.Pi
		if th := p.Theta * deg; math.Abs(th-90) < 10 || th < 10 {
			t.Errorf("%s: starter theta = %g deg", name, th)
		}
		if chi := math.Mod(p.Chi*deg, 45); math.Abs(chi) < 5 || math.Abs(chi-45) < 5 {
			t.Errorf("%s: starter chi = %g deg", name, p.Chi*deg)
		}
	}
}
