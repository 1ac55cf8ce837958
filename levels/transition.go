package levels

import (
	"context"
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// tinyStrength is the normalized strength below which a component is dropped
// (a dipole forbidden by symmetry comes out at rounding level, ~1e-30).
const tinyStrength = 1e-12

// TransitionSolver solves a species at many fields, reusing the level
// solvers, the dipole blocks and all workspaces. Not safe for concurrent use.
type TransitionSolver struct {
	sp     *Species
	up, lo *Solver
	pairs  []dipolePair
	norm   float64 // 2 J_u + 1: makes the per-upper-state sum rule exact
}

// dipolePair is the dipole matrix between one upper and one lower M block.
type dipolePair struct {
	ub, lb int // block indices
	q      int
	d      *mat.Dense // upper block basis x lower block basis
	tmp    *mat.Dense
	amp    *mat.Dense
}

// NewTransitionSolver validates the species and prepares both levels and
// the dipole matrices in the product basis.
func NewTransitionSolver(sp *Species) (*TransitionSolver, error) {
	return NewTransitionSolverContext(context.Background(), sp)
}

// NewTransitionSolverContext is NewTransitionSolver that stops with
// ctx.Err() when ctx is cancelled.
func NewTransitionSolverContext(ctx context.Context, sp *Species) (*TransitionSolver, error) {
	if err := sp.Validate(); err != nil {
		return nil, err
	}
	up, err := NewSolverContext(ctx, sp.Upper)
	if err != nil {
		if ctx.Err() != nil {
			return nil, err
		}
		return nil, fmt.Errorf("%s: upper level: %w", sp.Name, err)
	}
	lo, err := NewSolverContext(ctx, sp.Lower)
	if err != nil {
		if ctx.Err() != nil {
			return nil, err
		}
		return nil, fmt.Errorf("%s: lower level: %w", sp.Name, err)
	}
	t := &TransitionSolver{sp: sp, up: up, lo: lo, norm: 2*sp.Upper.J + 1}
	if sp.IsTable() {
		// The reduced elements of table.go carry the normalization.
		t.norm = 1
		t.tablePairs()
		return t, nil
	}
	tju, tjl := up.tj[0], lo.tj[0]
	// Lower-block lookup by twice M.
	lbOf := map[int]int{}
	for i, b := range lo.blocks {
		lbOf[b.twoM] = i
	}
	ns := len(up.tj)
	for ui, ub := range up.blocks {
		for q := -1; q <= 1; q++ {
			li, ok := lbOf[ub.twoM-2*q]
			if !ok {
				continue
			}
			lb := lo.blocks[li]
			d := mat.NewDense(len(ub.idx), len(lb.idx), nil)
			nz := false
			for r, iu := range ub.idx {
				for c, il := range lb.idx {
					same := true // spins are spectators
					for k := 1; k < ns; k++ {
						if up.tm[iu][k] != lo.tm[il][k] {
							same = false
							break
						}
					}
					if !same {
						continue
					}
					tmu, tml := up.tm[iu][0], lo.tm[il][0]
					if tmu-tml != 2*q {
						continue
					}
					// <J_u m_u|d_q|J_l m_l> = (-1)^(J_u-m_u) (J_u 1 J_l; -m_u q m_l), reduced element 1.
					v := parity((tju-tmu)/2) * Wigner3jTwice(tju, 2, tjl, -tmu, 2*q, tml)
					if v != 0 {
						d.Set(r, c, v)
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
	if len(t.pairs) == 0 {
		return nil, fmt.Errorf("%s: no allowed electric-dipole component", sp.Name)
	}
	return t, nil
}

// Species returns the species of the solver.
func (t *TransitionSolver) Species() *Species { return t.sp }

// Upper and Lower return the level solvers (for their Multiplets).
func (t *TransitionSolver) Upper() *Solver { return t.up }
func (t *TransitionSolver) Lower() *Solver { return t.lo }

// Solve computes the transition at field B (gauss) into dst, reusing its
// storage. Lines are grouped by (upper M block, q) and then by upper and
// lower state index.
func (t *TransitionSolver) Solve(field float64, dst *Transition) error {
	return t.SolveContext(context.Background(), field, dst)
}

// SolveContext is Solve that stops with ctx.Err() when ctx is cancelled.
func (t *TransitionSolver) SolveContext(ctx context.Context, field float64, dst *Transition) error {
	if dst.Upper == nil {
		dst.Upper = new(Structure)
	}
	if dst.Lower == nil {
		dst.Lower = new(Structure)
	}
	if err := t.up.SolveContext(ctx, field, dst.Upper); err != nil {
		return err
	}
	if err := t.lo.SolveContext(ctx, field, dst.Lower); err != nil {
		return err
	}
	dst.Species = t.sp
	dst.Field = field
	dst.Lines = dst.Lines[:0]
	for i := range t.pairs {
		if err := ctx.Err(); err != nil {
			return err
		}
		p := &t.pairs[i]
		ub, lb := &t.up.blocks[p.ub], &t.lo.blocks[p.lb]
		// amp = Vu^T D Vl: eigenvector-weighted dipole elements.
		p.tmp.Mul(p.d, lb.out)
		p.amp.Mul(ub.out.T(), p.tmp)
		nu, nl := p.amp.Dims()
		sqrtNorm := math.Sqrt(t.norm)
		for a := 0; a < nu; a++ {
			for b := 0; b < nl; b++ {
				v := p.amp.At(a, b)
				s := t.norm * v * v
				if s <= tinyStrength {
					continue
				}
				dst.Lines = append(dst.Lines, Line{
					Upper:     ub.start + a,
					Lower:     lb.start + b,
					Q:         p.q,
					Offset:    ub.outE[a] - lb.outE[b] - t.sp.ReferenceShift,
					Strength:  s,
					Amplitude: sqrtNorm * v,
				})
			}
		}
	}
	return nil
}

// NewTransition solves a species at one field (gauss). For many fields use
// a TransitionSolver.
func NewTransition(sp *Species, field float64) (*Transition, error) {
	return NewTransitionContext(context.Background(), sp, field)
}

// NewTransitionContext is NewTransition that stops with ctx.Err() when
// ctx is cancelled.
func NewTransitionContext(ctx context.Context, sp *Species, field float64) (*Transition, error) {
	t, err := NewTransitionSolverContext(ctx, sp)
	if err != nil {
		return nil, err
	}
	tr := new(Transition)
	if err := t.SolveContext(ctx, field, tr); err != nil {
		return nil, err
	}
	return tr, nil
}

// LandeG returns the weak-field g-factor of hyperfine level F of a level
// with g-factor gJ and one spin I of g-factor gI (both in the same magneton),
// from the projection theorem:
//
//	g_F = g_J [F(F+1)+J(J+1)-I(I+1)]/[2F(F+1)] + g_I [F(F+1)+I(I+1)-J(J+1)]/[2F(F+1)].
//
// It returns 0 for F = 0. The first-order shift is s * g_F * mu * M * B with
// s the sign of doc.go (-1 nuclear, +1 Bohr).
func LandeG(J, I, F, gJ, gI float64) float64 {
	if F == 0 {
		return 0
	}
	ff, jj, ii := F*(F+1), J*(J+1), I*(I+1)
	return gJ*(ff+jj-ii)/(2*ff) + gI*(ff+ii-jj)/(2*ff)
}
