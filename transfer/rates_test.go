package transfer

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"maserpol/levels"
)

// fullSolve solves the complete (upper + lower) steady-state rate equations
// of physics.md section 4 as one dense linear system with gonum's
// Dense.Solve (LU): an independent path to the eliminated, banded solve.
func fullSolve(t *testing.T, nU, nL int, lines []line, r []float64, gU, gL float64, pU, pL []float64, phi float64) (up, lo []float64) {
	n := nU + nL
	a := mat.NewDense(n, n, nil)
	b := mat.NewVecDense(n, nil)
	for i := 0; i < nU; i++ {
		a.Set(i, i, gU)
		b.SetVec(i, phi*pU[i])
	}
	for i := 0; i < nL; i++ {
		a.Set(nU+i, nU+i, gL)
		b.SetVec(nU+i, phi*pL[i])
	}
	for l, ln := range lines {
		u, d := ln.up, nU+ln.lo
		// -R (n_a - n_b) in the upper equation, +R (n_a - n_b) in the lower.
		a.Set(u, u, a.At(u, u)+r[l])
		a.Set(u, d, a.At(u, d)-r[l])
		a.Set(d, d, a.At(d, d)+r[l])
		a.Set(d, u, a.At(d, u)-r[l])
	}
	var x mat.VecDense
	if err := x.SolveVec(a, b); err != nil {
		t.Fatal(err)
	}
	up, lo = make([]float64, nU), make([]float64, nL)
	for i := range up {
		up[i] = x.AtVec(i)
	}
	for i := range lo {
		lo[i] = x.AtVec(nU + i)
	}
	return up, lo
}

func linesOf(tr *levels.Transition) []line {
	var ls []line
	for _, l := range tr.Lines {
		ls = append(ls, line{up: l.Upper, lo: l.Lower, q: l.Q, s: l.Strength, offset: l.Offset})
	}
	return ls
}

// TestRateSolverAgainstFullSystem compares the bipartite elimination (dense
// and banded Cholesky, either side kept) with the full system for random
// stimulated rates up to 1e4 Gamma, random pumps and unequal decay rates.
// Tolerance 1e-8 relative: the condition number is at most ~R/Gamma = 1e4.
func TestRateSolverAgainstFullSystem(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	trs := map[string]*levels.Transition{"j1-0": j10(0.5, 3)}
	for _, name := range []string{"h2o-22", "synthetic-j6-5"} {
		tr := presetAt(t, name, 2)
		trs[name] = tr
	}
	sawBand, sawDense := false, false
	for name, tr := range trs {
		nU, nL := len(tr.Upper.States), len(tr.Lower.States)
		lines := linesOf(tr)
		pU, pL := make([]float64, nU), make([]float64, nL)
		for i := range pU {
			pU[i] = 0.5 + rng.Float64()
		}
		for i := range pL {
			pL[i] = 0.3 * rng.Float64()
		}
		gU, gL := 0.8, 1.3
		rs := newRateSolver(nU, nL, lines, gU, gL, pU, pL)
		// Force the other side too, to test both eliminations.
		for _, keepUp := range []bool{rs.keepUpper, !rs.keepUpper} {
			s := newRateSolverSide(nU, nL, lines, gU, gL, pU, pL, keepUp)
			sawBand = sawBand || s.band
			sawDense = sawDense || (!s.band && s.nK > 1)
			for trial := 0; trial < 3; trial++ {
				r := make([]float64, len(lines))
				scale := math.Pow(10, float64(2*trial))
				for l := range r {
					r[l] = scale * rng.Float64() * lines[l].s
				}
				dn := make([]float64, len(lines))
				phi := 0.7
				if err := s.solve(r, phi, dn); err != nil {
					t.Fatal(err)
				}
				up, lo := fullSolve(t, nU, nL, lines, r, gU, gL, pU, pL, phi)
				gotU, gotL := make([]float64, nU), make([]float64, nL)
				s.populations(gotU, gotL)
				for i := range up {
					if d := math.Abs(gotU[i] - up[i]); d > 1e-8*math.Max(1, math.Abs(up[i])) {
						t.Errorf("%s keepUpper=%v band=%v R~%g: n_u[%d] = %.10g, full system %.10g", name, keepUp, s.band, scale, i, gotU[i], up[i])
					}
				}
				for i := range lo {
					if d := math.Abs(gotL[i] - lo[i]); d > 1e-8*math.Max(1, math.Abs(lo[i])) {
						t.Errorf("%s keepUpper=%v R~%g: n_l[%d] = %.10g, full system %.10g", name, keepUp, scale, i, gotL[i], lo[i])
					}
				}
				for l, ln := range lines {
					if d := math.Abs(dn[l] - (up[ln.up] - lo[ln.lo])); d > 1e-8 {
						t.Fatalf("%s: inversion of line %d off by %g", name, l, d)
					}
				}
			}
		}
	}
	if !sawBand || !sawDense {
		t.Errorf("banded path tested: %v, dense path tested: %v; want both", sawBand, sawDense)
	}
}

// TestRateSolverWeak checks the iterative path of weakly saturated classes
// (solveWeak) against the full system for rates from 1e-9 to 1e-2 of the
// decay rate, either side kept, and that the path was taken. Tolerance
// 1e-13 relative to the largest population: the iteration stops at a
// proven error of 1e-15 of it, the full LU solve of these well-conditioned
// systems is accurate to a few 1e-16.
func TestRateSolverWeak(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, name := range []string{"h2o-22", "synthetic-j6-5"} {
		tr := presetAt(t, name, 1)
		nU, nL := len(tr.Upper.States), len(tr.Lower.States)
		lines := linesOf(tr)
		pU, pL := make([]float64, nU), make([]float64, nL)
		for i := range pU {
			pU[i] = 0.5 + rng.Float64()
		}
		for i := range pL {
			pL[i] = 0.3 * rng.Float64()
		}
		gU, gL := 0.8, 1.3
		for _, keepUp := range []bool{true, false} {
			s := newRateSolverSide(nU, nL, lines, gU, gL, pU, pL, keepUp)
			for _, scale := range []float64{1e-9, 1e-6, 1e-4, 1e-3} {
				r := make([]float64, len(lines))
				for l := range r {
					r[l] = scale * rng.Float64() * lines[l].s
				}
				dn := make([]float64, len(lines))
				phi := 0.7
				if err := s.solve(r, phi, dn); err != nil {
					t.Fatal(err)
				}
				if !s.weak {
					t.Errorf("%s keepUpper=%v R~%g: solved by elimination, want iteration", name, keepUp, scale)
				}
				up, lo := fullSolve(t, nU, nL, lines, r, gU, gL, pU, pL, phi)
				top := 0.0
				for _, v := range append(append([]float64(nil), up...), lo...) {
					top = math.Max(top, math.Abs(v))
				}
				for l, ln := range lines {
					if d := math.Abs(dn[l] - (up[ln.up] - lo[ln.lo])); d > 1e-13*top {
						t.Fatalf("%s keepUpper=%v R~%g: inversion of line %d off by %g (largest population %g)", name, keepUp, scale, l, d, top)
					}
				}
			}
		}
	}
}

// TestChunkSchur checks the grouping of eliminated states for the Schur
// updates: consecutive non-empty states only, at most schurRank, every
// state's kept range inside its chunk's, and no chunk wider than a stored
// row (a wider one would write past its row of the band).
func TestChunkSchur(t *testing.T) {
	k0 := []int{0, 0, 1, 5, 0, 5, 5, 5, 5, 5}
	kw := []int{4, 4, 4, 3, 0, 3, 3, 3, 3, 3}
	got := chunkSchur(k0, kw, 4)
	want := []schurChunk{{0, 2, 0, 4}, {2, 1, 1, 4}, {3, 1, 5, 3}, {5, 4, 5, 3}, {9, 1, 5, 3}}
	if len(got) != len(want) {
		t.Fatalf("chunks %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Errorf("chunk %d: %v, want %v", i, got[i], want[i])
		}
	}
	// The solvers of the hyperfine presets, both sides kept.
	for _, name := range []string{"h2o-22", "synthetic-j6-5"} {
		tr := presetAt(t, name, 1)
		nU, nL := len(tr.Upper.States), len(tr.Lower.States)
		pU, pL := make([]float64, nU), make([]float64, nL)
		for _, keepUp := range []bool{true, false} {
			rs := newRateSolverSide(nU, nL, linesOf(tr), 1, 1, pU, pL, keepUp)
			maxW := rs.nK
			if rs.band {
				maxW = rs.kd + 1
			}
			seen := 0
			for _, c := range rs.chunks {
				if c.m < 1 || c.m > schurRank || c.w > maxW {
					t.Errorf("%s keepUpper=%v: chunk %v (row width %d)", name, keepUp, c, maxW)
				}
				for e := c.e0; e < c.e0+c.m; e++ {
					if rs.k0[e] < c.k0 || rs.k0[e]+rs.kw[e] > c.k0+c.w {
						t.Errorf("%s: state %d range [%d,%d) outside chunk %v", name, e, rs.k0[e], rs.k0[e]+rs.kw[e], c)
					}
					seen++
				}
			}
			if seen != rs.nE-len(rs.empty) {
				t.Errorf("%s keepUpper=%v: %d states in chunks, want %d", name, keepUp, seen, rs.nE-len(rs.empty))
			}
		}
	}
}

// TestPumpWeights checks the pump normalizations of doc.go: mean weight 1
// over a level (total pump rate fixed), |m_J| = J favoured for positive
// alignment, weights non-negative at |Alignment| = 1, F weights relative.
func TestPumpWeights(t *testing.T) {
	tr := j10(0.5, 1)
	w, err := pumpWeights(Pump{Kind: Anisotropic, Alignment: 1}, tr.Upper, nil)
	if err != nil {
		t.Fatal(err)
	}
	// J = 1: 3 m^2 - 2 = (1, -2, 1), normalized by 2: f = (1/2, -1, 1/2);
	// p = 1 + f = (3/2, 0, 3/2), mean 1.
	want := []float64{1.5, 0, 1.5}
	for i := range want {
		if math.Abs(w[i]-want[i]) > 1e-12 {
			t.Errorf("alignment weights %v, want %v", w, want)
			break
		}
	}
	h := presetAt(t, "h2o-22", 0.5)
	for _, a := range []float64{-1, -0.3, 0.6, 1} {
		w, err := pumpWeights(Pump{Kind: Anisotropic, Alignment: a}, h.Upper, nil)
		if err != nil {
			t.Fatal(err)
		}
		sum := 0.0
		for _, v := range w {
			if v < 0 {
				t.Errorf("alignment %g: negative weight %g", a, v)
			}
			sum += v
		}
		if math.Abs(sum/float64(len(w))-1) > 1e-12 {
			t.Errorf("alignment %g: mean weight %g, want 1", a, sum/float64(len(w)))
		}
	}
	w, err = pumpWeights(Pump{Kind: Hyperfine, UpperF: map[float64]float64{7: 3}}, h.Upper, map[float64]float64{7: 3})
	if err != nil {
		t.Fatal(err)
	}
	var w7, w6 float64
	for i, s := range h.Upper.States {
		switch s.F {
		case 7:
			w7 = w[i]
		case 6:
			w6 = w[i]
		}
	}
	if math.Abs(w7/w6-3) > 1e-12 {
		t.Errorf("hyperfine pump: F=7/F=6 weight ratio %g, want 3", w7/w6)
	}
	// The alignment shapes the lower level's pump too, with the same sign
	// (types.go, doc.go): in a model the lower pump is LowerPump times the
	// aligned weights, and a lower state with the largest <m_J^2> (|m_J| =
	// J_l = 5) is pumped more than one with the smallest for Alignment > 0.
	pm := Pump{Kind: Anisotropic, Alignment: 0.5, LowerPump: 0.2}
	m, err := NewModel(h, Params{Theta: 1, Doppler: 600, Pump: pm})
	if err != nil {
		t.Fatal(err)
	}
	wl, err := pumpWeights(pm, h.Lower, nil)
	if err != nil {
		t.Fatal(err)
	}
	lp := m.rs.pump(false)
	iMax, iMin := 0, 0
	for i, s := range h.Lower.States {
		if d := math.Abs(lp[i] - 0.2*m.rs.gKE(true)*wl[i]); d > 1e-12 {
			t.Errorf("lower state %d: pump %g, want LowerPump x aligned weight %g", i, lp[i], 0.2*wl[i])
		}
		if s.MJ2 > h.Lower.States[iMax].MJ2 {
			iMax = i
		}
		if s.MJ2 < h.Lower.States[iMin].MJ2 {
			iMin = i
		}
	}
	if !(lp[iMax] > lp[iMin]) {
		t.Errorf("lower level: pump %g at <m_J^2> = %.3g, %g at %.3g; want more pumping at large |m_J| for Alignment > 0", lp[iMax], h.Lower.States[iMax].MJ2, lp[iMin], h.Lower.States[iMin].MJ2)
	}
}

// Test-only accessors of rateSolver, for comparing its solution with the
// independent full-system solve.

// gKE returns the decay rate (units of Gamma) of the upper or lower level.
func (rs *rateSolver) gKE(upper bool) float64 {
	if upper == rs.keepUpper {
		return rs.gK
	}
	return rs.gE
}

// pump returns the pump rates of the upper or lower level.
func (rs *rateSolver) pump(upper bool) []float64 {
	if upper == rs.keepUpper {
		return rs.pK
	}
	return rs.pE
}
