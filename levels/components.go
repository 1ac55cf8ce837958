package levels

import (
	"context"
	"math"
	"sort"
)

// Scan of LinearUpTo: fields from linScanFrom gauss upward by factors of
// sqrt(2) to linScanTo; the 1 % crossing is placed by log-log interpolation
// between the bracketing fields (exact for a power-law deviation, which is
// what second-order perturbation gives: deviation proportional to B).
const (
	linScanFrom = 1e-6
	linScanTo   = 1e6
	linTol      = 0.01
)

// Components returns the zero-field hyperfine components of a species with
// relative strengths (summing to 1 over all components, for equal upper
// populations), offsets, weak-field effective Zeeman splittings and the
// field up to which the splitting stays linear within 1 %. Components are
// sorted by offset.
//
// A component is a pair of zero-field multiplets (F_u, F1_u) -> (F_l, F1_l).
// Its strength is the sum of S_ab over its state pairs divided by the number
// of upper states. SplitHzPerG is the strength-weighted first-order shift of
// its sigma+ (q = +1) lines minus that of its pi lines, from the
// Hellmann-Feynman slopes of the zero-field eigenstates. LinearUpTo is the
// field at which |centroid(q) - centroid(0) - q*SplitHzPerG*B| first exceeds
// 1 % of |SplitHzPerG*B| for q = +1 or -1, the centroids being strength
// weighted over the lines carrying the component's labels at that field; it
// is +Inf when no deviation is found up to 1e6 G (e.g. no hyperfine
// structure), and 0 when the component has no linear splitting.
func Components(sp *Species) ([]Component, error) {
	return ComponentsContext(context.Background(), sp)
}

// ComponentsContext is Components that stops with ctx.Err() when ctx is
// cancelled (the linearity scan solves the species at about 80 fields).
func ComponentsContext(ctx context.Context, sp *Species) ([]Component, error) {
	ts, err := NewTransitionSolverContext(ctx, sp)
	if err != nil {
		return nil, err
	}
	var tr Transition
	if err := ts.SolveContext(ctx, 0, &tr); err != nil {
		return nil, err
	}
	mu, ml := ts.up.Multiplets(), ts.lo.Multiplets()
	nu := float64(len(tr.Upper.States))
	index := make([]int, len(mu)*len(ml))
	for i := range index {
		index[i] = -1
	}
	type acc struct {
		s, sum [3]float64 // per q+1: strength, strength*slope
	}
	var comps []Component
	var accs []acc
	for _, ln := range tr.Lines {
		u, l := &tr.Upper.States[ln.Upper], &tr.Lower.States[ln.Lower]
		key := u.Multiplet*len(ml) + l.Multiplet
		ci := index[key]
		if ci < 0 {
			ci = len(comps)
			index[key] = ci
			comps = append(comps, Component{
				Fu: u.F, Fl: l.F, F1u: u.F1, F1l: l.F1,
				Offset: mu[u.Multiplet].Energy - ml[l.Multiplet].Energy - sp.ReferenceShift,
			})
			accs = append(accs, acc{})
		}
		comps[ci].Strength += ln.Strength / nu
		slope := ts.up.FirstOrder(u) - ts.lo.FirstOrder(l)
		accs[ci].s[ln.Q+1] += ln.Strength
		accs[ci].sum[ln.Q+1] += ln.Strength * slope
	}
	cent := func(s, sum float64) float64 {
		if s == 0 {
			return 0
		}
		return sum / s
	}
	for ci := range comps {
		a := accs[ci]
		comps[ci].SplitHzPerG = cent(a.s[2], a.sum[2]) - cent(a.s[1], a.sum[1])
		comps[ci].SplitKmsPerG = SpeedOfLight / 1e3 * comps[ci].SplitHzPerG / sp.Frequency
	}
	if err := linearUpTo(ctx, ts, comps, index, len(ml)); err != nil {
		return nil, err
	}
	sort.SliceStable(comps, func(i, j int) bool { return comps[i].Offset < comps[j].Offset })
	return comps, nil
}

func linearUpTo(ctx context.Context, ts *TransitionSolver, comps []Component, index []int, nml int) error {
	n := len(comps)
	done := make([]bool, n)
	prevB := make([]float64, n)
	prevD := make([]float64, n)
	left := 0
	for i := range comps {
		if comps[i].SplitHzPerG == 0 {
			done[i] = true
			comps[i].LinearUpTo = 0
			continue
		}
		comps[i].LinearUpTo = math.Inf(1)
		left++
	}
	var s, sum [][3]float64
	s = make([][3]float64, n)
	sum = make([][3]float64, n)
	var tr Transition
	mu, ml := ts.up.Multiplets(), ts.lo.Multiplets()
	for k := 0; left > 0; k++ {
		B := linScanFrom * math.Pow(2, float64(k)/2)
		if B > linScanTo*(1+1e-9) {
			break
		}
		if err := ts.SolveContext(ctx, B, &tr); err != nil {
			return ctx.Err() // nil for a solve failure: the scan ends there
		}
		for i := range s {
			s[i], sum[i] = [3]float64{}, [3]float64{}
		}
		for _, ln := range tr.Lines {
			u, l := &tr.Upper.States[ln.Upper], &tr.Lower.States[ln.Lower]
			ci := index[u.Multiplet*nml+l.Multiplet]
			if ci < 0 || done[ci] {
				continue
			}
			shift := ln.Offset + ts.sp.ReferenceShift - (mu[u.Multiplet].Energy - ml[l.Multiplet].Energy)
			s[ci][ln.Q+1] += ln.Strength
			sum[ci][ln.Q+1] += ln.Strength * shift
		}
		for ci := range comps {
			if done[ci] {
				continue
			}
			c0 := 0.0
			if s[ci][1] > 0 {
				c0 = sum[ci][1] / s[ci][1]
			}
			lin := comps[ci].SplitHzPerG * B
			dev := 0.0
			for _, q := range []int{-1, 1} {
				if s[ci][q+1] == 0 {
					continue
				}
				c := sum[ci][q+1]/s[ci][q+1] - c0
				dev = math.Max(dev, math.Abs(c-float64(q)*lin)/math.Abs(lin))
			}
			if dev >= linTol {
				done[ci] = true
				left--
				switch {
				case k == 0:
					comps[ci].LinearUpTo = B
				case prevD[ci] <= 0:
					comps[ci].LinearUpTo = prevB[ci]
				default:
					f := (math.Log(linTol) - math.Log(prevD[ci])) / (math.Log(dev) - math.Log(prevD[ci]))
					comps[ci].LinearUpTo = math.Exp(math.Log(prevB[ci]) + f*(math.Log(B)-math.Log(prevB[ci])))
				}
				continue
			}
			prevB[ci], prevD[ci] = B, dev
		}
	}
	return nil
}
