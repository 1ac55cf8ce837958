package interpret

import (
	"fmt"
	"math"
	"sort"
)

// Confidence intervals from the chi-square surface of a comparison.
//
// Every model of a run directory and every checkpoint of it is a point of
// the grid (the swept parameters, and the saturation). For one parameter,
// the profile chi2_p(x) is the smallest total chi-square over all grid
// points with that parameter value x; Delta(x) = (chi2_p(x) - chi2_min) / s
// is compared with 1 (68.3 %) and 4 (95.4 %), the levels for one
// parameter of interest (Wilks' theorem; e.g. Press et al., Numerical
// Recipes, 15.6). s = max(1, reduced chi-square of the best fit) widens
// the intervals when the best model does not fit to within the errors
// (the Birge ratio; common practice). Between grid points sqrt(Delta) is
// interpolated linearly (the saturation in log R/Gamma), which is exact
// for a parabolic profile with its minimum on a grid point, and the
// interval ends where the interpolation crosses the level. An interval that
// reaches the edge of the grid is open there: the data do not bound the
// parameter inside the grid on that side.

// ParamInterval is the interval of one parameter.
type ParamInterval struct {
	Name, Unit string
	Best       float64 // grid value at the smallest chi-square
	// Lo, Hi: [0] the 68 % interval, [1] the 95 % interval.
	Lo, Hi [2]float64
	// OpenLo, OpenHi: the interval reaches the grid edge on that side.
	OpenLo, OpenHi [2]bool
	GridLo, GridHi float64
	Points         int // distinct grid values
	// Resolved: a grid point other than the best lies inside the 68 %
	// interval. Otherwise the interval ends are interpolated within one
	// grid step of the best value and the grid is too coarse to resolve
	// them.
	Resolved bool
	// Statement is a plain sentence on what the data say.
	Statement string
}

// Levels are the Delta chi-square levels of the 68 % and 95 % intervals.
var Levels = [2]float64{1, 4}

// FitSurface fits every checkpoint of every model (the chi-square surface).
func FitSurface(obs *Observed, models []RunModel, opt FitOptions) [][]Fit {
	f := NewFitter(obs, opt)
	out := make([][]Fit, len(models))
	for i := range models {
		_, out[i] = f.BestCheckpoint(models[i].Spectra)
	}
	return out
}

func totalChi2(f Fit) float64 {
	var s float64
	for _, c := range f.Chi2 {
		s += c
	}
	return s
}

// Intervals returns the 68 % and 95 % intervals of every parameter column
// of the run (B_mG, theta_deg, ... as the run's summary names them) and of
// the saturation R/Gamma, from the surface of FitSurface.
func Intervals(models []RunModel, surf [][]Fit) []ParamInterval {
	best, bestRed := math.Inf(1), math.NaN()
	for _, fs := range surf {
		for _, f := range fs {
			if c := totalChi2(f); c < best {
				best, bestRed = c, f.RedChi2
			}
		}
	}
	if math.IsInf(best, 1) {
		return nil
	}
	s := 1.0
	if bestRed > 1 {
		s = bestRed
	}
	var out []ParamInterval
	if len(models) > 0 {
		for j, p := range models[0].Params {
			prof := map[float64]float64{}
			for i, m := range models {
				if j >= len(m.Params) {
					continue
				}
				x := m.Params[j].Value
				for _, f := range surf[i] {
					c := totalChi2(f)
					if v, ok := prof[x]; !ok || c < v {
						prof[x] = c
					}
				}
			}
			out = append(out, profileInterval(p.Name, p.Unit, prof, best, s, false))
		}
	}
	// Saturation: checkpoints of different models are matched in log R/Gamma
	// to 1e-3.
	byKey, logOf := map[float64]float64{}, map[float64]float64{}
	for i := range models {
		for _, f := range surf[i] {
			lx := math.Log(f.Saturation)
			key := math.Round(lx * 1e3)
			if _, ok := logOf[key]; !ok {
				logOf[key] = lx
			}
			c := totalChi2(f)
			if v, ok := byKey[key]; !ok || c < v {
				byKey[key] = c
			}
		}
	}
	prof := map[float64]float64{}
	for k, c := range byKey {
		prof[logOf[k]] = c
	}
	out = append(out, profileInterval("saturation", "R/Gamma", prof, best, s, true))
	return out
}

// profileInterval turns a profile (value -> smallest chi-square) into
// intervals. logx: the keys are log values, reported as exp.
func profileInterval(name, unit string, prof map[float64]float64, best, s float64, logx bool) ParamInterval {
	xs := make([]float64, 0, len(prof))
	for x := range prof {
		xs = append(xs, x)
	}
	sort.Float64s(xs)
	// r = sqrt(Delta chi2) is interpolated linearly: it is exactly linear
	// on either side of the minimum of a parabolic profile (a Gaussian
	// likelihood) whose minimum lies on a grid point.
	d := make([]float64, len(xs))
	ib := 0
	for k, x := range xs {
		d[k] = math.Sqrt(math.Max(0, (prof[x]-best)/s))
		if d[k] < d[ib] {
			ib = k
		}
	}
	inside := 0
	for _, r := range d {
		if r <= 1 {
			inside++
		}
	}
	conv := func(x float64) float64 {
		if logx {
			return math.Exp(x)
		}
		return x
	}
	iv := ParamInterval{Name: name, Unit: unit, Best: conv(xs[ib]), GridLo: conv(xs[0]), GridHi: conv(xs[len(xs)-1]), Points: len(xs)}
	iv.Resolved = inside > 1 || iv.Points < 2
	for l, lev2 := range Levels {
		lev := math.Sqrt(lev2)
		lo, hi := xs[0], xs[len(xs)-1]
		iv.OpenLo[l], iv.OpenHi[l] = true, true
		for k := ib; k > 0; k-- {
			if d[k-1] > lev {
				t := (lev - d[k]) / (d[k-1] - d[k])
				lo, iv.OpenLo[l] = xs[k]+t*(xs[k-1]-xs[k]), false
				break
			}
		}
		for k := ib; k < len(xs)-1; k++ {
			if d[k+1] > lev {
				t := (lev - d[k]) / (d[k+1] - d[k])
				hi, iv.OpenHi[l] = xs[k]+t*(xs[k+1]-xs[k]), false
				break
			}
		}
		iv.Lo[l], iv.Hi[l] = conv(lo), conv(hi)
	}
	iv.Statement = intervalStatement(iv)
	return iv
}

func intervalStatement(iv ParamInterval) string {
	u := ""
	if iv.Unit != "" {
		u = " " + iv.Unit
	}
	g := func(x float64) string { return fmt.Sprintf("%.4g", x) }
	switch {
	case iv.Points < 2:
		return fmt.Sprintf("%s is fixed at %s%s in this run: not fitted", iv.Name, g(iv.Best), u)
	case iv.OpenLo[0] && iv.OpenHi[0]:
		return fmt.Sprintf("%s is not constrained: every grid value %s..%s%s fits within Delta chi2 = 1 of the best", iv.Name, g(iv.GridLo), g(iv.GridHi), u)
	case iv.OpenLo[0]:
		return fmt.Sprintf("%s <= %s%s (68 %%), <= %s%s (95 %%); no lower bound inside the grid (from %s%s)", iv.Name, g(iv.Hi[0]), u, g(iv.Hi[1]), u, g(iv.GridLo), u)
	case iv.OpenHi[0]:
		return fmt.Sprintf("%s >= %s%s (68 %%), >= %s%s (95 %%); no upper bound inside the grid (to %s%s)", iv.Name, g(iv.Lo[0]), u, g(iv.Lo[1]), u, g(iv.GridHi), u)
	}
	s := fmt.Sprintf("%s = %s%s, 68 %%: %s..%s, 95 %%: %s..%s", iv.Name, g(iv.Best), u, g(iv.Lo[0]), g(iv.Hi[0]), g(iv.Lo[1]), g(iv.Hi[1]))
	if iv.OpenLo[1] || iv.OpenHi[1] {
		s += " (the 95 % interval reaches the grid edge)"
	}
	if !iv.Resolved {
		s += "; narrower than the grid spacing: the ends are interpolated, refine the grid around the best value"
	}
	return s
}
