package levels

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// This file holds the component-table form of a species: each level is a
// list of zero-field F levels (FLevel) with a g_F each, and the line a list
// of components (TableLine), as published for molecules whose Hamiltonian
// constants a user rarely has (methanol). A table level has the basis
// |F_k M>, one state per F level and M; its Hamiltonian is diagonal,
// E_k + s mu g_F,k M B (s, mu of doc.go): the linear Zeeman effect of each
// F level with no mixing between F levels, so no hyperfine decoupling.
// The dipole between |F_u M_u> and |F_l M_l> is
//
//	<F_u M_u|d_q|F_l M_l> = (-1)^(F_u-M_u) (F_u 1 F_l; -M_u q M_l) r(F_u, F_l),
//	r = +sqrt((2F_u+1) Branching),
//
// which keeps the per-upper-state sum rule (sum of strengths 1) and makes
// the zero-field component strengths proportional to (2F_u+1) Branching.
// The reduced elements are taken positive: their relative signs only enter
// coherences between different F levels, which are hyperfine-split far
// beyond any rate.

// ComponentRow is one row of a published hyperfine component table.
type ComponentRow struct {
	Fu, F1u, Fl, F1l float64 // F1 equal to F for fewer than two spins
	Offset           float64 // Hz, from the species rest frequency
	// Strength is the relative line strength or the Einstein A of the
	// component; only its ratios among the components of one upper F level
	// are used (as branching ratios).
	Strength float64
	GU, GL   float64 // g_F of the upper and of the lower F level
}

// RowError is an error in one row (0-based) and column of a component table.
type RowError struct {
	Row    int
	Column string
	Msg    string
}

func (e *RowError) Error() string {
	return fmt.Sprintf("row %d, column %s: %s", e.Row+1, e.Column, e.Msg)
}

// OffsetTolerance is the largest misfit (Hz) allowed between a tabulated
// offset and the difference of the F-level energies fitted to all rows:
// the rows of a table must describe fixed F levels, up to the rounding of
// published offsets.
const OffsetTolerance = 50.0

// TableFromComponents builds the F levels of both levels and the components
// of a component-table species from its rows. F-level energies are the
// least-squares solution of E_u - E_l = Offset over all rows, with the
// (2F_u+1)-weighted mean upper energy of each connected set of rows at 0.
// Notes report departures from what a complete table obeys: relative
// strengths out of each upper F level in proportion to 2F_u+1 (within 2 %),
// or, when the rows carry Einstein A values (einsteinA), equal summed A of
// every upper F level (within 5 %, which allows for the nu^3 factor across
// a few per cent in frequency). Errors are *RowError values.
func TableFromComponents(rows []ComponentRow, einsteinA bool) (upper, lower []FLevel, lines []TableLine, notes []string, err error) {
	if len(rows) == 0 {
		return nil, nil, nil, nil, &RowError{Row: -1, Column: "-", Msg: "the table has no rows"}
	}
	find := func(lv *[]FLevel, f, f1, g float64, row int, col string) (int, error) {
		for k, x := range *lv {
			if x.F == f && x.F1 == f1 {
				if x.G != g {
					return 0, &RowError{Row: row, Column: col, Msg: fmt.Sprintf("g_F = %g, but an earlier row gives %g for the same level F1=%g F=%g", g, x.G, f1, f)}
				}
				return k, nil
			}
		}
		*lv = append(*lv, FLevel{F: f, F1: f1, G: g})
		return len(*lv) - 1, nil
	}
	half := func(x float64) bool { return isHalfInt(x) }
	type key struct{ fu, f1u, fl, f1l float64 }
	seen := map[key]int{}
	for i, r := range rows {
		for _, c := range []struct {
			v    float64
			name string
		}{{r.Fu, "Fu"}, {r.F1u, "F1u"}, {r.Fl, "Fl"}, {r.F1l, "F1l"}} {
			if !half(c.v) {
				return nil, nil, nil, nil, &RowError{Row: i, Column: c.name, Msg: fmt.Sprintf("%g is not a non-negative multiple of 1/2", c.v)}
			}
		}
		d := r.Fu - r.Fl
		if math.Abs(d) > 1 || math.Abs(d-math.Round(d)) > 1e-9 || (r.Fu == 0 && r.Fl == 0) {
			return nil, nil, nil, nil, &RowError{Row: i, Column: "Fl", Msg: fmt.Sprintf("F=%g-%g violates the dipole triangle rule (|Fu - Fl| = 0 or 1, not 0-0)", r.Fu, r.Fl)}
		}
		if !(r.Strength > 0) || math.IsInf(r.Strength, 0) {
			return nil, nil, nil, nil, &RowError{Row: i, Column: "strength", Msg: fmt.Sprintf("%g: a component strength must be > 0 (leave out components that are absent)", r.Strength)}
		}
		for _, c := range []struct {
			v    float64
			name string
		}{{r.Offset, "offset"}, {r.GU, "gFu"}, {r.GL, "gFl"}} {
			if math.IsNaN(c.v) || math.IsInf(c.v, 0) {
				return nil, nil, nil, nil, &RowError{Row: i, Column: c.name, Msg: "not a finite number"}
			}
		}
		k := key{r.Fu, r.F1u, r.Fl, r.F1l}
		if j, dup := seen[k]; dup {
			return nil, nil, nil, nil, &RowError{Row: i, Column: "Fu", Msg: fmt.Sprintf("component F1=%g F=%g -> F1=%g F=%g repeats row %d", r.F1u, r.Fu, r.F1l, r.Fl, j+1)}
		}
		seen[k] = i
		u, err := find(&upper, r.Fu, r.F1u, r.GU, i, "gFu")
		if err != nil {
			return nil, nil, nil, nil, err
		}
		l, err := find(&lower, r.Fl, r.F1l, r.GL, i, "gFl")
		if err != nil {
			return nil, nil, nil, nil, err
		}
		if twice(upper[u].F)%2 != twice(upper[0].F)%2 {
			return nil, nil, nil, nil, &RowError{Row: i, Column: "Fu", Msg: fmt.Sprintf("F = %g mixes integer and half-integer F in the upper level", r.Fu)}
		}
		if twice(lower[l].F)%2 != twice(lower[0].F)%2 {
			return nil, nil, nil, nil, &RowError{Row: i, Column: "Fl", Msg: fmt.Sprintf("F = %g mixes integer and half-integer F in the lower level", r.Fl)}
		}
		lines = append(lines, TableLine{Upper: u, Lower: l, Branching: r.Strength})
	}
	// Branching ratios, and the degeneracy-rule check.
	tot := make([]float64, len(upper))
	for _, ln := range lines {
		tot[ln.Upper] += ln.Branching
	}
	ref, wsum := 0.0, 0.0
	for k, x := range upper {
		ref += tot[k]
		wsum += 2*x.F + 1
	}
	for k, x := range upper {
		if einsteinA {
			if mean := ref / float64(len(upper)); math.Abs(tot[k]/mean-1) > 0.05 {
				notes = append(notes, fmt.Sprintf("the A values of upper F1=%g F=%g sum to %.4g s^-1, %.0f %% off the mean over F levels: a component may be missing; A values are used as branching ratios within each upper F level", x.F1, x.F, tot[k], 100*(tot[k]/mean-1)))
			}
			continue
		}
		want := ref * (2*x.F + 1) / wsum
		if math.Abs(tot[k]/want-1) > 0.02 {
			notes = append(notes, fmt.Sprintf("the components of upper F1=%g F=%g sum to %.3g of the total, the degeneracy rule gives %.3g: a component may be missing; strengths are used as branching ratios within each upper F level", x.F1, x.F, tot[k]/ref, want/ref))
		}
	}
	for i := range lines {
		lines[i].Branching /= tot[lines[i].Upper]
	}
	if err := tableEnergies(rows, upper, lower, lines); err != nil {
		return nil, nil, nil, nil, err
	}
	return upper, lower, lines, notes, nil
}

// tableEnergies fits the F-level energies to the offsets (least squares,
// one gauge row per connected set of levels) and checks the misfit.
func tableEnergies(rows []ComponentRow, upper, lower []FLevel, lines []TableLine) error {
	nu, nl := len(upper), len(lower)
	n := nu + nl
	// Connected sets by union-find over the rows.
	parent := make([]int, n)
	for i := range parent {
		parent[i] = i
	}
	var root func(int) int
	root = func(i int) int {
		for parent[i] != i {
			i = parent[i]
		}
		return i
	}
	for _, ln := range lines {
		parent[root(ln.Upper)] = root(nu + ln.Lower)
	}
	sets := map[int][]int{}
	for i := 0; i < nu; i++ {
		sets[root(i)] = append(sets[root(i)], i)
	}
	var roots []int
	for r := range sets {
		roots = append(roots, r)
	}
	sort.Ints(roots)
	m := len(rows) + len(roots)
	a := mat.NewDense(m, n, nil)
	b := mat.NewVecDense(m, nil)
	for i, ln := range lines {
		a.Set(i, ln.Upper, 1)
		a.Set(i, nu+ln.Lower, -1)
		b.SetVec(i, rows[i].Offset)
	}
	for k, r := range roots {
		for _, u := range sets[r] {
			a.Set(len(rows)+k, u, 2*upper[u].F+1)
		}
	}
	var x mat.VecDense
	if err := x.SolveVec(a, b); err != nil {
		return &RowError{Row: -1, Column: "offset", Msg: "cannot fit F-level energies to the offsets: " + err.Error()}
	}
	worst, wi := 0.0, -1
	for i, ln := range lines {
		res := x.AtVec(ln.Upper) - x.AtVec(nu+ln.Lower) - rows[i].Offset
		if math.Abs(res) > worst {
			worst, wi = math.Abs(res), i
		}
	}
	if worst > OffsetTolerance {
		return &RowError{Row: wi, Column: "offset", Msg: fmt.Sprintf("offset disagrees by %.3g kHz with the F-level energies that the other rows fix (allowed misfit %g Hz): each F level must have one energy in every row", worst/1e3, OffsetTolerance)}
	}
	for k := range upper {
		upper[k].Energy = x.AtVec(k)
	}
	for k := range lower {
		lower[k].Energy = x.AtVec(nu + k)
	}
	return nil
}

// validateTable checks a component-table species.
func (sp *Species) validateTable() error {
	if len(sp.Upper.Table) == 0 || len(sp.Lower.Table) == 0 {
		return fmt.Errorf("%s: a component-table species needs F levels in both levels", sp.Name)
	}
	if len(sp.TableLines) == 0 {
		return fmt.Errorf("%s: a component-table species needs at least one component", sp.Name)
	}
	if sp.Upper.Magneton != sp.Lower.Magneton || sp.Upper.Magneton != sp.Magneton {
		return fmt.Errorf("%s: species and both levels must use the same magneton", sp.Name)
	}
	for _, l := range []*Level{&sp.Upper, &sp.Lower} {
		for k, x := range l.Table {
			if !isHalfInt(x.F) || !isHalfInt(x.F1) || math.IsNaN(x.G) || math.IsInf(x.G, 0) || math.IsNaN(x.Energy) || math.IsInf(x.Energy, 0) {
				return fmt.Errorf("%s: F level %d (F=%g): F, F1 must be multiples of 1/2, energy and g_F finite", sp.Name, k, x.F)
			}
			if twice(x.F)%2 != twice(l.Table[0].F)%2 {
				return fmt.Errorf("%s: F levels of one level must all be integer or all half-integer", sp.Name)
			}
		}
	}
	sum := make([]float64, len(sp.Upper.Table))
	for i, ln := range sp.TableLines {
		if ln.Upper < 0 || ln.Upper >= len(sp.Upper.Table) || ln.Lower < 0 || ln.Lower >= len(sp.Lower.Table) {
			return fmt.Errorf("%s: component %d refers to a missing F level", sp.Name, i)
		}
		fu, fl := sp.Upper.Table[ln.Upper].F, sp.Lower.Table[ln.Lower].F
		if d := fu - fl; math.Abs(d) > 1 || math.Abs(d-math.Round(d)) > 1e-9 || fu+fl == 0 {
			return fmt.Errorf("%s: component %d, F=%g-%g, is not an electric-dipole component", sp.Name, i, fu, fl)
		}
		if !(ln.Branching > 0) {
			return fmt.Errorf("%s: component %d has branching %g (needs > 0)", sp.Name, i, ln.Branching)
		}
		sum[ln.Upper] += ln.Branching
	}
	for k, s := range sum {
		if math.Abs(s-1) > 1e-9 {
			return fmt.Errorf("%s: the branching ratios of upper F level %d sum to %g, not 1", sp.Name, k, s)
		}
	}
	return nil
}

// newTableSolver prepares a component-table level: basis |F_k M>, one
// diagonal block per M, zero-field vectors the unit vectors.
func newTableSolver(l Level) (*Solver, error) {
	s := &Solver{level: l}
	zpre := l.Magneton.zeemanSign() * l.Magneton.HzPerGauss()
	type st struct {
		k, tm int
	}
	byM := map[int][]st{}
	maxF := 0
	for k, x := range l.Table {
		tf := twice(x.F)
		maxF = max(maxF, tf)
		for tm := tf; tm >= -tf; tm -= 2 {
			byM[tm] = append(byM[tm], st{k, tm})
		}
		s.mults = append(s.mults, Multiplet{F: x.F, F1: x.F1, Energy: x.Energy, States: tf + 1})
	}
	s.tj = []int{maxF}
	s.stride = []int{1}
	var ms []int
	for m := range byM {
		ms = append(ms, m)
	}
	sort.Ints(ms)
	start := 0
	for _, m := range ms {
		ss := byM[m]
		sort.SliceStable(ss, func(i, j int) bool { return l.Table[ss[i].k].Energy < l.Table[ss[j].k].Energy })
		n := len(ss)
		b := block{twoM: m, start: start}
		b.h0 = mat.NewSymDense(n, nil)
		b.z = make([]float64, n)
		b.zVec = mat.NewDense(n, n, nil)
		b.zE = make([]float64, n)
		b.zTF, b.zTF1, b.zMult = make([]int, n), make([]int, n), make([]int, n)
		b.zMJ2 = make([]float64, n)
		for p, x := range ss {
			i := start + p
			f := l.Table[x.k]
			mm := float64(x.tm) / 2
			b.idx = append(b.idx, i)
			s.basis = append(s.basis, BasisState{MJ: mm})
			s.tm = append(s.tm, []int{x.tm})
			s.pos = append(s.pos, p)
			b.h0.SetSym(p, p, f.Energy)
			b.z[p] = zpre * f.G * mm
			s.zdiag = append(s.zdiag, b.z[p])
			b.zVec.Set(p, p, 1)
			b.zE[p] = f.Energy
			b.zTF[p], b.zTF1[p], b.zMult[p] = twice(f.F), twice(f.F1), x.k
			b.zMJ2[p] = mm * mm
			s.scale = math.Max(s.scale, math.Abs(f.Energy))
		}
		b.h = mat.NewSymDense(n, nil)
		b.vals = make([]float64, n)
		b.vecs = mat.NewDense(n, n, nil)
		b.ov = mat.NewDense(n, n, nil)
		b.out = mat.NewDense(n, n, nil)
		b.outE = make([]float64, n)
		b.lab = make([]int, n)
		b.used = make([]bool, n)
		s.blocks = append(s.blocks, b)
		start += n
	}
	s.dim = start
	return s, nil
}

// tablePairs builds the dipole blocks of a component-table species.
func (t *TransitionSolver) tablePairs() {
	sp := t.sp
	r := make(map[[2]int]float64, len(sp.TableLines))
	for _, ln := range sp.TableLines {
		r[[2]int{ln.Upper, ln.Lower}] = math.Sqrt((2*sp.Upper.Table[ln.Upper].F + 1) * ln.Branching)
	}
	lbOf := map[int]int{}
	for i, b := range t.lo.blocks {
		lbOf[b.twoM] = i
	}
	for ui, ub := range t.up.blocks {
		for q := -1; q <= 1; q++ {
			li, ok := lbOf[ub.twoM-2*q]
			if !ok {
				continue
			}
			lb := t.lo.blocks[li]
			d := mat.NewDense(len(ub.idx), len(lb.idx), nil)
			nz := false
			for p := range ub.idx {
				ku := ub.zMult[p]
				tfu := ub.zTF[p]
				for c := range lb.idx {
					rr, ok := r[[2]int{ku, lb.zMult[c]}]
					if !ok {
						continue
					}
					tml := lb.twoM
					v := parity((tfu-ub.twoM)/2) * Wigner3jTwice(tfu, 2, lb.zTF[c], -ub.twoM, 2*q, tml) * rr
					if v != 0 {
						d.Set(p, c, v)
						nz = true
					}
				}
			}
			if !nz {
				continue
			}
			t.pairs = append(t.pairs, dipolePair{
				ub: ui, lb: li, q: q, d: d,
				tmp: mat.NewDense(len(ub.idx), len(lb.idx), nil),
				amp: mat.NewDense(len(ub.idx), len(lb.idx), nil),
			})
		}
	}
}

// TableRows writes a species as a component table: its zero-field
// components (Components) with the g_F of each F level from the first-order
// Zeeman shift of its states, g_F = (dE/dB) / (s mu M) (doc.go). For a
// Hamiltonian species this is the table that reproduces it in the weak-field
// regime; components weaker than minStrength (relative, of the total) are
// left out.
func TableRows(sp *Species, minStrength float64) ([]ComponentRow, error) {
	ts, err := NewTransitionSolver(sp)
	if err != nil {
		return nil, err
	}
	cs, err := Components(sp)
	if err != nil {
		return nil, err
	}
	gOf := func(s *Solver) (map[[2]float64]float64, error) {
		var st Structure
		if err := s.Solve(0, &st); err != nil {
			return nil, err
		}
		mu := s.level.Magneton.zeemanSign() * s.level.Magneton.HzPerGauss()
		g := map[[2]float64]float64{}
		for i := range st.States {
			x := &st.States[i]
			k := [2]float64{x.F1, x.F}
			if _, ok := g[k]; ok || x.M == 0 {
				continue // F = 0 levels stay out of the map: g_F = 0
			}
			g[k] = s.FirstOrder(x) / (mu * x.M)
		}
		return g, nil
	}
	gu, err := gOf(ts.up)
	if err != nil {
		return nil, err
	}
	gl, err := gOf(ts.lo)
	if err != nil {
		return nil, err
	}
	var rows []ComponentRow
	for _, c := range cs {
		if c.Strength < minStrength {
			continue
		}
		rows = append(rows, ComponentRow{Fu: c.Fu, F1u: c.F1u, Fl: c.Fl, F1l: c.F1l, Offset: c.Offset, Strength: c.Strength,
			GU: gu[[2]float64{c.F1u, c.Fu}], GL: gl[[2]float64{c.F1l, c.Fl}]})
	}
	return rows, nil
}
