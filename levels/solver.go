package levels

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Multiplet is one zero-field hyperfine level: 2F+1 states sharing F, F1
// and energy, one in each M block with |M| <= F.
type Multiplet struct {
	F, F1  float64
	Energy float64 // zero-field E/h, Hz, relative to the unsplit rotational level
	States int     // number of states (2F+1)
}

// Solver diagonalizes one Level at any field. It holds the field-independent
// Hamiltonian blocks, the zero-field eigenvectors used to carry labels, and
// the workspaces, so repeated Solve calls do not rebuild anything. A Solver
// is not safe for concurrent use; make one per goroutine.
type Solver struct {
	level  Level
	dim    int
	tj     []int // twice the angular momentum of each slot: 0 = J, 1.. = spins
	stride []int
	basis  []BasisState
	tm     [][]int // tm[i][slot] = twice m of basis state i
	pos    []int   // position of basis state i within its M block
	blocks []block
	mults  []Multiplet
	zdiag  []float64 // Zeeman operator per gauss on the basis (diagonal), Hz/G
	scale  float64   // largest |zero-field energy|, Hz, for tolerances
}

type block struct {
	twoM  int
	idx   []int // basis indices of this block
	start int   // index of the block's first state in Structure.States
	h0    *mat.SymDense
	z     []float64 // Zeeman diagonal, Hz per gauss

	// Zero-field eigenvectors (columns), F- and F1-adapted within
	// degenerate clusters, with their labels.
	zVec  *mat.Dense
	zE    []float64
	zTF   []int // twice F
	zTF1  []int // twice F1
	zMult []int
	zMJ2  []float64

	// Workspaces and the result of the last Solve, in output order.
	h    *mat.SymDense
	eig  mat.EigenSym
	vals []float64
	vecs *mat.Dense
	ov   *mat.Dense
	out  *mat.Dense
	outE []float64
	lab  []int // zero-field state assigned to each output column
	used []bool
}

// NewSolver validates the level and prepares its Hamiltonian.
func NewSolver(l Level) (*Solver, error) { return NewSolverContext(context.Background(), l) }

// NewSolverContext is NewSolver that stops with ctx.Err() when ctx is
// cancelled; it checks between M blocks.
func NewSolverContext(ctx context.Context, l Level) (*Solver, error) {
	if err := l.Validate(); err != nil {
		return nil, err
	}
	if len(l.Table) > 0 {
		return newTableSolver(l)
	}
	s := &Solver{level: l}
	ns := 1 + len(l.Spins)
	s.tj = make([]int, ns)
	s.tj[0] = twice(l.J)
	for i, sp := range l.Spins {
		s.tj[i+1] = twice(sp.I)
	}
	s.stride = make([]int, ns)
	s.dim = 1
	for k := ns - 1; k >= 0; k-- {
		s.stride[k] = s.dim
		s.dim *= s.tj[k] + 1
	}
	s.basis = make([]BasisState, s.dim)
	s.tm = make([][]int, s.dim)
	byM := map[int][]int{}
	for i := 0; i < s.dim; i++ {
		tm := make([]int, ns)
		tot := 0
		for k := 0; k < ns; k++ {
			d := (i / s.stride[k]) % (s.tj[k] + 1)
			tm[k] = s.tj[k] - 2*d // m descending within each slot
			tot += tm[k]
		}
		s.tm[i] = tm
		mi := make([]float64, ns-1)
		for k := 1; k < ns; k++ {
			mi[k-1] = float64(tm[k]) / 2
		}
		s.basis[i] = BasisState{MJ: float64(tm[0]) / 2, MI: mi}
		byM[tot] = append(byM[tot], i)
	}
	var ms []int
	for m := range byM {
		ms = append(ms, m)
	}
	sort.Ints(ms)
	s.pos = make([]int, s.dim)
	zpre := l.Magneton.zeemanSign() * l.Magneton.HzPerGauss()
	start := 0
	for _, m := range ms {
		b := block{twoM: m, idx: byM[m], start: start}
		start += len(b.idx)
		for p, i := range b.idx {
			s.pos[i] = p
		}
		b.z = make([]float64, len(b.idx))
		if s.zdiag == nil {
			s.zdiag = make([]float64, s.dim)
		}
		for p, i := range b.idx {
			g := l.G * float64(s.tm[i][0]) / 2
			for k, sp := range l.Spins {
				g += sp.G * (1 - sp.Shielding) * float64(s.tm[i][k+1]) / 2
			}
			b.z[p] = zpre * g
			s.zdiag[i] = b.z[p]
		}
		s.blocks = append(s.blocks, b)
	}
	for bi := range s.blocks {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		s.buildBlock(&s.blocks[bi])
	}
	if err := s.zeroField(ctx); err != nil {
		return nil, err
	}
	return s, nil
}

// Level returns the level the solver was built for.
func (s *Solver) Level() Level { return s.level }

// Dim returns the dimension of the product basis.
func (s *Solver) Dim() int { return s.dim }

// Basis returns the product basis (shared; do not modify).
func (s *Solver) Basis() []BasisState { return s.basis }

// Multiplets returns the zero-field hyperfine levels, indexed by State.Multiplet.
func (s *Solver) Multiplets() []Multiplet { return s.mults }

// jj returns j(j+1) of slot k.
func (s *Solver) jj(k int) float64 { j := float64(s.tj[k]) / 2; return j * (j + 1) }

// dot returns the block matrix of A_a . A_b for two different slots.
func (s *Solver) dot(b *block, sa, sb int) *mat.Dense {
	n := len(b.idx)
	x := mat.NewDense(n, n, nil)
	ja, jb := float64(s.tj[sa])/2, float64(s.tj[sb])/2
	for c, i := range b.idx {
		ma, mb := float64(s.tm[i][sa])/2, float64(s.tm[i][sb])/2
		x.Set(c, c, x.At(c, c)+ma*mb)
		// A_a+ A_b- / 2: m_a+1, m_b-1 (raising m lowers the digit).
		if ma < ja && mb > -jb {
			j := i - s.stride[sa] + s.stride[sb]
			v := 0.5 * math.Sqrt((ja*(ja+1)-ma*(ma+1))*(jb*(jb+1)-mb*(mb-1)))
			x.Set(s.pos[j], c, x.At(s.pos[j], c)+v)
		}
		if ma > -ja && mb < jb {
			j := i + s.stride[sa] - s.stride[sb]
			v := 0.5 * math.Sqrt((ja*(ja+1)-ma*(ma-1))*(jb*(jb+1)-mb*(mb+1)))
			x.Set(s.pos[j], c, x.At(s.pos[j], c)+v)
		}
	}
	return x
}

// buildBlock assembles the field-independent Hamiltonian of one M block.
func (s *Solver) buildBlock(b *block) {
	n := len(b.idx)
	h := mat.NewDense(n, n, nil)
	J := s.level.J
	JJ := J * (J + 1)
	tmp := mat.NewDense(n, n, nil)
	for _, c := range s.level.Couplings {
		switch c.Kind {
		case SpinRotation:
			h.Add(h, scaled(c.Value, s.dot(b, 0, c.Spins[0]+1)))
		case SpinSpin:
			h.Add(h, scaled(c.Value, s.dot(b, c.Spins[0]+1, c.Spins[1]+1)))
		case Quadrupole:
			// eQq [3 X^2 + (3/2) X - I^2 J^2] / [2I(2I-1)J(2J-1)], X = I.J:
			// eigenvalues are the Casimir formula (Townes & Schawlow 1955).
			I := s.level.Spins[c.Spins[0]].I
			x := s.dot(b, 0, c.Spins[0]+1)
			tmp.Mul(x, x)
			tmp.Scale(3, tmp)
			x.Scale(1.5, x)
			tmp.Add(tmp, x)
			addDiag(tmp, -I*(I+1)*JJ)
			h.Add(h, scaled(c.Value/(2*I*(2*I-1)*J*(2*J-1)), tmp))
		case SpinSpinTensor:
			// d_T [3 (X1 X2 + X2 X1) - 2 (I1.I2) J^2] / [(2J-1)(2J+3)], X_k = I_k.J.
			x1 := s.dot(b, 0, c.Spins[0]+1)
			x2 := s.dot(b, 0, c.Spins[1]+1)
			y := s.dot(b, c.Spins[0]+1, c.Spins[1]+1)
			tmp.Mul(x1, x2)
			t2 := mat.NewDense(n, n, nil)
			t2.Mul(x2, x1)
			tmp.Add(tmp, t2)
			tmp.Scale(3, tmp)
			y.Scale(2*JJ, y)
			tmp.Sub(tmp, y)
			h.Add(h, scaled(c.Value/((2*J-1)*(2*J+3)), tmp))
		}
	}
	b.h0 = symOf(h)
	b.h = mat.NewSymDense(n, nil)
	b.vals = make([]float64, n)
	b.vecs = mat.NewDense(n, n, nil)
	b.ov = mat.NewDense(n, n, nil)
	b.out = mat.NewDense(n, n, nil)
	b.outE = make([]float64, n)
	b.lab = make([]int, n)
	b.used = make([]bool, n)
}

func scaled(f float64, x *mat.Dense) *mat.Dense { x.Scale(f, x); return x }

func addDiag(x *mat.Dense, v float64) {
	r, _ := x.Dims()
	for i := 0; i < r; i++ {
		x.Set(i, i, x.At(i, i)+v)
	}
}

// symOf returns the symmetric part of a (numerically symmetric) matrix.
func symOf(x *mat.Dense) *mat.SymDense {
	n, _ := x.Dims()
	s := mat.NewSymDense(n, nil)
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			s.SetSym(i, j, 0.5*(x.At(i, j)+x.At(j, i)))
		}
	}
	return s
}

// casimirBlock returns the squared sum of the first slots angular momenta in a
// block: all slots give F^2, slots = 2 gives F1^2 (J plus the first spin).
func (s *Solver) casimirBlock(b *block, slots int) *mat.SymDense {
	n := len(b.idx)
	x := mat.NewDense(n, n, nil)
	c := 0.0
	for a := 0; a < slots; a++ {
		c += s.jj(a)
		for bb := a + 1; bb < slots; bb++ {
			x.Add(x, scaled(2, s.dot(b, a, bb)))
		}
	}
	addDiag(x, c)
	return symOf(x)
}

// zeroField diagonalizes every block at B = 0, adapts degenerate clusters
// to F^2 and F1^2, assigns labels and groups states into multiplets.
func (s *Solver) zeroField(ctx context.Context) error {
	ns := len(s.tj)
	totParity := 0
	for _, t := range s.tj {
		totParity += t
	}
	totParity &= 1
	// First pass: eigenvalues, to set the tolerance scale.
	for bi := range s.blocks {
		if err := ctx.Err(); err != nil {
			return err
		}
		b := &s.blocks[bi]
		n := len(b.idx)
		var eig mat.EigenSym
		if !eig.Factorize(b.h0, true) {
			return fmt.Errorf("levels: zero-field eigen-decomposition failed")
		}
		b.zE = eig.Values(nil)
		b.zVec = mat.NewDense(n, n, nil)
		eig.VectorsTo(b.zVec)
		for _, e := range b.zE {
			s.scale = math.Max(s.scale, math.Abs(e))
		}
	}
	tolE := 1e-9*s.scale + 1e-9
	for bi := range s.blocks {
		if err := ctx.Err(); err != nil {
			return err
		}
		b := &s.blocks[bi]
		n := len(b.idx)
		f2 := s.casimirBlock(b, ns)
		adaptClusters(b.zVec, b.zE, f2, tolE, 0, n)
		fexp := expectations(b.zVec, f2)
		b.zTF = make([]int, n)
		for k, x := range fexp {
			b.zTF[k] = roundTwice((math.Sqrt(1+4*math.Max(x, 0))-1)/2, totParity)
		}
		b.zTF1 = make([]int, n)
		if ns >= 3 {
			f12 := s.casimirBlock(b, 2)
			// Within clusters of equal energy and F, adapt to F1^2.
			for i := 0; i < n; {
				j := i + 1
				for j < n && math.Abs(b.zE[j]-b.zE[j-1]) <= tolE && b.zTF[j] == b.zTF[i] {
					j++
				}
				if j-i > 1 {
					adaptClusters(b.zVec, b.zE, f12, math.Inf(1), i, j)
				}
				i = j
			}
			s.assignF1(b, expectations(b.zVec, f12))
		} else {
			copy(b.zTF1, b.zTF)
		}
		b.zMJ2 = make([]float64, n)
		for k := 0; k < n; k++ {
			b.zMJ2[k] = s.mj2(b, b.zVec, k)
		}
	}
	// Multiplets.
	tolM := 1e-7*s.scale + 1e-6
	for bi := range s.blocks {
		b := &s.blocks[bi]
		b.zMult = make([]int, len(b.idx))
		for k := range b.idx {
			F, F1 := float64(b.zTF[k])/2, float64(b.zTF1[k])/2
			found := -1
			for mi, m := range s.mults {
				if m.F == F && m.F1 == F1 && math.Abs(m.Energy-b.zE[k]) <= tolM {
					found = mi
					break
				}
			}
			if found < 0 {
				s.mults = append(s.mults, Multiplet{F: F, F1: F1, Energy: b.zE[k]})
				found = len(s.mults) - 1
			}
			s.mults[found].States++
			b.zMult[k] = found
		}
	}
	return nil
}

// roundTwice returns twice x rounded to the nearest integer of the given parity.
func roundTwice(x float64, parity int) int {
	return 2*int(math.Round((2*x-float64(parity))/2)) + parity
}

// adaptClusters rotates the columns lo..hi-1 of v within each cluster of
// (sorted) energies closer than tol so that they diagonalize op, and
// reorders each cluster by ascending op eigenvalue.
func adaptClusters(v *mat.Dense, e []float64, op *mat.SymDense, tol float64, lo, hi int) {
	n, _ := v.Dims()
	for i := lo; i < hi; {
		j := i + 1
		for j < hi && math.Abs(e[j]-e[j-1]) <= tol {
			j++
		}
		if k := j - i; k > 1 {
			c := mat.DenseCopyOf(v.Slice(0, n, i, j))
			var t mat.Dense
			t.Mul(op, c)
			var p mat.Dense
			p.Mul(c.T(), &t)
			ps := symOf(&p)
			var eig mat.EigenSym
			if eig.Factorize(ps, true) {
				var w mat.Dense
				eig.VectorsTo(&w)
				var r mat.Dense
				r.Mul(c, &w)
				v.Slice(0, n, i, j).(*mat.Dense).Copy(&r)
			}
		}
		i = j
	}
}

// expectations returns <v_k|op|v_k> for every column of v.
func expectations(v *mat.Dense, op *mat.SymDense) []float64 {
	n, _ := v.Dims()
	var t mat.Dense
	t.Mul(op, v)
	out := make([]float64, n)
	for k := 0; k < n; k++ {
		for i := 0; i < n; i++ {
			out[k] += v.At(i, k) * t.At(i, k)
		}
	}
	return out
}

func (s *Solver) mj2(b *block, v *mat.Dense, k int) float64 {
	x := 0.0
	for p, i := range b.idx {
		a := v.At(p, k)
		m := float64(s.tm[i][0]) / 2
		x += a * a * m * m
	}
	return x
}

// couplingPaths counts the ways spins tj[from:] couple twice-F1 f to twice-F t.
func couplingPaths(tj []int, f, t int) int {
	if len(tj) == 0 {
		if f == t {
			return 1
		}
		return 0
	}
	n := 0
	for g := abs(f - tj[0]); g <= f+tj[0]; g += 2 {
		n += couplingPaths(tj[1:], g, t)
	}
	return n
}

// assignF1 labels F1 within each F of a block: the allowed F1 values (with
// multiplicity) are matched to the states in ascending order of <F1^2>.
// F1 is a name, not a good quantum number, so this one-to-one matching is
// preferred to rounding, which could give two states the same label.
func (s *Solver) assignF1(b *block, f1exp []float64) {
	n := len(b.idx)
	par := (s.tj[0] + s.tj[1]) & 1
	done := make([]bool, n)
	for k := 0; k < n; k++ {
		if done[k] {
			continue
		}
		var ks []int
		for q := k; q < n; q++ {
			if !done[q] && b.zTF[q] == b.zTF[k] {
				ks = append(ks, q)
				done[q] = true
			}
		}
		var allowed []int
		for f1 := abs(s.tj[0] - s.tj[1]); f1 <= s.tj[0]+s.tj[1]; f1 += 2 {
			for c := couplingPaths(s.tj[2:], f1, b.zTF[k]); c > 0; c-- {
				allowed = append(allowed, f1)
			}
		}
		sort.Slice(ks, func(i, j int) bool { return f1exp[ks[i]] < f1exp[ks[j]] })
		for i, q := range ks {
			if len(allowed) == len(ks) {
				b.zTF1[q] = allowed[i]
			} else {
				b.zTF1[q] = roundTwice((math.Sqrt(1+4*math.Max(f1exp[q], 0))-1)/2, par)
			}
		}
	}
}

// Solve diagonalizes the level at field B (gauss, along z) into dst, reusing
// dst's storage when it came from an earlier Solve of this solver. At B = 0
// the states are the F-adapted zero-field eigenvectors; at B != 0 each state
// carries the labels of the zero-field eigenvector of its M block with which
// it has the largest overlap (one-to-one, greedy in overlap), and its sign is
// chosen to make that overlap positive.
func (s *Solver) Solve(field float64, dst *Structure) error {
	return s.SolveContext(context.Background(), field, dst)
}

// SolveContext is Solve that stops with ctx.Err() when ctx is cancelled;
// it checks between M blocks, and dst is then incomplete.
func (s *Solver) SolveContext(ctx context.Context, field float64, dst *Structure) error {
	if math.IsNaN(field) || math.IsInf(field, 0) {
		return fmt.Errorf("levels: field must be finite, got %g", field)
	}
	dst.Level = s.level
	dst.Field = field
	dst.Basis = s.basis
	if len(dst.States) != s.dim || (s.dim > 0 && len(dst.States[0].Vector) != s.dim) {
		dst.States = make([]State, s.dim)
		buf := make([]float64, s.dim*s.dim)
		for k := range dst.States {
			dst.States[k].Vector = buf[k*s.dim : (k+1)*s.dim : (k+1)*s.dim]
		}
	}
	for bi := range s.blocks {
		if err := ctx.Err(); err != nil {
			return err
		}
		b := &s.blocks[bi]
		n := len(b.idx)
		if field == 0 {
			b.out.Copy(b.zVec)
			copy(b.outE, b.zE)
			for k := range b.lab {
				b.lab[k] = k
			}
		} else {
			b.h.CopySym(b.h0)
			for p := 0; p < n; p++ {
				b.h.SetSym(p, p, b.h.At(p, p)+field*b.z[p])
			}
			if !b.eig.Factorize(b.h, true) {
				return fmt.Errorf("levels: eigen-decomposition failed at B = %g G", field)
			}
			b.eig.Values(b.vals)
			b.eig.VectorsTo(b.vecs)
			copy(b.outE, b.vals)
			b.ov.Mul(b.zVec.T(), b.vecs)
			s.carry(b)
		}
		for c := 0; c < n; c++ {
			st := &dst.States[b.start+c]
			z := b.lab[c]
			st.Energy = b.outE[c]
			st.M = float64(b.twoM) / 2
			st.F = float64(b.zTF[z]) / 2
			st.F1 = float64(b.zTF1[z]) / 2
			st.Multiplet = b.zMult[z]
			clear(st.Vector)
			mj2 := 0.0
			for p, i := range b.idx {
				a := b.out.At(p, c)
				st.Vector[i] = a
				m := float64(s.tm[i][0]) / 2
				mj2 += a * a * m * m
			}
			st.MJ2 = mj2
		}
	}
	return nil
}

// carry assigns zero-field labels to the eigenvectors in b.vecs by greedy
// maximal overlap (b.ov = zVec^T vecs) and writes sign-fixed vectors to b.out.
func (s *Solver) carry(b *block) {
	n := len(b.idx)
	for i := range b.used {
		b.used[i] = false
		b.lab[i] = -1
	}
	for step := 0; step < n; step++ {
		best, bz, bc := -1.0, -1, -1
		for z := 0; z < n; z++ {
			if b.used[z] {
				continue
			}
			for c := 0; c < n; c++ {
				if b.lab[c] >= 0 {
					continue
				}
				o := b.ov.At(z, c)
				if o*o > best {
					best, bz, bc = o*o, z, c
				}
			}
		}
		b.used[bz] = true
		b.lab[bc] = bz
	}
	for c := 0; c < n; c++ {
		sg := 1.0
		if b.ov.At(b.lab[c], c) < 0 {
			sg = -1
		}
		for p := 0; p < n; p++ {
			b.out.Set(p, c, sg*b.vecs.At(p, c))
		}
	}
}

// FirstOrder returns dE/dB (Hz per gauss) of a state at zero field by the
// Hellmann-Feynman theorem, <v|H_Z|v>/B. Exact for the F-adapted zero-field
// states that Solve(0) returns.
func (s *Solver) FirstOrder(st *State) float64 {
	x := 0.0
	for i, a := range st.Vector {
		x += a * a * s.zdiag[i]
	}
	return x
}

// Solve is a convenience for NewSolver(l) followed by one Solve at field B (gauss).
func (l Level) Solve(field float64) (*Structure, error) {
	s, err := NewSolver(l)
	if err != nil {
		return nil, err
	}
	st := new(Structure)
	if err := s.Solve(field, st); err != nil {
		return nil, err
	}
	return st, nil
}
