package transfer

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"
	"sort"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/unit/constant"
)

// This file holds the density-matrix population model of physics.md
// section 8: the steady state of one velocity class with the Zeeman
// coherences between eigenstates of one level kept,
//
//	0 = Lambda_u - g_u rho_u - i [omega_u, rho_u] - (1/2) {R^E, rho_u} + T^A(rho_l)
//	0 = Lambda_l - g_l rho_l - i [omega_l, rho_l] - (1/2) {R^A, rho_l} + T^S(rho_u)
//
// in units of the reference Gamma (omega the eigen-energies as angular
// frequencies / Gamma, g the decay rates / Gamma). Every stimulated term
// is built from one tensor over pairs of lines l1 = (a, b), l2 = (a', b'),
//
//	G_{ab,a'b'} = 3 sum_ij c_ab,i J_ij conj(c_a'b',j),
//
// where c_ab = A_ab u_q is the dipole of the line projected on the
// transverse basis (e_1 the sky projection of B, e_2 = k x e_1):
// u_0 = (sin theta, 0), u_+1 = (cos theta, -i)/sqrt 2,
// u_-1 = (-cos theta, -i)/sqrt 2 (the spherical unit vectors e_q^* on
// e_1, e_2), A_ab the signed dipole amplitude (levels.Line.Amplitude), and
// J = (1/2) [[I + Q_f, U_f - i V], [U_f + i V, I - Q_f]] the coherency
// matrix of the beam in saturation units. Second-order perturbation theory
// in the broadband (rate) limit gives
//
//	R^E_aa' = sum_b G_{ab,a'b}            T^A(rho_l)_aa' = sum_bb' G_{ab,a'b'} rho_l(b,b')
//	R^A_bb' = sum_a G_{ab',ab}            T^S(rho_u)_bb' = sum_aa' G_{a'b',ab} rho_u(a,a')
//
// and G_{ll} = R_l, the rate of section 4 with its weights (so for
// diagonal rho the equations are the rate equations of rates.go exactly),
// and Tr R^E rho_u = Tr T^S(rho_u), Tr R^A rho_l = Tr T^A(rho_l): the
// stimulated terms move population between the levels and never create it
// (both held by tests).
//
// Frequencies: G_{l1,l2} of class u takes the radiation at the mean of the
// two lines' resonances, u + (x_l1 + x_l2)/2 (for l1 = l2 the line's own
// resonance, which recovers section 4 and its Stokes V exactly). This is
// the flat-spectrum approximation for the coherence terms, valid while the
// splittings are small against the Doppler width; Checkpoint.FlatSpectrum
// measures how far a run is from it.
//
// Propagation: the 2x2 gain matrix of a class is
//
//	N = 3 [ sum_{a,a',b} c_ab c_a'b^+ rho_u(a',a) - sum_{a,b,b'} c_ab' c_ab^+ rho_l(b',b) ],
//
// so that sum_ij N_ij J_ij = Tr R^E rho_u - Tr R^A rho_l, the net
// stimulated emission of the class (the index order of rho follows from
// the traces),
// each term deposited at the mean resonance of its two lines with the same
// B-spline weights that read the radiation (so the beam gains exactly the
// energy the class gives), and eta_I = N11 + N22, eta_Q = N11 - N22,
// eta_U = 2 Re N12, eta_V = 2 Im N12; Propagation.Eta = kappa eta/2. The
// dispersive (magneto-optical) part of the line, rho_Q, rho_U, rho_V of the
// maser molecules themselves, is neglected: in the rate limit it is of the
// order of the absorptive coherent terms times the Zeeman shift over the
// line width (physics.md section 8, caution 2), the same order as the
// frequency-rule uncertainty of V, and it rotates rather than amplifies.
//
// Coherence set: within each level, the pair (a, a') is kept when
// |omega_a - omega_a'| < CoherenceThreshold x the largest rate of the run
// (Params.Saturation, in units of Gamma); a dropped pair has
// rho_aa' ~ R/(omega_a - omega_a'), and its effect on the absorptive gain
// is second order in that ratio. The real form of the class system (the
// populations, then Re and Im of every kept pair) is assembled from a
// precomputed stencil and solved by LU (gonum lapack64).

// coherent is the density-matrix solver of one velocity class. It owns its
// workspaces; solve does not allocate.
type coherent struct {
	nU, nL int
	dim    int // real unknowns

	// Kept pairs per level: index of the real part in the unknowns (the
	// imaginary part follows it), or -1; keyed by level offset a*n + a'.
	pairU, pairL []int

	pairs   []linePair2 // line pairs whose G enters the equations or the gain
	pairOf  map[[2]int]int
	entries []dmEntry
	selfG   []float64 // decay rate of each unknown's equation
	selfW   []float64 // Bohr frequency of a pair, at its real unknown
	rhs0    []float64 // pump pattern at the profile centre
	a       []float64 // dense class matrix (the strong block on the iterative path)
	x       []float64 // right-hand side, then solution
	ipiv    []int
	g       []complex128 // G per pair for the current class

	// Iterative path (classsolve.go) for class systems with weakly
	// coupled coherences; nil for small species. lineState holds each
	// line's upper and lower state as population unknowns (for it).
	it        *iterative
	lineState [][2]int32
	dn        []float64 // line inversions of the rate solver (scratch)

	// Deposition slots beyond the line slots.
	slots []dmSlot

	// Flat-spectrum measure: per kept pair in unknown order, |omega|
	// (rate units, ascending) and the velocity separation of the two
	// states in Doppler widths.
	keptW, keptDv []float64
}

// linePair2 is an unordered pair of lines (l1 <= l2) with the resonance of
// their mean frequency and the canonical weight combination.
type linePair2 struct {
	l1, l2 int
	combo  int     // canonical (q1 <= q2) combination, see comboOf
	flip   bool    // q_l1 > q_l2: G = conj of the canonical combination
	amp    float64 // 3 A_l1 A_l2
	i0     int
	w      [4]float64
}

// dmEntry is one stencil contribution: coef x G (or its conjugate) of pair
// multiplies the complex unknown (colRe + i s colIm) in the complex
// equation (rowRe, rowIm). rowIm and colIm are -1 for populations.
type dmEntry struct {
	rowRe, rowIm, colRe, colIm int32
	pair                       int32
	s, coef                    float64
	conj                       bool
}

// dmSlot is one deposited real value of a coherence term: the unknown
// (re or im of a kept pair) it reads, with its sign, the accumulator and
// the coefficient of the pair's gain.
type dmSlot struct {
	pair int // index into pairs (for the resonance)
	acc  int // accumulator, see accumulators in model.go
	coef float64
	// value = sign * x[src] (+ sign2 * x[src2] when src2 >= 0)
	src  int
	sign float64
}

// Canonical (q1, q2) combinations with q1 <= q2: 0..2 are the diagonal
// (-1,-1), (0,0), (+1,+1); 3..5 are (-1,0), (-1,+1), (0,+1).
func comboOf(q1, q2 int) (combo int, flip bool) {
	if q1 > q2 {
		q1, q2 = q2, q1
		flip = true
	}
	switch {
	case q1 == q2:
		return q1 + 1, flip
	case q1 == -1 && q2 == 0:
		return 3, flip
	case q1 == -1 && q2 == 1:
		return 4, flip
	default:
		return 5, flip
	}
}

var comboQ = [6][2]int{{-1, -1}, {0, 0}, {1, 1}, {-1, 0}, {-1, 1}, {0, 1}}

// uq returns the transverse components of e_q^* (see the file comment).
func uq(q int, theta float64) [2]complex128 {
	st, ct := math.Sin(theta), math.Cos(theta)
	switch q {
	case 0:
		return [2]complex128{complex(st, 0), 0}
	case 1:
		return [2]complex128{complex(ct/math.Sqrt2, 0), complex(0, -1/math.Sqrt2)}
	default:
		return [2]complex128{complex(-ct/math.Sqrt2, 0), complex(0, -1/math.Sqrt2)}
	}
}

// stokesWeights returns W with u1^T J conj(u2) = sum_X W_X S_X for
// S = (I, Q_f, U_f, V).
func stokesWeights(u1, u2 [2]complex128) [4]complex128 {
	a := u1[0] * cmplx.Conj(u2[0])
	b := u1[1] * cmplx.Conj(u2[1])
	c := u1[0] * cmplx.Conj(u2[1])
	d := u1[1] * cmplx.Conj(u2[0])
	return [4]complex128{(a + b) / 2, (a - b) / 2, (c + d) / 2, complex(0, -0.5) * (c - d)}
}

// etaWeights returns the (I, Q, U, V) propagation weights (before kappa)
// of one unit in the accumulator of combination combo: for the diagonal
// combinations N = 3 D u u^+; for the others the real (im = false) or
// imaginary part of D in N = 3 (D u1 u2^+ + conj(D) u2 u1^+). Eta = N
// mapped to Stokes and halved (see the file comment).
func etaWeights(combo int, im bool, theta float64) [4]float64 {
	u1, u2 := uq(comboQ[combo][0], theta), uq(comboQ[combo][1], theta)
	var n [2][2]complex128
	d := complex(1, 0)
	if im {
		d = complex(0, 1)
	}
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			if combo < 3 {
				n[i][j] = 3 * u1[i] * cmplx.Conj(u1[j])
			} else {
				n[i][j] = 3 * (d*u1[i]*cmplx.Conj(u2[j]) + cmplx.Conj(d)*u2[i]*cmplx.Conj(u1[j]))
			}
		}
	}
	return [4]float64{
		real(n[0][0]+n[1][1]) / 2,
		real(n[0][0]-n[1][1]) / 2,
		real(n[0][1]),
		imag(n[0][1]),
	}
}

// DefaultCoherenceThreshold is kappa of the coherence set (see the file
// comment of coherence.go): project default, chosen so that raising it
// tenfold changes m_l by less than 1e-3 and u_b by less than 1e-4
// (TestCoherenceThreshold). u_b sets it: the dropped coherences enter
// eta_U at first order, and water at 0.3 G needs 300 where m_l alone
// would be content with 30.
const DefaultCoherenceThreshold = 300.0

// errNotPhysical marks a class solution with negative populations.
var errNotPhysical = errors.New("density matrix not positive")

// newCoherent prepares the class solver for m's lines: energies, pump
// pattern and decay rates as for the rate equations, and the coherence set
// for the largest rate rmax (units of Gamma).
func newCoherent(m *Model, gU, gL float64, pumpU, pumpL []float64, rmax float64) (*coherent, error) {
	up, lo := m.tr.Upper.States, m.tr.Lower.States
	nU, nL := len(up), len(lo)
	cs := &coherent{nU: nU, nL: nL, pairOf: map[[2]int]int{}}
	omU := make([]float64, nU)
	omL := make([]float64, nL)
	for i, s := range up {
		omU[i] = 2 * math.Pi * s.Energy / m.gamma
	}
	for i, s := range lo {
		omL[i] = 2 * math.Pi * s.Energy / m.gamma
	}
	// Partners: lines by upper state and by lower state.
	byUp := make([][]int, nU)
	byLo := make([][]int, nL)
	lineOf := map[[2]int]int{}
	for i, l := range m.lines {
		if l.amp == 0 {
			return nil, fmt.Errorf("transfer: species %q: line %d (upper %d, lower %d) carries no dipole amplitude; the density matrix needs levels.Line.Amplitude", m.p.Species.Name, i, l.up, l.lo)
		}
		byUp[l.up] = append(byUp[l.up], i)
		byLo[l.lo] = append(byLo[l.lo], i)
		lineOf[[2]int{l.up, l.lo}] = i
	}
	limit := m.p.CoherenceThreshold * rmax
	c := float64(constant.LightSpeedInVacuum)
	vd := m.p.Doppler
	// Unknowns: upper populations, lower populations, then the kept pairs
	// in ascending |omega|, so that the strongly coupled pairs of a class
	// (|omega| below a few times its rate) and the populations are a
	// leading block (classsolve.go).
	dim := nU + nL
	cs.pairU = make([]int, nU*nU)
	cs.pairL = make([]int, nL*nL)
	for i := range cs.pairU {
		cs.pairU[i] = -1
	}
	for i := range cs.pairL {
		cs.pairL[i] = -1
	}
	type cand struct {
		upper bool
		a, b  int
		w, dv float64
	}
	var cands []cand
	keep := func(upper bool, n int, om []float64, st func(int) float64) {
		for a := 0; a < n; a++ {
			for b := a + 1; b < n; b++ {
				if w := math.Abs(om[a] - om[b]); w < limit {
					cands = append(cands, cand{upper, a, b, w, c * math.Abs(st(a)-st(b)) / (m.p.Species.Frequency * vd)})
				}
			}
		}
	}
	keep(true, nU, omU, func(i int) float64 { return up[i].Energy })
	keep(false, nL, omL, func(i int) float64 { return lo[i].Energy })
	sort.SliceStable(cands, func(i, j int) bool { return cands[i].w < cands[j].w })
	for _, k := range cands {
		pair, n := cs.pairU, nU
		if !k.upper {
			pair, n = cs.pairL, nL
		}
		pair[k.a*n+k.b] = dim
		pair[k.b*n+k.a] = dim
		dim += 2
		cs.keptW = append(cs.keptW, k.w)
		cs.keptDv = append(cs.keptDv, k.dv)
	}
	cs.dim = dim
	if dim > maxCoherentDim {
		return nil, &ParamError{Field: "CoherenceThreshold", Value: m.p.CoherenceThreshold,
			Msg: fmt.Sprintf("species %q keeps %d real unknowns per velocity class with the density matrix (limit %d)",
				m.p.Species.Name, dim, maxCoherentDim),
			Allowed: "a smaller threshold, or the populations-only model"}
	}

	// Variable lookup: population or kept pair; s is the conjugation sign.
	varOf := func(upper bool, x, y int) (cvar, bool) {
		off, n, pair := 0, nU, cs.pairU
		if !upper {
			off, n, pair = nU, nL, cs.pairL
		}
		if x == y {
			return cvar{off + x, -1, 1}, true
		}
		k := pair[x*n+y]
		if k < 0 {
			return cvar{}, false
		}
		if x < y {
			return cvar{k, k + 1, 1}, true
		}
		return cvar{k, k + 1, -1}, true
	}
	// pairIndex returns the index of the unordered pair {lx, ly} and
	// whether (lx, ly) is its conjugate order.
	pairIndex := func(lx, ly int) (int, bool) {
		conj := false
		if lx > ly {
			lx, ly = ly, lx
			conj = true
		}
		if p, ok := cs.pairOf[[2]int{lx, ly}]; ok {
			return p, conj
		}
		l1, l2 := &m.lines[lx], &m.lines[ly]
		combo, flip := comboOf(l1.q, l2.q)
		i0, _, w := m.placeAt((l1.offset + l2.offset) / 2)
		cs.pairs = append(cs.pairs, linePair2{l1: lx, l2: ly, combo: combo, flip: flip,
			amp: 3 * l1.amp * l2.amp, i0: i0, w: w})
		cs.pairOf[[2]int{lx, ly}] = len(cs.pairs) - 1
		return len(cs.pairs) - 1, conj
	}
	// Diagonal pairs first, so pair i of a line is the line's own rate.
	for i := range m.lines {
		pairIndex(i, i)
	}
	add := func(row cvar, col cvar, lx, ly int, coef float64) {
		p, conj := pairIndex(lx, ly)
		cs.entries = append(cs.entries, dmEntry{rowRe: int32(row.re), rowIm: int32(row.im), colRe: int32(col.re), colIm: int32(col.im),
			pair: int32(p), s: col.s, coef: coef, conj: conj})
	}
	cs.selfG = make([]float64, dim)
	cs.selfW = make([]float64, dim)
	// Upper equations (a <= a').
	for a := 0; a < nU; a++ {
		for a2 := a; a2 < nU; a2++ {
			row, ok := varOf(true, a, a2)
			if !ok {
				continue
			}
			cs.setSelf(row, gU, omU[a]-omU[a2])
			for _, l := range byUp[a] { // (1/2) R^E_{ac} rho_{ca'}, R^E_ac = sum_b G_{ab,cb}
				b := m.lines[l].lo
				for _, l2 := range byLo[b] {
					cc := m.lines[l2].up
					if col, ok := varOf(true, cc, a2); ok {
						add(row, col, l, l2, 0.5)
					}
				}
			}
			for _, l := range byUp[a2] { // (1/2) rho_{ac} R^E_{ca'}, R^E_ca' = sum_b G_{cb,a'b}
				b := m.lines[l].lo
				for _, l2 := range byLo[b] {
					cc := m.lines[l2].up
					if col, ok := varOf(true, a, cc); ok {
						add(row, col, l2, l, 0.5)
					}
				}
			}
			for _, l := range byUp[a] { // -T^A: G_{ab,a'b'} rho_l(b,b')
				for _, l2 := range byUp[a2] {
					if col, ok := varOf(false, m.lines[l].lo, m.lines[l2].lo); ok {
						add(row, col, l, l2, -1)
					}
				}
			}
		}
	}
	// Lower equations (b <= b').
	for b := 0; b < nL; b++ {
		for b2 := b; b2 < nL; b2++ {
			row, ok := varOf(false, b, b2)
			if !ok {
				continue
			}
			cs.setSelf(row, gL, omL[b]-omL[b2])
			for _, l := range byLo[b] { // (1/2) R^A_{bc} rho_{cb'}, R^A_bc = sum_a G_{ac,ab}
				a := m.lines[l].up
				for _, l2 := range byUp[a] {
					cc := m.lines[l2].lo
					if col, ok := varOf(false, cc, b2); ok {
						add(row, col, l2, l, 0.5)
					}
				}
			}
			for _, l := range byLo[b2] { // (1/2) rho_{bc} R^A_{cb'}, R^A_cb' = sum_a G_{ab',ac}
				a := m.lines[l].up
				for _, l2 := range byUp[a] {
					cc := m.lines[l2].lo
					if col, ok := varOf(false, b, cc); ok {
						add(row, col, l, l2, 0.5)
					}
				}
			}
			for _, l := range byLo[b] { // -T^S: G_{a'b',ab} rho_u(a,a')
				for _, l2 := range byLo[b2] {
					if col, ok := varOf(true, m.lines[l].up, m.lines[l2].up); ok {
						add(row, col, l2, l, -1)
					}
				}
			}
		}
	}
	// Deposition of the coherence terms: upper pairs (a < a') with a
	// common b give lines l1 = ab, l2 = a'b and z = rho_u(a',a); lower pairs
	// (b < b') with a common a give l1 = ab', l2 = ab and z = -rho_l(b',b).
	depose := func(l1, l2, re, im int, sRe, sIm float64) {
		p, _ := pairIndex(l1, l2)
		q1, q2 := m.lines[l1].q, m.lines[l2].q
		a1a2 := m.lines[l1].amp * m.lines[l2].amp
		switch {
		case q1 == q2:
			cs.slots = append(cs.slots, dmSlot{pair: p, acc: q1 + 1, coef: 2 * a1a2, src: re, sign: sRe})
		default:
			combo, flip := comboOf(q1, q2)
			si := sIm
			if flip {
				si = -si // conj(z)
			}
			cs.slots = append(cs.slots,
				dmSlot{pair: p, acc: 3 + 2*(combo-3), coef: a1a2, src: re, sign: sRe},
				dmSlot{pair: p, acc: 4 + 2*(combo-3), coef: a1a2, src: im, sign: si})
		}
	}
	for a := 0; a < nU; a++ {
		for a2 := a + 1; a2 < nU; a2++ {
			k := cs.pairU[a*nU+a2]
			if k < 0 {
				continue
			}
			for _, l := range byUp[a] {
				if l2, ok := lineOf[[2]int{a2, m.lines[l].lo}]; ok {
					depose(l, l2, k, k+1, 1, -1) // rho(a',a) = x - i y
				}
			}
		}
	}
	for b := 0; b < nL; b++ {
		for b2 := b + 1; b2 < nL; b2++ {
			k := cs.pairL[b*nL+b2]
			if k < 0 {
				continue
			}
			for _, l := range byLo[b2] { // l1 = a b'
				if l2, ok := lineOf[[2]int{m.lines[l].up, b}]; ok {
					depose(l, l2, k, k+1, -1, 1) // -rho(b',b) = -x + i y
				}
			}
		}
	}
	cs.entries = mergeEntries(cs.entries)
	cs.rhs0 = make([]float64, dim)
	copy(cs.rhs0, pumpU)
	copy(cs.rhs0[nU:], pumpL)
	cs.x = make([]float64, dim)
	cs.g = make([]complex128, len(cs.pairs))
	if dim > iterativeFrom {
		cs.lineState = make([][2]int32, len(m.lines))
		for i, l := range m.lines {
			cs.lineState[i] = [2]int32{int32(l.up), int32(nU + l.lo)}
		}
		cs.it = newIterative(cs, m.n, m.p.Tolerance)
		cs.dn = make([]float64, len(m.lines))
	} else {
		cs.a = make([]float64, dim*dim)
		cs.ipiv = make([]int, dim)
	}
	return cs, nil
}

// mergeEntries sums the coefficients of entries that put the same G at
// the same place (the anticommutator and transfer terms of many paths
// coincide), so that assembly touches each once.
func mergeEntries(es []dmEntry) []dmEntry {
	type key struct {
		rr, ri, cr, ci, pair int32
		s                    float64
		conj                 bool
	}
	at := make(map[key]int, len(es))
	out := es[:0]
	for _, e := range es {
		k := key{e.rowRe, e.rowIm, e.colRe, e.colIm, e.pair, e.s, e.conj}
		if i, ok := at[k]; ok {
			out[i].coef += e.coef
			continue
		}
		at[k] = len(out)
		out = append(out, e)
	}
	// Cancelled sums (exact zeros) carry nothing.
	kept := out[:0]
	for _, e := range out {
		if e.coef != 0 {
			kept = append(kept, e)
		}
	}
	return kept
}

// cvar locates a complex unknown rho(x, y) in the real unknowns: the real
// part at re, the imaginary part at im (-1 for a population), and s = -1
// when rho(x, y) is the conjugate of the stored pair (x > y).
type cvar struct {
	re, im int
	s      float64
}

// maxCoherentDim bounds the real unknowns of one class system (memory of
// the stencil and of the per-class starting values; the time is set by
// the strongly coupled block, see classsolve.go).
const maxCoherentDim = 6000

// setSelf records g + i w (the decay and the Bohr frequency of the pair)
// on the diagonal of the equation row.
func (cs *coherent) setSelf(row cvar, g, w float64) {
	cs.selfG[row.re] = g
	if row.im >= 0 {
		cs.selfG[row.im] = g
		cs.selfW[row.re] = w
	}
}

// solve computes the class's density matrix for the weighted radiation
// arrays of m (m.y, m.yc) at class j, whose largest line rate is rc
// (units of Gamma), and writes the line inversions and the coherence
// values into st.src. A small system is solved densely, a large one by
// the iterative path of classsolve.go. It returns errNotPhysical when the
// populations come out negative.
func (cs *coherent) solve(m *Model, st *state, j int, rc float64) error {
	pad := m.pad
	// G per pair: diagonal pairs are the line rates (clamped at zero like
	// the rate equations), the others the complex weighted Stokes.
	for p := range cs.pairs {
		pr := &cs.pairs[p]
		k := j + pr.i0 + pad
		if pr.l1 == pr.l2 {
			cs.g[p] = complex(m.r[pr.l1], 0)
			continue
		}
		var re, im float64
		if pr.combo < 3 {
			y := m.y[pr.combo]
			re = (pr.w[0]*y[k-1] + pr.w[1]*y[k] + pr.w[2]*y[k+1] + pr.w[3]*y[k+2]) / 3
		} else {
			yr, yi := m.yc[2*(pr.combo-3)], m.yc[2*(pr.combo-3)+1]
			re = pr.w[0]*yr[k-1] + pr.w[1]*yr[k] + pr.w[2]*yr[k+1] + pr.w[3]*yr[k+2]
			im = pr.w[0]*yi[k-1] + pr.w[1]*yi[k] + pr.w[2]*yi[k+1] + pr.w[3]*yi[k+2]
		}
		if pr.flip {
			im = -im
		}
		cs.g[p] = complex(pr.amp*re, pr.amp*im)
	}
	phi := m.phi[j]
	x := cs.x
	for i, v := range cs.rhs0 {
		x[i] = phi * v
	}
	var err error
	switch {
	case cs.it != nil && cs.it.allSwept(cs, rc):
		// Every pair is swept, so the populations see none of them: they
		// are the rate equations' (the class system with diagonal rho),
		// solved by rates.go's elimination instead of a dense LU.
		if err = m.rs.solve(m.r, phi, cs.dn); err == nil {
			m.rs.populations(x[:cs.nU], x[cs.nU:cs.nU+cs.nL])
			err = cs.it.sweepAll(cs, j)
		}
	case cs.it != nil:
		err = cs.it.solve(cs, j, rc)
	default:
		err = cs.solveDense()
	}
	if err != nil {
		return err
	}
	// Populations must stay non-negative (to rounding against the class's
	// scale): a negative one means the flat-spectrum rule has been pushed
	// past its validity (physics.md section 8, caution 1).
	scale := 0.0
	for _, v := range x[:cs.nU+cs.nL] {
		scale = math.Max(scale, math.Abs(v))
	}
	for _, v := range x[:cs.nU+cs.nL] {
		if v < -1e-9*scale-1e-300 || math.IsNaN(v) {
			return errNotPhysical
		}
	}
	for i := range m.lines {
		l := &m.lines[i]
		st.src[i*m.stride+pad+j] = x[l.up] - x[cs.nU+l.lo]
	}
	nl := len(m.lines)
	for s := range cs.slots {
		sl := &cs.slots[s]
		st.src[(nl+s)*m.stride+pad+j] = sl.sign * x[sl.src]
	}
	return nil
}

// solveDense solves the class system by Gaussian elimination (in place for
// small systems, LAPACK above).
func (cs *coherent) solveDense() error {
	n := cs.dim
	a := cs.a
	cs.assemble(a, true)
	if n <= smallDim {
		if !solveSmall(a, cs.x[:n], n) {
			return errSingular
		}
		return nil
	}
	ag := blas64.General{Rows: n, Cols: n, Stride: n, Data: a}
	if !lapack64.Getrf(ag, cs.ipiv[:n]) {
		return errSingular
	}
	lapack64.Getrs(blas.NoTrans, ag, blas64.General{Rows: n, Cols: 1, Stride: 1, Data: cs.x[:n]}, cs.ipiv[:n])
	return nil
}

var errSingular = errors.New("class matrix is singular")

// assemble writes the class matrix for the current G values into a
// (dim x dim, row-major): the decay and Bohr frequencies, then, with
// stim, every stencil entry in real form.
func (cs *coherent) assemble(a []float64, stim bool) {
	n := cs.dim
	for i := range a[:n*n] {
		a[i] = 0
	}
	for i := 0; i < n; i++ {
		a[i*n+i] = cs.selfG[i]
		if w := cs.selfW[i]; w != 0 {
			a[i*n+i+1] -= w // Re(i w (x + i y)) = -w y
			a[(i+1)*n+i] += w
		}
	}
	if !stim {
		return
	}
	for i := range cs.entries {
		e := &cs.entries[i]
		g := cs.g[e.pair]
		if e.conj {
			g = cmplx.Conj(g)
		}
		gr, gi := e.coef*real(g), e.coef*imag(g)
		rr, ri, cr, ci := int(e.rowRe), int(e.rowIm), int(e.colRe), int(e.colIm)
		a[rr*n+cr] += gr
		if ci >= 0 {
			a[rr*n+ci] -= e.s * gi
		}
		if ri >= 0 {
			a[ri*n+cr] += gi
			if ci >= 0 {
				a[ri*n+ci] += e.s * gr
			}
		}
	}
}

// smallDim is the largest class system solved by solveSmall: below it the
// per-call cost of the blocked LAPACK routines (workspace queries, block
// size choice, BLAS dispatch) outweighs the elimination itself, which is
// done ~1e5 times per run (measured: 10 unknowns, J=1-0).
const smallDim = 48

// solveSmall solves the dense row-major system a x = b in place (x in b)
// by Gaussian elimination with partial pivoting; a is destroyed. It
// reports false for a singular matrix.
func solveSmall(a, b []float64, n int) bool {
	for k := 0; k < n; k++ {
		p, best := k, math.Abs(a[k*n+k])
		for i := k + 1; i < n; i++ {
			if v := math.Abs(a[i*n+k]); v > best {
				p, best = i, v
			}
		}
		if !(best > 0) {
			return false
		}
		if p != k {
			rk, rp := a[k*n:k*n+n], a[p*n:p*n+n]
			for j := k; j < n; j++ {
				rk[j], rp[j] = rp[j], rk[j]
			}
			b[k], b[p] = b[p], b[k]
		}
		rk := a[k*n : k*n+n]
		inv := 1 / rk[k]
		tail := rk[k+1:]
		for i := k + 1; i < n; i++ {
			ri := a[i*n : i*n+n]
			f := ri[k] * inv
			if f == 0 {
				continue
			}
			rt := ri[k+1:]
			rt = rt[:len(tail)] // lets the compiler drop the bounds checks
			for j, v := range tail {
				rt[j] -= f * v
			}
			b[i] -= f * b[k]
		}
	}
	for i := n - 1; i >= 0; i-- {
		ri := a[i*n : i*n+n]
		v := b[i]
		for j := i + 1; j < n; j++ {
			v -= ri[j] * b[j]
		}
		b[i] = v / ri[i]
	}
	return true
}

// flatness returns the flat-spectrum measure of the kept coherences at
// saturation sat: the largest over kept pairs of min(1, sat/|omega|)
// (dv/v_D)^2, the relative size of the coherence times the squared
// separation of its lines in Doppler widths (the order of the error of
// the mean-resonance rule).
func (cs *coherent) flatness(sat float64) float64 {
	f := 0.0
	for i, w := range cs.keptW {
		r := 1.0
		if w > sat {
			r = sat / w
		}
		f = math.Max(f, r*cs.keptDv[i]*cs.keptDv[i])
	}
	return f
}
