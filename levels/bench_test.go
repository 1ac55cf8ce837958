package levels_test

import (
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

func fields50() []float64 {
	b := make([]float64, 50)
	for i := range b {
		b[i] = 0.1 * float64(i+1) * float64(i+1) // 0.1 .. 250 G, through decoupling
	}
	return b
}

// BenchmarkSynthetic50Fields: the synthetic J = 6 -> 5 transition (spins 3/2
// and 1/2, dimensions 104 and 88) built once and solved at 50 fields.
// Target: under 50 ms per op on one core.
func BenchmarkSynthetic50Fields(b *testing.B) {
	sp, err := species.Preset("synthetic-j6-5")
	if err != nil {
		b.Fatal(err)
	}
	fs := fields50()
	var tr levels.Transition
	b.ReportAllocs()
	for b.Loop() {
		ts, err := levels.NewTransitionSolver(sp)
		if err != nil {
			b.Fatal(err)
		}
		for _, B := range fs {
			if err := ts.Solve(B, &tr); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// BenchmarkSynthetic50NewTransition: the same with NewTransition at every
// field (rebuilding the Hamiltonian and dipole blocks each time).
func BenchmarkSynthetic50NewTransition(b *testing.B) {
	sp, err := species.Preset("synthetic-j6-5")
	if err != nil {
		b.Fatal(err)
	}
	fs := fields50()
	b.ReportAllocs()
	for b.Loop() {
		for _, B := range fs {
			if _, err := levels.NewTransition(sp, B); err != nil {
				b.Fatal(err)
			}
		}
	}
}

func BenchmarkComponentsSynthetic(b *testing.B) {
	sp, _ := species.Preset("synthetic-j6-5")
	for b.Loop() {
		if _, err := levels.Components(sp); err != nil {
			b.Fatal(err)
		}
	}
}
