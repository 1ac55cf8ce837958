package interpret

import (
	"fmt"
	"math"
	"sort"
)

// FactorGrid is the Zeeman factor of one species and component tabulated
// over field angle and saturation from one ZeemanFactors run, so that a
// catalogue of features reuses the same models: the factor at any
// (saturation, theta) inside the grid is interpolated bilinearly in
// (log saturation, theta).
type FactorGrid struct {
	Thetas []float64   // rad, increasing
	LogSat []float64   // ln(R/Gamma), increasing
	Factor [][]float64 // [theta][saturation], m/s per gauss
	// RGO is R/(g Omega) of the model field B0; it scales as B0/|B|.
	RGO  [][]float64
	Good [][]bool // the model V is dI/dv-shaped there (FactorRow.GoodFit)
	B0   float64  // gauss
	// BMax is the field (gauss) up to which the factor is a constant
	// (Factors.BMax).
	BMax   float64
	Linear float64 // single-component linear-Zeeman factor, m/s per gauss
}

// NewFactorGrid arranges the rows of f by angle and saturation. Every
// angle must have the same checkpoints.
func NewFactorGrid(f *Factors) (*FactorGrid, error) {
	by := map[float64][]FactorRow{}
	for _, r := range f.Rows {
		by[r.Theta] = append(by[r.Theta], r)
	}
	g := &FactorGrid{B0: f.B0, BMax: f.BMax, Linear: f.Linear}
	for th := range by {
		g.Thetas = append(g.Thetas, th)
	}
	sort.Float64s(g.Thetas)
	if len(g.Thetas) < 2 {
		return nil, fmt.Errorf("factor grid: %d field angles (need at least 2 to interpolate)", len(g.Thetas))
	}
	ref := by[g.Thetas[0]]
	if len(ref) < 2 {
		return nil, fmt.Errorf("factor grid: %d saturation checkpoints (need at least 2)", len(ref))
	}
	for _, r := range ref {
		g.LogSat = append(g.LogSat, math.Log(r.Saturation))
	}
	for _, th := range g.Thetas {
		rows := by[th]
		if len(rows) != len(ref) {
			return nil, fmt.Errorf("factor grid: theta %.4g deg has %d checkpoints, theta %.4g deg %d", th*180/math.Pi, len(rows), g.Thetas[0]*180/math.Pi, len(ref))
		}
		fr, rg, gd := make([]float64, len(rows)), make([]float64, len(rows)), make([]bool, len(rows))
		for j, r := range rows {
			if math.Abs(math.Log(r.Saturation)-g.LogSat[j]) > 1e-3 {
				return nil, fmt.Errorf("factor grid: checkpoints differ between angles at R/Gamma %.4g", r.Saturation)
			}
			fr[j], rg[j], gd[j] = r.Factor, r.RoverGOmega, r.GoodFit
		}
		g.Factor = append(g.Factor, fr)
		g.RGO = append(g.RGO, rg)
		g.Good = append(g.Good, gd)
	}
	return g, nil
}

// SatRange is the saturation range of the grid.
func (g *FactorGrid) SatRange() (lo, hi float64) {
	return math.Exp(g.LogSat[0]), math.Exp(g.LogSat[len(g.LogSat)-1])
}

// bracket returns i and t with x = xs[i] + t (xs[i+1] - xs[i]), x clamped
// into the table; clamped reports whether it was outside.
func bracket(xs []float64, x float64) (i int, t float64, clamped bool) {
	n := len(xs)
	if x <= xs[0] {
		return 0, 0, x < xs[0]-1e-9
	}
	if x >= xs[n-1] {
		return n - 2, 1, x > xs[n-1]+1e-9
	}
	i = sort.SearchFloat64s(xs, x) - 1
	i = max(0, min(i, n-2))
	return i, (x - xs[i]) / (xs[i+1] - xs[i]), false
}

// At interpolates the factor (m/s per gauss) and R/(g Omega) at B0 at
// saturation sat and angle theta (rad). good is false when any of the four
// surrounding grid rows is a poor fit; outside when (sat, theta) lay
// outside the grid and was clamped to its edge.
func (g *FactorGrid) At(sat, theta float64) (factor, rgo float64, good, outside bool) {
	i, u, c1 := bracket(g.Thetas, theta)
	j, t, c2 := bracket(g.LogSat, math.Log(sat))
	lerp := func(z [][]float64) float64 {
		a := z[i][j] + t*(z[i][j+1]-z[i][j])
		b := z[i+1][j] + t*(z[i+1][j+1]-z[i+1][j])
		return a + u*(b-a)
	}
	// Every corner with a non-zero weight must be a good fit.
	good = (g.Good[i][j] || (1-u)*(1-t) == 0) && (g.Good[i][j+1] || (1-u)*t == 0) &&
		(g.Good[i+1][j] || u*(1-t) == 0) && (g.Good[i+1][j+1] || u*t == 0)
	return lerp(g.Factor), lerp(g.RGO), good, c1 || c2
}

// FactorSpread is the factor over a box of saturation and angle.
type FactorSpread struct {
	// Mid is the middle of the range of the factor over the box and Err
	// its 1-sigma spread, (Max - Min)/sqrt(12): the standard deviation of
	// a value anywhere in [Min, Max] with equal probability.
	Mid, Err, Min, Max float64
	// MinAbs is the smallest |factor| in the box (for upper limits).
	MinAbs float64
	// RGOMax is the largest R/(g Omega) at B0 in the box.
	RGOMax float64
	Good   bool // no poor-fit grid row in the box
	// Outside: part of the box lay outside the grid (clamped).
	Outside bool
}

// Spread samples the factor over saturation satLo..satHi (log-spaced) and
// theta thLo..thHi (rad), 9 x 7 points.
func (g *FactorGrid) Spread(satLo, satHi, thLo, thHi float64) FactorSpread {
	s := FactorSpread{Min: math.Inf(1), Max: math.Inf(-1), MinAbs: math.Inf(1), Good: true}
	const ns, nt = 9, 7
	for a := 0; a < ns; a++ {
		sat := satLo
		if satHi > satLo {
			sat = satLo * math.Pow(satHi/satLo, float64(a)/(ns-1))
		}
		for b := 0; b < nt; b++ {
			th := thLo + (thHi-thLo)*float64(b)/(nt-1)
			f, r, good, out := g.At(sat, th)
			s.Min, s.Max = math.Min(s.Min, f), math.Max(s.Max, f)
			s.MinAbs = math.Min(s.MinAbs, math.Abs(f))
			s.RGOMax = math.Max(s.RGOMax, r)
			s.Good = s.Good && good
			s.Outside = s.Outside || out
		}
	}
	s.Mid = (s.Min + s.Max) / 2
	s.Err = (s.Max - s.Min) / math.Sqrt(12)
	return s
}
