package transfer

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/gonum"
	"gonum.org/v1/gonum/lapack/lapack64"
)

// This file solves the large class systems of the density matrix
// (coherence.go) whose coherences are mostly weakly coupled: a
// hyperfine-rich species keeps many pairs split by several times the
// stimulated rate R, whose coherences are ~ R/|omega| and respond to the
// populations almost at once, and a few near-degenerate pairs that are
// strongly coupled to the populations. With the unknowns ordered by
// |omega| (coherence.go), the class matrix is
//
//	A = [A_SS  A_SW]     S: the populations and the pairs with |omega| < c R
//	    [A_WS  A_WW]     W: the pairs with c R <= |omega| < c_a R
//
// and the block Gauss-Seidel matrix P = [A_SS 0; A_WS L_WW] (L_WW the
// block lower triangle of A_WW in 2x2 pair blocks) is an approximate
// inverse whose error, A_WW's off-diagonal coupling against its Bohr
// frequencies, is of order R/|omega| <= 1/c on W. GMRES (Saad & Schultz
// 1986, SIAM J. Sci. Stat. Comput. 7, 856; the restarted form with
// Givens rotations, Saad 2003, Iterative Methods for Sparse Linear
// Systems, sect. 6.5) with P as right preconditioner converges in a few
// tens of iterations from the class's previous solution, so a class costs
// one dense LU of the strong block (|S|^3/3 instead of dim^3/3) plus
// sparse products. gonum has no iterative linear solver in its released
// modules, so GMRES is written here.
//
// The pairs split by more than c_a = adiabaticFactor times the class's
// rate (up to kappa R, the coherence set) do not enter the system at all:
// after GMRES has solved the rest, one block Gauss-Seidel sweep gives each
// its first-order value (sweep), at the cost of one pass over the stencil
// entries of its row. A class whose pairs are all that weak needs no LU:
// its populations are the rate equations' (coherent.solve).
//
// The tolerance is set by the inversion: in saturation the upper and
// lower populations agree to ~ Gamma/R, so a residual of classTol of the
// right-hand side leaves an error in the inversion of at most ~ classTol
// (R/Gamma)^2, 1e-5 relative at R/Gamma = 1e3, below the step control's
// tolerance; a whole run with every pair in the system agrees with dense
// LU to 1e-7 in q_b, u_b and P_V (TestIterativeRunMatchesDense; it still
// does at classTol = 1e-7 and fails at 1e-5, so the margin is two
// decades). 1e-13 costs a third more iterations for no change in the
// reported digits (measured, water at R/Gamma = 1e3).

// iterativeFrom is the class-system size above which the iterative path is
// built. Below it the populations are most of the system, so the strong
// block is nearly all of it and a dense LU does the same work with less
// bookkeeping; at 142 unknowns (water at 0.3 G, R/Gamma = 30) the
// iterative path is already 3-4x faster from a cold start
// (BenchmarkClassSolve).
const iterativeFrom = 64

// strongFactor is c of the strong block: pairs with |omega| < c R join the
// populations in the dense LU.
const strongFactor = 1.0

// adiabaticFactor is the splitting, in units of the class's largest rate,
// from which a kept pair takes its first-order (adiabatic) value instead
// of entering the linear system (sweep). What that leaves out is second
// order in R/|omega| <= 1/adiabaticFactor: water at 0.3 G to R/Gamma =
// 1e3 moves by 8e-6 in q_b and m_l, 2e-6 in u_b and 0.01-0.02 % in P_V
// against every pair exact, ten times that at a factor of 10 (measured;
// TestAdiabaticPairs), while dropping those pairs instead moves u_b by
// 2e-3. With the rate-equation populations of all-swept classes it took
// water's density-matrix run from 12.4 to 8.3 s at R/Gamma = 1e3 (13.3 to
// 2.5 s for the demo's model at 30) and the synthetic J=6-5 line's from
// 105 to 41 s (BenchmarkH2O22Auto, BenchmarkH2ODemo,
// BenchmarkSyntheticJ65Density; project choice).
const adiabaticFactor = 30.0

// classTol is GMRES's relative residual target at the default step
// tolerance (it scales with Params.Tolerance, between classTolMin and
// classTol: tighter runs such as zeeman-factor's at 1e-7 get 1e-13);
// gmresRestart is the Krylov dimension and gmresMaxIter the iterations
// after which the class falls back to a dense LU.
const (
	classTol     = 1e-11
	classTolMin  = 1e-13
	gmresRestart = 40
	gmresMaxIter = 400
)

// residualTarget returns GMRES's relative residual target for a run of
// step tolerance tol.
func residualTarget(tol float64) float64 {
	return math.Max(classTolMin, math.Min(classTol, classTol*tol/DefaultTolerance))
}

// iterative holds the sparse class matrix and the GMRES workspaces.
type iterative struct {
	dim    int
	rowPtr []int32
	col    []int32
	val    []float64
	base   []float64 // decay and Bohr frequencies on the pattern
	// The stimulated part of each value, sum_t coef_t g[idx_t] over the
	// terms tPtr[k]..tPtr[k+1] of value k, with g = (Re G_0, Im G_0,
	// Re G_1, ...): the stencil entries in real form, merged and ordered by
	// the value they feed, so assembly writes each value once.
	tPtr  []int32
	tIdx  []int32
	tCoef []float64
	gf    []float64

	strong float64 // c of the strong block (strongFactor; tests vary it)
	// adiabatic is the factor of adiabaticFactor (0: every pair exact;
	// tests vary it).
	adiabatic float64
	tol       float64 // relative residual target (residualTarget)
	nS        int     // size of the factored strong block
	diag      []int32 // value positions of each weak pair's 2x2 diagonal block
	lu        []float64
	ipiv      []int
	dinv      [][4]float64 // inverse 2x2 diagonal block per W pair (by pair index)

	v      []float64 // Krylov basis, (gmresRestart+1) x dim
	h      []float64 // Hessenberg matrix, (gmresRestart+1) x gmresRestart
	cs, sn []float64 // Givens rotations
	gv     []float64 // rotated residual
	y, z   []float64
	r      []float64

	prev  []float64 // previous solution per class (warm start), classes x dim
	prevN []int

	// The sweep's rows in complex form: for the pair whose real unknown
	// is k, the entries swPtr[(k-np)/2] .. swPtr[(k-np)/2+1] of the
	// columns before it, each adding coef G (conj G if swConj) times the
	// column's value z = x[col] + i s x[col+1] (x[col] for a population,
	// swS = 0).
	swPtr  []int32
	swCol  []int32
	swPair []int32
	swCoef []float64
	swS    []float64
	swConj []bool

	// pairState holds the two states of each pair (population unknowns);
	// rt is the total stimulated rate out of each state in the class
	// (sum of its lines' rates), which with the decay and the Bohr
	// frequency is all of a pair's 2x2 diagonal block.
	pairState [][2]int32
	rt        []float64

	// Counters for benchmarks and tests.
	solves, iters, fallbacks int
	swept                    int // pairs set by the sweep
}

// newIterative builds the sparse pattern of cs's class matrix and the
// workspaces for nc velocity classes.
func newIterative(cs *coherent, nc int, tol float64) *iterative {
	dim := cs.dim
	it := &iterative{dim: dim, strong: strongFactor, adiabatic: adiabaticFactor, tol: residualTarget(tol)}
	// Pattern: the diagonal (2x2 blocks for the pairs), then every entry.
	rows := make([][]int32, dim)
	for i := 0; i < dim; i++ {
		rows[i] = append(rows[i], int32(i))
	}
	np := cs.nU + cs.nL
	for k := np; k < dim; k += 2 {
		rows[k] = append(rows[k], int32(k+1))
		rows[k+1] = append(rows[k+1], int32(k))
	}
	for i := range cs.entries {
		e := &cs.entries[i]
		rr, ri, cr, ci := e.rowRe, e.rowIm, e.colRe, e.colIm
		rows[rr] = append(rows[rr], cr)
		if ci >= 0 {
			rows[rr] = append(rows[rr], ci)
		}
		if ri >= 0 {
			rows[ri] = append(rows[ri], cr)
			if ci >= 0 {
				rows[ri] = append(rows[ri], ci)
			}
		}
	}
	it.rowPtr = make([]int32, dim+1)
	for i, r := range rows {
		sortInt32(r)
		u := r[:0]
		for k, c := range r {
			if k == 0 || c != r[k-1] {
				u = append(u, c)
			}
		}
		rows[i] = u
		it.rowPtr[i+1] = it.rowPtr[i] + int32(len(u))
	}
	it.col = make([]int32, it.rowPtr[dim])
	for i, r := range rows {
		copy(it.col[it.rowPtr[i]:], r)
	}
	pos := func(r, c int32) int32 {
		lo, hi := it.rowPtr[r], it.rowPtr[r+1]
		for lo < hi {
			mid := (lo + hi) / 2
			if it.col[mid] < c {
				lo = mid + 1
			} else {
				hi = mid
			}
		}
		return lo
	}
	it.val = make([]float64, len(it.col))
	it.base = make([]float64, len(it.col))
	for i := 0; i < dim; i++ {
		it.base[pos(int32(i), int32(i))] = cs.selfG[i]
		if w := cs.selfW[i]; w != 0 {
			it.base[pos(int32(i), int32(i+1))] -= w
			it.base[pos(int32(i+1), int32(i))] += w
		}
	}
	type term struct {
		pos, idx int32
		coef     float64
	}
	terms := make([]term, 0, 4*len(cs.entries))
	for i := range cs.entries {
		e := &cs.entries[i]
		re, im := 2*e.pair, 2*e.pair+1
		sc := 1.0 // conj(G) flips the imaginary part
		if e.conj {
			sc = -1
		}
		terms = append(terms, term{pos(e.rowRe, e.colRe), re, e.coef})
		if e.colIm >= 0 {
			terms = append(terms, term{pos(e.rowRe, e.colIm), im, -e.s * sc * e.coef})
		}
		if e.rowIm >= 0 {
			terms = append(terms, term{pos(e.rowIm, e.colRe), im, sc * e.coef})
			if e.colIm >= 0 {
				terms = append(terms, term{pos(e.rowIm, e.colIm), re, e.s * e.coef})
			}
		}
	}
	sort.Slice(terms, func(i, j int) bool {
		if terms[i].pos != terms[j].pos {
			return terms[i].pos < terms[j].pos
		}
		return terms[i].idx < terms[j].idx
	})
	merged := terms[:0]
	for _, t := range terms {
		if k := len(merged) - 1; k >= 0 && merged[k].pos == t.pos && merged[k].idx == t.idx {
			merged[k].coef += t.coef
			continue
		}
		merged = append(merged, t)
	}
	it.tPtr = make([]int32, len(it.col)+1)
	for _, t := range merged {
		if t.coef != 0 {
			it.tIdx = append(it.tIdx, t.idx)
			it.tCoef = append(it.tCoef, t.coef)
			it.tPtr[t.pos+1]++
		}
	}
	for k := range it.col {
		it.tPtr[k+1] += it.tPtr[k]
	}
	it.gf = make([]float64, 2*len(cs.pairs))
	it.rt = make([]float64, np)
	it.pairState = make([][2]int32, (dim-np)/2)
	for _, pair := range []struct {
		idx []int
		n   int
		off int32
	}{{cs.pairU, cs.nU, 0}, {cs.pairL, cs.nL, int32(cs.nU)}} {
		for a := 0; a < pair.n; a++ {
			for b := a + 1; b < pair.n; b++ {
				if k := pair.idx[a*pair.n+b]; k >= 0 {
					it.pairState[(k-np)/2] = [2]int32{pair.off + int32(a), pair.off + int32(b)}
				}
			}
		}
	}
	// The sweep's entries: pair rows, columns before the row's pair.
	var sw []int
	for i := range cs.entries {
		if e := &cs.entries[i]; int(e.rowRe) >= np && e.colRe < e.rowRe {
			sw = append(sw, i)
		}
	}
	sort.SliceStable(sw, func(a, b int) bool { return cs.entries[sw[a]].rowRe < cs.entries[sw[b]].rowRe })
	it.swPtr = make([]int32, (dim-np)/2+1)
	for _, i := range sw {
		e := &cs.entries[i]
		it.swPtr[(int(e.rowRe)-np)/2+1]++
		it.swCol = append(it.swCol, e.colRe)
		it.swPair = append(it.swPair, e.pair)
		it.swCoef = append(it.swCoef, e.coef)
		s := e.s
		if e.colIm < 0 {
			s = 0
		}
		it.swS = append(it.swS, s)
		it.swConj = append(it.swConj, e.conj)
	}
	for q := 1; q < len(it.swPtr); q++ {
		it.swPtr[q] += it.swPtr[q-1]
	}
	it.ipiv = make([]int, dim)
	it.dinv = make([][4]float64, (dim-np)/2)
	it.diag = make([]int32, 0, 2*(dim-np))
	for k := np; k < dim; k += 2 {
		r, c := int32(k), int32(k+1)
		it.diag = append(it.diag, pos(r, r), pos(r, c), pos(c, r), pos(c, c))
	}
	m := gmresRestart
	it.v = make([]float64, (m+1)*dim)
	it.h = make([]float64, (m+1)*m)
	it.cs = make([]float64, m)
	it.sn = make([]float64, m)
	it.gv = make([]float64, m+1)
	it.y = make([]float64, m)
	it.z = make([]float64, dim)
	it.r = make([]float64, dim)
	it.prev = make([]float64, nc*dim)
	it.prevN = make([]int, nc)
	return it
}

// sortInt32 sorts a short slice in place (insertion sort: rows hold tens
// of entries).
func sortInt32(a []int32) {
	for i := 1; i < len(a); i++ {
		v := a[i]
		k := i - 1
		for k >= 0 && a[k] > v {
			a[k+1] = a[k]
			k--
		}
		a[k+1] = v
	}
}

// assemble writes the matrix values for cs's current G that the solve of
// the leading n unknowns reads: in the rows below n the columns below n
// (the sweep reads the entries, invertPairs the rates).
func (it *iterative) assemble(cs *coherent, n int) {
	gf := it.gf
	for p, g := range cs.g {
		gf[2*p], gf[2*p+1] = real(g), imag(g)
	}
	idx, coef := it.tIdx, it.tCoef[:len(it.tIdx)]
	value := func(k int32) {
		v := it.base[k]
		for t := it.tPtr[k]; t < it.tPtr[k+1]; t++ {
			v += coef[t] * gf[idx[t]]
		}
		it.val[k] = v
	}
	for i := 0; i < n; i++ {
		for k := it.rowPtr[i]; k < it.rowPtr[i+1] && int(it.col[k]) < n; k++ {
			value(k)
		}
	}
}

// mul sets dst = A x on the leading n unknowns.
func (it *iterative) mul(dst, x []float64, n int) {
	rowPtr, col, val := it.rowPtr[:n+1], it.col, it.val
	for i := 0; i < n; i++ {
		lo, hi := rowPtr[i], rowPtr[i+1]
		cs, vs := col[lo:hi], val[lo:hi]
		vs = vs[:len(cs)]
		s := 0.0
		for p, c := range cs {
			if int(c) >= n {
				break // a pair solved by the sweep: not in this system
			}
			s += vs[p] * x[c]
		}
		dst[i] = s
	}
}

// factor computes the dense LU of the strong block A_SS of nS unknowns.
func (it *iterative) factor(nS int) bool {
	if need := nS * nS; len(it.lu) < need {
		it.lu = make([]float64, need, need+need/2) // grows a few times per model
	}
	it.nS = nS
	lu := it.lu[:nS*nS]
	for i := range lu {
		lu[i] = 0
	}
	for i := 0; i < nS; i++ {
		for p := it.rowPtr[i]; p < it.rowPtr[i+1]; p++ {
			c := int(it.col[p])
			if c >= nS {
				break
			}
			lu[i*nS+c] = it.val[p]
		}
	}
	// The unblocked LU: the blocked one (lapack64.Getrf) hands its updates
	// to a Dgemm that allocates per call, and at the one or two hundred
	// unknowns of a strong block it is no faster within the noise of
	// BenchmarkClassSolve (3.9-7.1 ms against 4.5-7.4 ms per water class
	// at R/Gamma = 1e3, alternating runs).
	return gonum.Implementation{}.Dgetf2(nS, nS, lu, nS, it.ipiv[:nS])
}

// invertPairs computes the inverse 2x2 diagonal blocks of the weak pairs
// from nS to dim: assembled below n, from the rates above.
func (it *iterative) invertPairs(cs *coherent, nS, n, dim, np int) bool {
	// Swept pairs: the block is [[gamma, -w], [w, gamma]], gamma the decay
	// plus half the stimulated rates out of both states (the
	// anticommutator's diagonal; the lines' G are real), so it is not
	// assembled.
	rt := it.rt
	for i := range rt {
		rt[i] = 0
	}
	for l, st := range cs.lineState {
		r := real(cs.g[l]) // pair l is line l's own rate
		rt[st[0]] += r
		rt[st[1]] += r
	}
	for k := n; k < dim; k += 2 {
		q := (k - np) / 2
		st := it.pairState[q]
		gm, w := cs.selfG[k]+0.5*(rt[st[0]]+rt[st[1]]), cs.selfW[k]
		det := gm*gm + w*w
		if det == 0 || math.IsNaN(det) {
			return false
		}
		it.dinv[q] = [4]float64{gm / det, w / det, -w / det, gm / det}
	}
	for k := nS; k < n; k += 2 {
		q := (k - np) / 2
		d := it.diag[4*q : 4*q+4]
		a, b, c, e := it.val[d[0]], it.val[d[1]], it.val[d[2]], it.val[d[3]] // [[a, b], [c, e]]
		det := a*e - b*c
		if det == 0 || math.IsNaN(det) {
			return false
		}
		it.dinv[q] = [4]float64{e / det, -b / det, -c / det, a / det}
	}
	return true
}

// precond sets dst = P^-1 src on the leading n unknowns (see the file
// comment): the strong block by its LU, then the W pairs in order by
// block forward substitution.
func (it *iterative) precond(dst, src []float64, n, np int) {
	nS := it.nS
	copy(dst[:nS], src[:nS])
	lapack64.Getrs(blas.NoTrans, blas64.General{Rows: nS, Cols: nS, Stride: nS, Data: it.lu[:nS*nS]},
		blas64.General{Rows: nS, Cols: 1, Stride: 1, Data: dst[:nS]}, it.ipiv[:nS])
	for k := nS; k < n; k += 2 {
		t0, t1 := src[k], src[k+1]
		for p := it.rowPtr[k]; p < it.rowPtr[k+1]; p++ {
			c := int(it.col[p])
			if c >= k {
				break
			}
			t0 -= it.val[p] * dst[c]
		}
		for p := it.rowPtr[k+1]; p < it.rowPtr[k+2]; p++ {
			c := int(it.col[p])
			if c >= k {
				break
			}
			t1 -= it.val[p] * dst[c]
		}
		d := &it.dinv[(k-np)/2]
		dst[k] = d[0]*t0 + d[1]*t1
		dst[k+1] = d[2]*t0 + d[3]*t1
	}
}

// solve solves class j (right-hand side in cs.x, solution written there)
// for the class's largest rate rc: the populations and the pairs with
// |omega| < adiabatic x rc exactly (the strong block by LU, the rest of
// them by GMRES), then the remaining pairs by their first-order value
// (sweep).
func (it *iterative) solve(cs *coherent, j int, rc float64) error {
	dim := cs.dim
	np := cs.nU + cs.nL
	nS := np + 2*searchBelow(cs.keptW, it.strong*rc)
	n := dim // the unknowns solved exactly
	if it.adiabatic > 0 {
		n = max(nS, np+2*searchBelow(cs.keptW, it.adiabatic*rc))
	}
	it.assemble(cs, n)
	it.solves++
	if nS == dim {
		return it.dense(cs, dim)
	}
	if !it.factor(nS) || !it.invertPairs(cs, nS, n, dim, np) {
		return it.dense(cs, dim)
	}
	b := cs.x[:dim]
	x := it.z[:dim] // the iterate; b stays in cs.x until the end
	prev := it.prev[j*it.dim : j*it.dim+it.dim]
	k := min(it.prevN[j], n)
	copy(x[:k], prev[:k])
	for i := k; i < n; i++ {
		x[i] = 0
	}
	if nS == n {
		// The exact part is the strong block: its LU solves it.
		copy(x[:n], b[:n])
		lapack64.Getrs(blas.NoTrans, blas64.General{Rows: nS, Cols: nS, Stride: nS, Data: it.lu[:nS*nS]},
			blas64.General{Rows: nS, Cols: 1, Stride: 1, Data: x[:nS]}, it.ipiv[:nS])
	} else if !it.gmres(b, x[:n], n, np) {
		it.fallbacks++
		return it.dense(cs, dim)
	}
	if n < dim {
		it.sweep(cs, b, x, n, dim, np)
	}
	copy(b, x)
	copy(prev, x)
	it.prevN[j] = dim
	return nil
}

// allSwept reports whether at the class rate rc every pair is swept.
func (it *iterative) allSwept(cs *coherent, rc float64) bool {
	return it.adiabatic > 0 && (len(cs.keptW) == 0 || cs.keptW[0] >= it.adiabatic*rc)
}

// sweepAll sweeps every pair of class j whose populations are in cs.x
// (the rest of cs.x holding the right-hand side, zero for pairs).
func (it *iterative) sweepAll(cs *coherent, j int) error {
	dim, np := cs.dim, cs.nU+cs.nL
	it.solves++
	if !it.invertPairs(cs, np, np, dim, np) {
		return errSingular
	}
	x := cs.x[:dim]
	it.sweep(cs, x, x, np, dim, np) // reads b[k] before writing x[k]
	copy(it.prev[j*it.dim:j*it.dim+it.dim], x)
	it.prevN[j] = dim
	return nil
}

// sweep sets the pairs n..dim of x to their first-order value,
// rho = D^-1 (b - sum_c A_kc x_c) over the columns before them (block
// Gauss-Seidel, as in precond): a pair split by |omega| >= adiabatic x R
// follows the populations and the strong coherences adiabatically with a
// coherence ~ R/|omega|, and what the sweep leaves out, its coupling to
// the pairs after it and its feedback on the exact part, is second order
// in R/|omega|. Its own first-order value must stay, though: u_b is first
// order in it (see adiabaticFactor).
func (it *iterative) sweep(cs *coherent, b, x []float64, n, dim, np int) {
	g := cs.g
	for k := n; k < dim; k += 2 {
		q := (k - np) / 2
		t := complex(b[k], b[k+1])
		for e := it.swPtr[q]; e < it.swPtr[q+1]; e++ {
			c := it.swCol[e]
			z := complex(x[c], it.swS[e]*x[c+1]) // x[c+1] is any finite value for a population
			ge := g[it.swPair[e]]
			if it.swConj[e] {
				ge = complex(real(ge), -imag(ge))
			}
			t -= complex(it.swCoef[e], 0) * ge * z
		}
		t0, t1 := real(t), imag(t)
		d := &it.dinv[q]
		x[k] = d[0]*t0 + d[1]*t1
		x[k+1] = d[2]*t0 + d[3]*t1
	}
	it.swept += (dim - n) / 2
}

// dense solves the class by a dense LU (the whole system is strongly
// coupled, or GMRES failed).
func (it *iterative) dense(cs *coherent, n int) error {
	if need := n * n; len(it.lu) < need {
		it.lu = make([]float64, need)
	}
	a := it.lu[:n*n]
	cs.assemble(a, true)
	ag := blas64.General{Rows: n, Cols: n, Stride: n, Data: a}
	if !lapack64.Getrf(ag, it.ipiv[:n]) {
		return errSingular
	}
	lapack64.Getrs(blas.NoTrans, ag, blas64.General{Rows: n, Cols: 1, Stride: 1, Data: cs.x[:n]}, it.ipiv[:n])
	return nil
}

// gmres solves A x = b on the leading n unknowns by restarted GMRES with
// right preconditioning, from the starting x; it reports convergence.
func (it *iterative) gmres(b, x []float64, n, np int) bool {
	m := gmresRestart
	bn := norm(b[:n])
	if bn == 0 {
		for i := range x[:n] {
			x[i] = 0
		}
		return true
	}
	tol := it.tol * bn
	r := it.r[:n]
	total := 0
	for total < gmresMaxIter {
		it.mul(r, x, n)
		for i := range r {
			r[i] = b[i] - r[i]
		}
		beta := norm(r)
		if beta <= tol {
			return true
		}
		v0 := it.v[:n]
		for i := range r {
			v0[i] = r[i] / beta
		}
		for i := range it.gv {
			it.gv[i] = 0
		}
		it.gv[0] = beta
		k := 0
		for ; k < m; k++ {
			total++
			vk := it.v[k*n : (k+1)*n]
			w := it.v[(k+1)*n : (k+2)*n]
			it.precond(r, vk, n, np) // r as scratch: P^-1 v_k
			it.mul(w, r, n)
			// Modified Gram-Schmidt.
			for i := 0; i <= k; i++ {
				vi := it.v[i*n : (i+1)*n]
				hik := dot(w, vi)
				it.h[i*m+k] = hik
				axpy(-hik, vi, w)
			}
			hk1 := norm(w)
			it.h[(k+1)*m+k] = hk1
			if hk1 > 0 {
				inv := 1 / hk1
				for i := range w {
					w[i] *= inv
				}
			}
			// Apply the previous rotations, then a new one for row k+1.
			for i := 0; i < k; i++ {
				a, c := it.h[i*m+k], it.h[(i+1)*m+k]
				it.h[i*m+k] = it.cs[i]*a + it.sn[i]*c
				it.h[(i+1)*m+k] = -it.sn[i]*a + it.cs[i]*c
			}
			a, c := it.h[k*m+k], it.h[(k+1)*m+k]
			d := math.Hypot(a, c)
			if d == 0 {
				return false
			}
			it.cs[k], it.sn[k] = a/d, c/d
			it.h[k*m+k] = d
			it.h[(k+1)*m+k] = 0
			it.gv[k+1] = -it.sn[k] * it.gv[k]
			it.gv[k] = it.cs[k] * it.gv[k]
			if math.Abs(it.gv[k+1]) <= tol || hk1 == 0 || total >= gmresMaxIter {
				k++
				break
			}
		}
		it.iters += k
		// y = H^-1 g (upper triangular k x k), x += P^-1 (V y).
		y := it.y[:k]
		for i := k - 1; i >= 0; i-- {
			s := it.gv[i]
			for l := i + 1; l < k; l++ {
				s -= it.h[i*m+l] * y[l]
			}
			y[i] = s / it.h[i*m+i]
		}
		u := it.r[:n]
		for i := range u {
			u[i] = 0
		}
		for i := 0; i < k; i++ {
			axpy(y[i], it.v[i*n:(i+1)*n], u)
		}
		w := it.v[k*n : (k+1)*n] // not in the sum: free
		it.precond(w, u[:n], n, np)
		axpy(1, w, x[:n])
		if math.Abs(it.gv[k]) <= tol {
			return true // GMRES's residual estimate (exact in exact arithmetic)
		}
	}
	// Final check of the true residual.
	it.mul(r, x, n)
	for i := range r {
		r[i] = b[i] - r[i]
	}
	return norm(r) <= tol
}

// searchBelow returns the number of leading ascending values below x.
func searchBelow(a []float64, x float64) int {
	lo, hi := 0, len(a)
	for lo < hi {
		mid := (lo + hi) / 2
		if a[mid] < x {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	return lo
}

func norm(a []float64) float64 { return blas64.Nrm2(blas64.Vector{N: len(a), Inc: 1, Data: a}) }

func dot(a, b []float64) float64 {
	return blas64.Dot(blas64.Vector{N: len(a), Inc: 1, Data: a}, blas64.Vector{N: len(b), Inc: 1, Data: b})
}

func axpy(alpha float64, x, y []float64) {
	blas64.Axpy(alpha, blas64.Vector{N: len(x), Inc: 1, Data: x}, blas64.Vector{N: len(y), Inc: 1, Data: y})
}
