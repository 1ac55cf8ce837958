package interpret

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/samplemv"
)

// Posterior of compare by Markov chain Monte Carlo over the interpolated
// chi-square surface.
//
// The run's grid must be regular: every combination of the swept
// parameter values present once, and every model with the same checkpoint
// saturations. The total chi-square is interpolated multilinearly between
// grid points (the saturation in log R/Gamma), the likelihood is
// exp(-chi2/(2 s)) with s as in Intervals, and the prior is uniform inside
// the grid's box and zero outside: the posterior knows nothing beyond the
// grid, and EdgeFraction says how much of it piles up in the outermost
// cells, where the grid cuts it. gonum's Metropolis-Hastings sampler with
// a tuned Gaussian proposal draws the samples.

// PosteriorParam is the posterior summary of one parameter.
type PosteriorParam struct {
	Name, Unit string
	// Median and the central 68 % and 95 % credible intervals.
	Median         float64
	Lo, Hi         [2]float64
	GridLo, GridHi float64
	// EdgeFraction is the fraction of samples within half a grid step of
	// either end of this axis: above EdgeWarn the grid edge cuts the
	// posterior.
	EdgeFraction float64
	// Unresolved: the 95 % interval is narrower than one grid step, so
	// its shape comes from the interpolation, not the data.
	Unresolved bool
}

// EdgeWarn is the edge fraction above which a posterior is reported as
// cut by the grid (common practice: a few per cent).
const EdgeWarn = 0.05

// PosteriorSpec sets the chain.
type PosteriorSpec struct {
	Samples, BurnIn, Thin int
	Seed                  uint64
}

// DefaultPosterior is 4000 samples after 2000 burn-in, every 5th kept.
var DefaultPosterior = PosteriorSpec{Samples: 4000, BurnIn: 2000, Thin: 5, Seed: 1}

// surface is the chi-square on a regular grid.
type surface struct {
	axes  [][]float64 // per axis, increasing
	chi2  []float64   // row-major over axes
	scale float64
}

func (s *surface) LogProb(x []float64) float64 {
	// Multilinear interpolation over the 2^d corners of the cell.
	d := len(s.axes)
	idx := make([]int, d)
	t := make([]float64, d)
	for k, ax := range s.axes {
		if x[k] < ax[0] || x[k] > ax[len(ax)-1] {
			return math.Inf(-1)
		}
		i := sort.SearchFloat64s(ax, x[k]) - 1
		i = max(0, min(i, len(ax)-2))
		idx[k], t[k] = i, (x[k]-ax[i])/(ax[i+1]-ax[i])
	}
	var c float64
	for corner := 0; corner < 1<<d; corner++ {
		w, off, stride := 1.0, 0, 1
		for k := d - 1; k >= 0; k-- {
			j := idx[k]
			if corner>>k&1 == 1 {
				j++
				w *= t[k]
			} else {
				w *= 1 - t[k]
			}
			off += j * stride
			stride *= len(s.axes[k])
		}
		if w != 0 {
			c += w * s.chi2[off]
		}
	}
	return -c / (2 * s.scale)
}

// PosteriorMCMC samples the posterior of every swept parameter and the
// saturation. It fails, saying why, when the grid is not regular.
func PosteriorMCMC(models []RunModel, surf [][]Fit, spec PosteriorSpec) ([]PosteriorParam, error) {
	if len(models) == 0 {
		return nil, fmt.Errorf("no models")
	}
	// Axes: swept parameters, then log saturation.
	var names, unitsOf []string
	var cols []int
	var axes [][]float64
	for j, p := range models[0].Params {
		seen := map[float64]bool{}
		for _, m := range models {
			if j < len(m.Params) {
				seen[m.Params[j].Value] = true
			}
		}
		if len(seen) < 2 {
			continue
		}
		var ax []float64
		for v := range seen {
			ax = append(ax, v)
		}
		sort.Float64s(ax)
		names, unitsOf, cols, axes = append(names, p.Name), append(unitsOf, p.Unit), append(cols, j), append(axes, ax)
	}
	var sat []float64
	for _, f := range surf[0] {
		sat = append(sat, math.Log(f.Saturation))
	}
	if len(sat) < 2 {
		return nil, fmt.Errorf("fewer than two checkpoints: no saturation axis")
	}
	for i := range surf {
		if len(surf[i]) != len(sat) {
			return nil, fmt.Errorf("model %s has %d checkpoints, %s %d: the grid is not regular in saturation, no posterior", models[i].Name, len(surf[i]), models[0].Name, len(sat))
		}
		for k, f := range surf[i] {
			if math.Abs(math.Log(f.Saturation)-sat[k]) > 1e-3 {
				return nil, fmt.Errorf("model %s: checkpoint %d at R/Gamma %.4g, not %.4g: the grid is not regular in saturation, no posterior", models[i].Name, k, f.Saturation, math.Exp(sat[k]))
			}
		}
	}
	if !sort.Float64sAreSorted(sat) {
		return nil, fmt.Errorf("checkpoints not in increasing saturation")
	}
	names, unitsOf, axes = append(names, "saturation"), append(unitsOf, "R/Gamma"), append(axes, sat)
	size := 1
	for _, ax := range axes {
		size *= len(ax)
	}
	s := &surface{axes: axes, chi2: make([]float64, size), scale: 1}
	filled := make([]bool, size)
	best, bestAt := math.Inf(1), 0
	np := len(cols)
	for i, m := range models {
		off, stride := 0, len(sat)
		for k := np - 1; k >= 0; k-- {
			j := sort.SearchFloat64s(axes[k], m.Params[cols[k]].Value)
			off += j * stride
			stride *= len(axes[k])
		}
		for c, f := range surf[i] {
			if filled[off+c] {
				return nil, fmt.Errorf("two models (one is %s) share the same parameter values: the grid is not regular, no posterior", m.Name)
			}
			filled[off+c] = true
			s.chi2[off+c] = totalChi2(f)
			if s.chi2[off+c] < best {
				best, bestAt = s.chi2[off+c], off+c
				if f.RedChi2 > 1 {
					s.scale = f.RedChi2
				} else {
					s.scale = 1
				}
			}
		}
	}
	for _, f := range filled {
		if !f {
			return nil, fmt.Errorf("the run's grid is not a full product of its parameter values (e.g. a Latin hypercube): no interpolated posterior")
		}
	}
	// Start at the best grid point. The Gaussian proposal is tuned by
	// three pilot chains to 2.38/sqrt(d) times each axis's posterior
	// standard deviation (the optimal random-walk scale of Roberts, Gelman
	// & Gilks 1997), starting from a tenth of the axis range and kept
	// between a fiftieth of a grid step and the range.
	d := len(axes)
	init := make([]float64, d)
	width := make([]float64, d)
	lo, hi := make([]float64, d), make([]float64, d)
	rem := bestAt
	for k := d - 1; k >= 0; k-- {
		n := len(axes[k])
		init[k] = axes[k][rem%n]
		rem /= n
		rng := axes[k][n-1] - axes[k][0]
		width[k] = rng / 10
		lo[k], hi[k] = rng/float64(n-1)/50, rng
	}
	src := rand.NewPCG(spec.Seed, 0x6669656c64)
	chain := func(n, burn, thin int) (*mat.Dense, error) {
		sig := mat.NewSymDense(d, nil)
		for k := range width {
			sig.SetSym(k, k, width[k]*width[k])
		}
		prop, ok := samplemv.NewProposalNormal(sig, src)
		if !ok {
			return nil, fmt.Errorf("proposal covariance not positive definite")
		}
		batch := mat.NewDense(n, d, nil)
		samplemv.MetropolisHastingser{Initial: init, Target: s, Proposal: prop, Src: src, BurnIn: burn, Rate: thin}.Sample(batch)
		return batch, nil
	}
	pilot := make([]float64, 1000)
	for range 3 {
		b, err := chain(len(pilot), 200, 1)
		if err != nil {
			return nil, err
		}
		for k := range width {
			mat.Col(pilot, k, b)
			width[k] = math.Min(hi[k], math.Max(lo[k], 2.38/math.Sqrt(float64(d))*stat.StdDev(pilot, nil)))
		}
	}
	batch, err := chain(spec.Samples, spec.BurnIn, spec.Thin)
	if err != nil {
		return nil, err
	}
	out := make([]PosteriorParam, d)
	col := make([]float64, spec.Samples)
	for k := range axes {
		mat.Col(col, k, batch)
		sort.Float64s(col)
		q := func(p float64) float64 { return stat.Quantile(p, stat.Empirical, col, nil) }
		ax := axes[k]
		n := len(ax)
		edge := 0
		for _, x := range col {
			if x <= (ax[0]+ax[1])/2 || x >= (ax[n-2]+ax[n-1])/2 {
				edge++
			}
		}
		minStep := math.Inf(1)
		for i := 1; i < n; i++ {
			minStep = math.Min(minStep, ax[i]-ax[i-1])
		}
		conv := func(x float64) float64 { return x }
		if k == d-1 {
			conv = math.Exp
		}
		out[k] = PosteriorParam{Name: names[k], Unit: unitsOf[k], Median: conv(q(0.5)),
			Lo:     [2]float64{conv(q(0.15865)), conv(q(0.02275))},
			Hi:     [2]float64{conv(q(0.84135)), conv(q(0.97725))},
			GridLo: conv(ax[0]), GridHi: conv(ax[n-1]), EdgeFraction: float64(edge) / float64(len(col)),
			Unresolved: q(0.97725)-q(0.02275) < minStep}
	}
	return out, nil
}

// Statement writes a posterior summary as a sentence.
func (p PosteriorParam) Statement() string {
	u := ""
	if p.Unit != "" {
		u = " " + p.Unit
	}
	s := fmt.Sprintf("%s: median %.4g%s, 68 %%: %.4g..%.4g, 95 %%: %.4g..%.4g", p.Name, p.Median, u, p.Lo[0], p.Hi[0], p.Lo[1], p.Hi[1])
	if p.EdgeFraction > EdgeWarn {
		s += fmt.Sprintf("; %.0f %% of the samples lie within half a grid step of its ends (grid %.4g..%.4g%s): the grid cuts the posterior, widen it", 100*p.EdgeFraction, p.GridLo, p.GridHi, u)
	}
	if p.Unresolved {
		s += "; narrower than one grid step: resolution-limited, refine the grid around the median"
	}
	return s
}
