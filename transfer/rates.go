package transfer

import (
	"cmp"
	"errors"
	"math"
	"slices"

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
// Each class is solved directly, or, where its rates are weak against the
// decay rates and that is cheaper, by an iteration started from zero and
// stopped at a proven error bound at rounding level (solveWeak); either
// way the result does not depend on a starting guess. The populations
// carried over from the previous step (warm start) give the propagation
// matrix at the start of the next step without a new solve.

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
	// update of that block.
	k0, kw []int
	// ordK[i] is the kept state of line eLines[i]; rp holds the rates of
	// one class in that order (gathered once, read contiguously).
	ordK []int
	rp   []float64
	// Kept diagonal (decay plus total rate), and workspaces of solveWeak.
	dK, invK, acc []float64
	weak          bool // the last class was solved by solveWeak (for tests)
	weakMax       float64
	weakSweeps    int
	// Consecutive eliminated states with nearly the same kept range are
	// updated together, up to schurRank at a time, as one rank-m update of
	// their union range: each entry of the kept matrix is loaded and
	// stored once per chunk instead of once per state.
	chunks []schurChunk
	v      [schurRank][]float64 // the rates of a chunk's states on its range
	empty  []int                // eliminated states without lines

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
	costU, kdU := solverCost(nU, nL, up, lo)
	costL, kdL := solverCost(nL, nU, lo, up)
	rs := &rateSolver{keepUpper: keepUpper}
	if rs.keepUpper {
		rs.nK, rs.nE, rs.gK, rs.gE, rs.pK, rs.pE = nU, nL, gU, gL, pumpU, pumpL
		rs.kOf, rs.eOf, rs.kd = up, lo, kdU
		rs.setWeak(costU)
	} else {
		rs.nK, rs.nE, rs.gK, rs.gE, rs.pK, rs.pE = nL, nU, gL, gU, pumpL, pumpU
		rs.kOf, rs.eOf, rs.kd = lo, up, kdL
		rs.setWeak(costL)
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
	_ = wmax
	// Lines of each eliminated state in kept-state order (the scatter of
	// a chunk then walks its range forwards).
	for e := 0; e < rs.nE; e++ {
		ls := rs.eLines[rs.eOff[e]:rs.eOff[e+1]]
		slices.SortFunc(ls, func(a, b int) int { return cmp.Compare(rs.kOf[a], rs.kOf[b]) })
		if len(ls) == 0 {
			rs.empty = append(rs.empty, e)
		}
	}
	rs.ordK = make([]int, len(lines))
	for i, l := range rs.eLines {
		rs.ordK[i] = rs.kOf[l]
	}
	rs.rp = make([]float64, len(lines))
	rs.dK, rs.invK, rs.acc = make([]float64, nK), make([]float64, nK), make([]float64, nK)
	maxW := nK
	if rs.band {
		maxW = rs.kd + 1
	}
	rs.chunks = chunkSchur(rs.k0, rs.kw, maxW)
	cw := 0
	for _, c := range rs.chunks {
		cw = max(cw, c.w)
	}
	for g := range rs.v {
		rs.v[g] = make([]float64, cw)
	}
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

// schurRank is the most eliminated states updated together (see
// rateSolver.chunks): four columns keep the update's operands in
// registers.
const schurRank = 4

// schurChunk is a run of eliminated states e0 .. e0+m-1 whose kept
// ranges lie in [k0, k0+w).
type schurChunk struct{ e0, m, k0, w int }

// chunkSchur groups consecutive eliminated states (in state order, which
// is M order) into chunks of up to schurRank, closing a chunk when the
// union of the kept ranges would exceed the widest range in it by more
// than an eighth (the zero padding costs arithmetic) or maxW, the
// stored width of a row of the kept matrix from its diagonal on (the
// union's row segments must stay within their rows).
func chunkSchur(k0, kw []int, maxW int) []schurChunk {
	var cs []schurChunk
	var cur schurChunk
	widest := 0
	flush := func() {
		if cur.m > 0 {
			cs = append(cs, cur)
		}
		cur, widest = schurChunk{}, 0
	}
	for e := range k0 {
		if kw[e] <= 0 {
			continue
		}
		if cur.m > 0 {
			lo, hi := min(cur.k0, k0[e]), max(cur.k0+cur.w, k0[e]+kw[e])
			if cur.m == schurRank || cur.e0+cur.m != e || 8*(hi-lo) > 9*max(widest, kw[e]) || hi-lo > maxW {
				flush()
			} else {
				cur.m++
				cur.k0, cur.w = lo, hi-lo
				widest = max(widest, kw[e])
				continue
			}
		}
		cur = schurChunk{e0: e, m: 1, k0: k0[e], w: kw[e]}
		widest = kw[e]
	}
	flush()
	return cs
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
	// Rates in eliminated order, the diagonal of each side and the
	// contraction bound of the iteration (see solveWeak).
	rp := rs.rp
	for i, l := range rs.eLines {
		rp[i] = r[l]
	}
	dK := rs.dK
	for k := range dK {
		dK[k] = rs.gK
	}
	// R/(g + R) grows with the total rate R: the bound takes the largest.
	re := 0.0
	for e := 0; e < rs.nE; e++ {
		lo, hi := rs.eOff[e], rs.eOff[e+1]
		ks := rs.ordK[lo:hi]
		d := 0.0
		for i, rl := range rp[lo:hi] {
			dK[ks[i]] += rl
			d += rl
		}
		rs.dE[e] = rs.gE + d
		re = max(re, d)
	}
	rk := 0.0
	for _, d := range dK {
		rk = max(rk, d)
	}
	rk -= rs.gK
	c := rk / (rs.gK + rk) * re / (rs.gE + re)
	if c < rs.weakMax && rs.solveWeak(c, phi, dn) {
		rs.weak = true
		return nil
	}
	rs.weak = false
	a := rs.a
	for i := range a {
		a[i] = 0
	}
	for k, d := range rs.diag {
		a[d] = dK[k]
		rs.x[k] = phi * rs.pK[k]
	}
	// Schur complement of the diagonal eliminated block, chunk by chunk:
	// A -= sum_e R_ke R_k'e / d_e, rhs += sum_e R_ke pi_e / d_e.
	var inv, pe [schurRank]float64
	for _, ch := range rs.chunks {
		k0, w := ch.k0, ch.w
		for g := 0; g < schurRank; g++ {
			v := rs.v[g][:w]
			for i := range v {
				v[i] = 0
			}
			inv[g], pe[g] = 0, 0
			if g >= ch.m {
				continue
			}
			e := ch.e0 + g
			lo, hi := rs.eOff[e], rs.eOff[e+1]
			ks := rs.ordK[lo:hi]
			for i, rl := range rp[lo:hi] {
				v[ks[i]-k0] = rl
			}
			inv[g] = 1 / rs.dE[e]
			pe[g] = phi * rs.pE[e] * inv[g]
		}
		v0, v1, v2, v3 := rs.v[0][:w], rs.v[1][:w], rs.v[2][:w], rs.v[3][:w]
		x := rs.x[k0 : k0+w]
		for i := range x {
			x[i] += v0[i]*pe[0] + v1[i]*pe[1] + v2[i]*pe[2] + v3[i]*pe[3]
		}
		for i := 0; i < w; i++ {
			c0, c1, c2, c3 := v0[i]*inv[0], v1[i]*inv[1], v2[i]*inv[2], v3[i]*inv[3]
			if c0 == 0 && c1 == 0 && c2 == 0 && c3 == 0 {
				continue
			}
			// Row k0+i of the upper triangle from the diagonal on is
			// contiguous in both the banded and the dense storage.
			u0, u1, u2, u3 := v0[i:], v1[i:], v2[i:], v3[i:]
			row := a[rs.diag[k0+i]:]
			row = row[:len(u0)]
			u1, u2, u3 = u1[:len(u0)], u2[:len(u0)], u3[:len(u0)]
			for j := range row {
				row[j] -= c0*u0[j] + c1*u1[j] + c2*u2[j] + c3*u3[j]
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
	rs.eliminated(rs.nEv, rs.x, rp, phi)
	rs.inversions(dn)
	return nil
}

// weakEps bounds the error of solveWeak relative to the largest kept
// population, and weakSweepsMax the sweeps it may take.
const (
	weakEps       = 1e-15
	weakSweepsMax = 12
)

// setWeak sets the iteration's limits from the cost of the elimination:
// a sweep (two passes over the lines) may be repeated while the sweeps
// cost at most half of an elimination (its flop estimate from
// solverCost), and classes are tried whose contraction bound c reaches
// weakEps within that many sweeps (c^sweeps <= weakEps). For
// synthetic-j6-5 that is 9 sweeps below c = 0.02, for h2o-22 3 sweeps
// below c = 1e-5.
func (rs *rateSolver) setWeak(directCost float64) {
	sweep := float64(2*len(rs.kOf) + rs.nK + rs.nE)
	rs.weakSweeps = min(weakSweepsMax, int(directCost/(2*sweep)))
	rs.weakMax = 0
	if rs.weakSweeps > 0 {
		rs.weakMax = math.Pow(weakEps, 1/float64(rs.weakSweeps))
	}
}

// solveWeak solves a weakly saturated class by block Gauss-Seidel on the
// two sides, n_E = D_E^-1 (phi p_E + R^T x), x = D_K^-1 (phi p_K + R n_E),
// with D the diagonals (decay plus total stimulated rate of each state).
// The map x -> x' is affine with a non-negative linear part whose row sums
// are sum_e (r_ke/D_k)(R_e/D_e) <= c = max_k R_k/D_k max_e R_e/D_e, so the
// error after a sweep is at most c/(1-c) times the last change in the
// maximum norm. The sweeps stop when that bound is below weakEps of the
// largest population: the result is the direct solution to rounding,
// independent of any starting guess (the sweeps start from zero). It
// reports false, leaving the class to the elimination, when weakSweeps
// sweeps do not get there. dE and dK hold the diagonals on entry.
func (rs *rateSolver) solveWeak(c, phi float64, dn []float64) bool {
	rp, x, ne := rs.rp, rs.x, rs.nEv
	invK, acc := rs.invK, rs.acc
	for k, d := range rs.dK {
		invK[k] = 1 / d
		acc[k] = phi * rs.pK[k]
	}
	bound := c / (1 - c)
	// Sweep 0 from x = 0: n_E = D_E^-1 phi p_E.
	for e := range ne {
		ne[e] = phi * rs.pE[e] / rs.dE[e]
	}
	ok := false
	for sweep := 0; sweep <= rs.weakSweeps; sweep++ {
		// x' = D_K^-1 (phi p_K + R n_E).
		for e := 0; e < rs.nE; e++ {
			lo, hi := rs.eOff[e], rs.eOff[e+1]
			ks := rs.ordK[lo:hi]
			n := ne[e]
			for i, rl := range rp[lo:hi] {
				acc[ks[i]] += rl * n
			}
		}
		delta, xmax := 0.0, 0.0
		for k, v := range acc {
			v *= invK[k]
			if sweep > 0 {
				if d := math.Abs(v - x[k]); d > delta {
					delta = d
				}
			}
			x[k] = v
			if a := math.Abs(v); a > xmax {
				xmax = a
			}
			acc[k] = phi * rs.pK[k]
		}
		rs.eliminated(ne, x, rp, phi) // consistent with x
		if sweep > 0 && bound*delta <= weakEps*xmax {
			ok = true
			break
		}
	}
	if !ok {
		return false
	}
	rs.inversions(dn)
	return true
}

// populations copies the populations of the last class solved into up
// (upper states) and lo (lower states).
func (rs *rateSolver) populations(up, lo []float64) {
	k, e := up, lo
	if !rs.keepUpper {
		k, e = lo, up
	}
	copy(k, rs.x)
	copy(e, rs.nEv)
}

// inversions sets dn of every line from the kept populations x and the
// eliminated ones nEv.
func (rs *rateSolver) inversions(dn []float64) {
	sign := 1.0 // dn = n_up - n_lo
	if !rs.keepUpper {
		sign = -1
	}
	x := rs.x
	for e := 0; e < rs.nE; e++ {
		lo, hi := rs.eOff[e], rs.eOff[e+1]
		ks, ls := rs.ordK[lo:hi], rs.eLines[lo:hi]
		ne := rs.nEv[e]
		for i, l := range ls {
			dn[l] = sign * (x[ks[i]] - ne)
		}
	}
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
	row := func(i int) []float64 { return a[i*ld : i*ld+min(ld, n-i)] }
	// Four pivot rows per pass: they are factored among themselves, then
	// the trailing rows take one rank-4 update, each entry loaded and
	// stored once for all four.
	i := 0
	for ; i+4 <= n; i += 4 {
		var u [4][]float64 // rows i..i+3 of U beyond the diagonal
		for g := range u {
			r := row(i + g)
			for gp := 0; gp < g; gp++ {
				// A[i+g, i+g+q] -= U[i+gp, i+g] U[i+gp, i+g+q].
				off := g - gp - 1
				if off >= len(u[gp]) || u[gp][off] == 0 {
					continue
				}
				c, w := u[gp][off], u[gp][off:]
				rr := r[:len(w)]
				for q, x := range w {
					rr[q] -= c * x
				}
			}
			var ok bool
			if u[g], ok = cholPivot(r); !ok {
				return false
			}
		}
		// Rows p = i+4+t: A[p, p+q] -= sum_g U[i+g, p] U[i+g, p+q]; the
		// run of pivot g is u[g][3+t-g:], one longer than that of g-1
		// (or equal where the matrix ends).
		u0, u1, u2, u3 := u[0], u[1], u[2], u[3]
		for t := range u3 {
			var c0, c1, c2 float64
			var w0, w1, w2 []float64
			if 3+t < len(u0) {
				c0, w0 = u0[3+t], u0[3+t:]
			}
			if 2+t < len(u1) {
				c1, w1 = u1[2+t], u1[2+t:]
			}
			if 1+t < len(u2) {
				c2, w2 = u2[1+t], u2[1+t:]
			}
			c3, w3 := u3[t], u3[t:]
			if c0 == 0 && c1 == 0 && c2 == 0 && c3 == 0 {
				continue
			}
			r := a[(i+4+t)*ld:]
			r = r[:len(w3)]
			n0 := len(w0)
			x1, x2, x3, r0 := w1[:n0], w2[:n0], w3[:n0], r[:n0]
			for q, x := range w0 {
				r0[q] -= c0*x + c1*x1[q] + c2*x2[q] + c3*x3[q]
			}
			for q := n0; q < len(w1); q++ {
				r[q] -= c1*w1[q] + c2*w2[q] + c3*w3[q]
			}
			for q := max(n0, len(w1)); q < len(w2); q++ {
				r[q] -= c2*w2[q] + c3*w3[q]
			}
			for q := max(n0, len(w1), len(w2)); q < len(w3); q++ {
				r[q] -= c3 * w3[q]
			}
		}
	}
	// The last rows one at a time (rank-1 trailing updates).
	for ; i < n; i++ {
		u, ok := cholPivot(row(i))
		if !ok {
			return false
		}
		for p, up := range u {
			if up == 0 {
				continue
			}
			uu := u[p:]
			r := a[(i+1+p)*ld:]
			r = r[:len(uu)]
			for q, x := range uu {
				r[q] -= up * x
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

// cholPivot takes the square root of the pivot ri[0] and scales the rest
// of the row by it, returning the scaled row (the pivot's row of U beyond
// the diagonal); false when the pivot is not positive.
func cholPivot(ri []float64) ([]float64, bool) {
	d := ri[0]
	if !(d > 0) {
		return nil, false
	}
	d = math.Sqrt(d)
	ri[0] = d
	u := ri[1:]
	inv := 1 / d
	for j := range u {
		u[j] *= inv
	}
	return u, true
}

// rateTap is the rate interpolation of one line packed for allRates:
// R_l(class j) = sum_t w[t] yAll[j+off+t], with the line strength folded
// into the B-spline weights and off locating the line's y_q and kernel
// position in Model.yAll.
type rateTap struct {
	w   [4]float64
	s   float64
	off int
}

// rateTaps packs the rate interpolation of the lines for padded y rows
// of the given stride.
func rateTaps(lines []line, stride, pad int) []rateTap {
	taps := make([]rateTap, len(lines))
	for i, l := range lines {
		t := &taps[i]
		for k := range t.w {
			t.w[k] = l.s * l.w[k]
		}
		t.s = l.s
		t.off = (l.q+1)*stride + l.i0 + pad - 1
	}
	return taps
}

// allRates sets m.rcls to the stimulated rate of every line in every
// active class (units of Gamma) from the weighted Stokes m.y, line by
// line: the four taps of a line stay in registers and y is read
// contiguously across the classes (class by class, loading the line data
// cost more than the arithmetic). A rate below zero (rounding of a fully
// polarized beam, or overshoot of the interpolation in a steep wing) is
// set to zero and counted in m.clamped when it is more than rounding.
func (m *Model) allRates() {
	nl, nc := len(m.taps), m.jhi-m.jlo
	rc := m.rcls[:nc*nl]
	for l := range m.taps {
		t := &m.taps[l]
		w0, w1, w2, w3 := t.w[0], t.w[1], t.w[2], t.w[3]
		y := m.yAll[m.jlo+t.off : m.jlo+t.off+nc+3]
		at := l
		for c := 0; c < nc; c++ {
			yk := y[c : c+4]
			rl := w0*yk[0] + w1*yk[1] + w2*yk[2] + w3*yk[3]
			if rl < 0 {
				if rl < -1e-12*t.s*yk[1] {
					m.clamped++
				}
				rl = 0
			}
			rc[at] = rl
			at += nl
		}
	}
}

// classRates copies the rates of class j from m.rcls (set by allRates)
// into r and returns the largest.
func (m *Model) classRates(j int, r []float64) float64 {
	nl := len(m.taps)
	src := m.rcls[(j-m.jlo)*nl : (j-m.jlo+1)*nl]
	r = r[:len(src)]
	rmax := 0.0
	for i, v := range src {
		r[i] = v
		if v > rmax { // a plain compare: the builtin max handles NaN and -0 at a cost
			rmax = v
		}
	}
	return rmax
}

// classInversions tracks the classes of a populate solved by the rate
// equations, whose inversions go class by class (contiguous per class)
// into a state's cls and from there into its slots (contiguous per line)
// once all classes are done, in blocks of lines: written one class at a
// time, every line of every class lands in its own page of the slot
// array (6 MB for synthetic-j6-5), and the TLB misses cost more than the
// class solve's back substitution.
type classInversions struct {
	nl, jlo int
	done    []bool // class solved since the last store
}

// class returns class j's part of cls and marks the class solved.
func (ci *classInversions) class(cls []float64, j int) []float64 {
	i := j - ci.jlo
	ci.done[i] = true
	return cls[i*ci.nl : (i+1)*ci.nl]
}

// classStoreBlock is the number of lines stored together (their slot
// rows and the class rows stay within the TLB).
const classStoreBlock = 32

// store writes the inversions of the solved classes from cls into src
// (line l, class j at l*stride + pad + j) and clears the marks.
func (ci *classInversions) store(cls, src []float64, stride, pad int) {
	for l0 := 0; l0 < ci.nl; l0 += classStoreBlock {
		l1 := min(l0+classStoreBlock, ci.nl)
		for i, ok := range ci.done {
			if !ok {
				continue
			}
			row := cls[i*ci.nl+l0 : i*ci.nl+l1]
			at := l0*stride + pad + ci.jlo + i
			for _, d := range row {
				src[at] = d
				at += stride
			}
		}
	}
	ci.clear()
}

// clear drops the solved marks.
func (ci *classInversions) clear() {
	for i := range ci.done {
		ci.done[i] = false
	}
}

// eliminated sets the eliminated populations from the kept ones x:
// n_E = D_E^-1 (phi p_E + R^T x), with rp the class's rates in the order
// of ordK.
func (rs *rateSolver) eliminated(ne, x, rp []float64, phi float64) {
	for e := 0; e < rs.nE; e++ {
		lo, hi := rs.eOff[e], rs.eOff[e+1]
		ks := rs.ordK[lo:hi]
		s := phi * rs.pE[e]
		for i, rl := range rp[lo:hi] {
			s += rl * x[ks[i]]
		}
		ne[e] = s / rs.dE[e]
	}
}
