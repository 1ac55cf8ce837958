package transfer

import (
	"math"

	"maserpol/levels"
)

// muN is mu_N/h in Hz per gauss (CODATA 2018: 7.622593229 MHz/T).
const muN = 762.2593229

// testSpecies is an SiO-like J=1-0 line (rest frequency 43.122 GHz, A and
// mass of SiO v=1 J=1-0 to the precision needed here; values from memory).
func testSpecies(g float64) *levels.Species {
	return &levels.Species{
		Name:      "test-j1-0",
		Frequency: 43.122e9,
		EinsteinA: 3.0e-6,
		Mass:      44,
		Magneton:  levels.Nuclear,
		Upper:     levels.Level{J: 1, G: g},
		Lower:     levels.Level{J: 0, G: g},
	}
}

// j10 builds the spin-free J=1-0 transition by hand: upper M = -1, 0, +1 at
// E/h = -g mu_N B M (H_Z = -mu_N B g J_z), lower M = 0, one line per upper
// state with S = 1 and q = M.
func j10(g, field float64) *levels.Transition {
	sp := testSpecies(g)
	up := &levels.Structure{Level: sp.Upper, Field: field}
	for _, m := range []float64{-1, 0, 1} {
		up.States = append(up.States, levels.State{Energy: -g * muN * field * m, M: m, F: 1, F1: 1, MJ2: m * m, Vector: []float64{1}})
	}
	lo := &levels.Structure{Level: sp.Lower, Field: field,
		States: []levels.State{{Energy: 0, M: 0, F: 0, F1: 0, MJ2: 0, Vector: []float64{1}}}}
	tr := &levels.Transition{Species: sp, Field: field, Upper: up, Lower: lo}
	for i, s := range up.States {
		tr.Lines = append(tr.Lines, levels.Line{Upper: i, Lower: 0, Q: int(s.M), Offset: s.Energy, Strength: 1, Amplitude: 1})
	}
	return tr
}

// j10Split returns a J=1-0 transition at field B (G) whose sigma-pi
// splitting is split (Hz), via the g-factor.
func j10Split(split, field float64) *levels.Transition {
	return j10(split/(muN*math.Abs(field)), field)
}

func deg(d float64) float64 { return d * math.Pi / 180 }
