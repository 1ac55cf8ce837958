package levels_test

import (
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

// BenchmarkTableSolve solves the methanol-like component-table species
// (88 upper, 104 lower states) at one field: the per-model cost of the
// table form.
func BenchmarkTableSolve(b *testing.B) {
	sp, err := species.Load("../testdata/species/methanol-like-6.7-table.toml")
	if err != nil {
		b.Fatal(err)
	}
	ts, err := levels.NewTransitionSolver(sp)
	if err != nil {
		b.Fatal(err)
	}
	var tr levels.Transition
	b.ReportAllocs()
	for b.Loop() {
		if err := ts.Solve(0.01, &tr); err != nil {
			b.Fatal(err)
		}
	}
}
