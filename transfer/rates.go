package transfer

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// This file holds the steady-state population rate equations of
// physics.md section 4 for one velocity class:
//
//	0 = pi_a - g_u n_a - sum_b R_ab (n_a - n_b)   (upper eigenstates a)
//	0 = pi_b - g_l n_b + sum_a R_ab (n_a - n_b)   (lower eigenstates b)
//
// with every rate in units of the reference decay rate Gamma (see
// Model.gamma) and the populations in units of the unsaturated upper
// population at the centre of the Doppler profile. The system is bipartite:
// the larger side is eliminated (its block is diagonal), leaving a
// symmetric, strictly diagonally dominant and hence positive-definite
// system on the smaller side, solved by Cholesky (gonum lapack64).
//
// Each class is solved directly, so the result does not depend on a
// starting guess; the populations carried over from the previous step
// (warm start) give the propagation matrix at the start of the next step
// without a new solve.

// rateSolver solves the rate equations of one velocity class. It owns its
// workspaces; solve does not allocate.
type rateSolver struct {
	nK, nE    int  // kept and eliminated side sizes
	keepUpper bool // whether the kept side is the upper level
	gK, gE    float64
	pK, pE    []float64 // pump rate / Gamma per state at the profile centre

	// Lines by side: kOf[l], eOf[l] give the kept and eliminated state of line l.
	kOf, eOf []int
	// Lines grouped by eliminated state: eLines[eOff[e]:eOff[e+1]], and the
	// pairs of lines sharing e with the storage index of their Schur
	// complement entry: pairs[pOff[e]:pOff[e+1]].
	eOff, eLines []int
	// The kept states of the lines of eliminated state e lie in the
	// contiguous range [k0[e], k0[e]+kw[e]) (states are ordered by M and
	// a line changes M by at most 1): its Schur update is a dense rank-1
	// update of that block, gathered into v.
	k0, kw []int
	v      []float64

	// The kept matrix is stored as the upper triangle, banded (states are
	// ordered by M and lines change M by at most 1, so kept states couple
	// only within a band) or dense when the band is not narrow.
	band bool
	kd   int // super-diagonals when banded
	diag []int
	a    []float64
	x    []float64 // kept populations
	dE   []float64 // eliminated diagonal
	nEv  []float64 // eliminated populations
	sym  blas64.Symmetric
	rhs  blas64.General
}

// solverCost estimates the flops of one class solve keeping the side whose
// state of each line is given by kOf (eliminating eOf).
func solverCost(nK, nE int, kOf, eOf []int) (cost float64, kd int) {
	deg := make([]int, nE)
	lines := make([][]int, nE)
	for l, e := range eOf {
		deg[e]++
		lines[e] = append(lines[e], kOf[l])
	}
	for _, ks := range lines {
		for i := range ks {
			for j := range ks {
				kd = max(kd, abs(ks[i]-ks[j]))
			}
		}
	}
	for _, d := range deg {
		cost += float64(d * (d + 1) / 2)
	}
	if nK > 8 && kd < 32 && 2*kd < nK {
		cost += float64(nK * (kd + 1) * (kd + 1))
	} else {
		cost += float64(nK*nK*nK) / 3
	}
	return cost, kd
}

// newRateSolver prepares the solver for the lines with the given pump
// rates per upper and lower eigenstate (units of Gamma, at the centre of
// the profile) and decay rates in units of Gamma. It keeps the side with
// the cheaper solve.
func newRateSolver(nU, nL int, lines []line, gU, gL float64, pumpU, pumpL []float64) *rateSolver {
	up, lo := make([]int, len(lines)), make([]int, len(lines))
	for l, ln := range lines {
		up[l], lo[l] = ln.up, ln.lo
	}
	costU, _ := solverCost(nU, nL, up, lo)
	costL, _ := solverCost(nL, nU, lo, up)
	return newRateSolverSide(nU, nL, lines, gU, gL, pumpU, pumpL, costU <= costL)
}

// newRateSolverSide is newRateSolver keeping the given side.
func newRateSolverSide(nU, nL int, lines []line, gU, gL float64, pumpU, pumpL []float64, keepUpper bool) *rateSolver {
	up, lo := make([]int, len(lines)), make([]int, len(lines))
	for l, ln := range lines {
		up[l], lo[l] = ln.up, ln.lo
	}
	_, kdU := solverCost(nU, nL, up, lo)
	_, kdL := solverCost(nL, nU, lo, up)
	rs := &rateSolver{keepUpper: keepUpper}
	if rs.keepUpper {
		rs.nK, rs.nE, rs.gK, rs.gE, rs.pK, rs.pE = nU, nL, gU, gL, pumpU, pumpL
		rs.kOf, rs.eOf, rs.kd = up, lo, kdU
	} else {
		rs.nK, rs.nE, rs.gK, rs.gE, rs.pK, rs.pE = nL, nU, gL, gU, pumpL, pumpU
		rs.kOf, rs.eOf, rs.kd = lo, up, kdL
	}
	nK := rs.nK
	rs.band = nK > 8 && rs.kd < 32 && 2*rs.kd < nK
	index := func(i, j int) int {
		if i > j {
			i, j = j, i
		}
		if rs.band {
			return i*(rs.kd+1) + j - i
		}
		return i*nK + j
	}
	count := make([]int, rs.nE)
	for _, e := range rs.eOf {
		count[e]++
	}
	rs.eOff = make([]int, rs.nE+1)
	for e := 0; e < rs.nE; e++ {
		rs.eOff[e+1] = rs.eOff[e] + count[e]
	}
	rs.eLines = make([]int, len(lines))
	fill := make([]int, rs.nE)
	for l, e := range rs.eOf {
		rs.eLines[rs.eOff[e]+fill[e]] = l
		fill[e]++
	}
	rs.k0, rs.kw = make([]int, rs.nE), make([]int, rs.nE)
	wmax := 0
	for e := 0; e < rs.nE; e++ {
		lo, hi := nK, -1
		for _, l := range rs.eLines[rs.eOff[e]:rs.eOff[e+1]] {
			lo, hi = min(lo, rs.kOf[l]), max(hi, rs.kOf[l])
		}
		if hi < lo {
			lo, hi = 0, -1
		}
		rs.k0[e], rs.kw[e] = lo, hi-lo+1
		wmax = max(wmax, rs.kw[e])
	}
	rs.v = make([]float64, wmax)
	rs.diag = make([]int, nK)
	for k := range rs.diag {
		rs.diag[k] = index(k, k)
	}
	if rs.band {
		rs.a = make([]float64, nK*(rs.kd+1))
	} else {
		rs.a = make([]float64, nK*nK)
		rs.sym = blas64.Symmetric{N: nK, Stride: nK, Data: rs.a, Uplo: blas.Upper}
	}
	rs.x = make([]float64, nK)
	rs.dE = make([]float64, rs.nE)
	rs.nEv = make([]float64, rs.nE)
	rs.rhs = blas64.General{Rows: nK, Cols: 1, Stride: 1, Data: rs.x}
	return rs
}

var errNotPositive = errors.New("rate matrix not positive definite")

// solve computes the inversions dn[l] = n_up - n_lo of every line for one
// velocity class with stimulated rates r[l] (units of Gamma) and Doppler
// weight phi (the pump of the class is phi times the central pump).
func (rs *rateSolver) solve(r []float64, phi float64, dn []float64) error {
	if rs.nK == 1 {
		rs.solveOne(r, phi, dn)
		return nil
	}
	a := rs.a
	for i := range a {
		a[i] = 0
	}
	for k, d := range rs.diag {
		a[d] = rs.gK
		rs.x[k] = phi * rs.pK[k]
	}
	for e := range rs.dE {
		rs.dE[e] = rs.gE
	}
	for l, rl := range r {
		a[rs.diag[rs.kOf[l]]] += rl
		rs.dE[rs.eOf[l]] += rl
	}
	// Schur complement of the diagonal eliminated block:
	// A -= R_ke R_k'e / d_e, rhs += R_ke pi_e / d_e.
	for e := 0; e < rs.nE; e++ {
		k0, w := rs.k0[e], rs.kw[e]
		if w <= 0 {
			continue
		}
		v := rs.v[:w]
		for i := range v {
			v[i] = 0
		}
		for _, l := range rs.eLines[rs.eOff[e]:rs.eOff[e+1]] {
			v[rs.kOf[l]-k0] = r[l]
		}
		inv := 1 / rs.dE[e]
		pe := phi * rs.pE[e] * inv
		x := rs.x[k0 : k0+w]
		for i, vi := range v {
			if vi == 0 {
				continue
			}
			x[i] += vi * pe
			// Row k0+i of the upper triangle from the diagonal on is
			// contiguous in both the banded and the dense storage.
			c := vi * inv
			vv := v[i:]
			row := a[rs.diag[k0+i]:]
			row = row[:len(vv)]
			for j, vj := range vv {
				row[j] -= c * vj
			}
		}
	}
	switch {
	case rs.band:
		if !bandCholSolve(rs.a, rs.x, rs.nK, rs.kd) {
			return errNotPositive
		}
	default:
		t, ok := lapack64.Potrf(rs.sym)
		if !ok {
			return errNotPositive
		}
		lapack64.Potrs(t, rs.rhs)
	}
	for e := 0; e < rs.nE; e++ {
		s := phi * rs.pE[e]
		for _, l := range rs.eLines[rs.eOff[e]:rs.eOff[e+1]] {
			s += r[l] * rs.x[rs.kOf[l]]
		}
		rs.nEv[e] = s / rs.dE[e]
	}
	if rs.keepUpper {
		for l := range r {
			dn[l] = rs.x[rs.kOf[l]] - rs.nEv[rs.eOf[l]]
		}
	} else {
		for l := range r {
			dn[l] = rs.nEv[rs.eOf[l]] - rs.x[rs.kOf[l]]
		}
	}
	return nil
}

// solveOne is solve for a single kept state (e.g. J=1-0 keeping the
// lower M = 0): the Schur complement is a scalar, so the class is solved
// in closed form,
//
//	x = (phi p_K + sum_e r_e phi p_e/d_e) / (g_K + sum_e r_e - sum_e r_e^2/d_e),
//
// with r_e the total rate of eliminated state e and d_e = g_E + r_e.
func (rs *rateSolver) solveOne(r []float64, phi float64, dn []float64) {
	re := rs.dE // total rate of each eliminated state
	for e := range re {
		re[e] = 0
	}
	for l, rl := range r {
		re[rs.eOf[l]] += rl
	}
	a, x := rs.gK, phi*rs.pK[0]
	inv := rs.nEv // 1/d_e until the populations replace it
	for e, rv := range re {
		inv[e] = 1 / (rs.gE + rv)
		a += rv * rs.gE * inv[e] // r_e - r_e^2/d_e without cancellation
		x += rv * phi * rs.pE[e] * inv[e]
	}
	x /= a
	rs.x[0] = x
	for e, rv := range re {
		rs.nEv[e] = (phi*rs.pE[e] + rv*x) * inv[e]
		rs.dE[e] = rs.gE + rv
	}
	sign := 1.0 // dn = n_up - n_lo
	if !rs.keepUpper {
		sign = -1
	}
	for l := range r {
		dn[l] = sign * (x - rs.nEv[rs.eOf[l]])
	}
}

// bandCholSolve factors the symmetric positive-definite band matrix whose
// upper triangle a holds row by row (row i from the diagonal on, stride
// kd+1: the layout of LAPACK's upper band storage transposed, as
// blas64.SymmetricBand with Uplo Upper) as U^T U in place and overwrites
// b with the solution of A x = b. It reports false when A is not positive
// definite. This is LAPACK's unblocked dpbtf2/dpbtrs with the BLAS calls
// written out: the class matrices are small (kd of a few to a few tens),
// where the per-column calls of lapack64.Pbtrf cost more than the
// arithmetic (a third of a hyperfine class solve in the profile);
// TestBandCholSolve checks it against lapack64.
func bandCholSolve(a, b []float64, n, kd int) bool {
	ld := kd + 1
	for i := 0; i < n; i++ {
		ri := a[i*ld : i*ld+min(ld, n-i)]
		d := ri[0]
		if !(d > 0) {
			return false
		}
		d = math.Sqrt(d)
		ri[0] = d
		u := ri[1:]
		inv := 1 / d
		for j := range u {
			u[j] *= inv
		}
		// Trailing update A[i+1+p, i+1+q] -= u_p u_q for q >= p.
		for p, up := range u {
			if up == 0 {
				continue
			}
			uu := u[p:]
			row := a[(i+1+p)*ld:]
			row = row[:len(uu)]
			for q, uq := range uu {
				row[q] -= up * uq
			}
		}
	}
	// U^T y = b (forward), then U x = y (backward).
	for i := 0; i < n; i++ {
		ri := a[i*ld : i*ld+min(ld, n-i)]
		y := b[i] / ri[0]
		b[i] = y
		bb := b[i+1:]
		bb = bb[:len(ri)-1]
		for q, u := range ri[1:] {
			bb[q] -= u * y
		}
	}
	for i := n - 1; i >= 0; i-- {
		ri := a[i*ld : i*ld+min(ld, n-i)]
		s := b[i]
		bb := b[i+1:]
		bb = bb[:len(ri)-1]
		for q, u := range ri[1:] {
			s -= u * bb[q]
		}
		b[i] = s / ri[0]
	}
	return true
}
