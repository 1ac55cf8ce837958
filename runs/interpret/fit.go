package interpret

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/optimize"
)

// ModelSpectrum is one checkpoint of a model: sky-frame Stokes spectra in K
// on an increasing velocity grid (m/s).
type ModelSpectrum struct {
	Checkpoint int
	Saturation float64
	Velocity   []float64
	Stokes     [4][]float64
}

// Fit is the best shift and scale of a model spectrum onto an observation.
type Fit struct {
	Checkpoint int
	Saturation float64
	Shift      float64 // m/s added to the model velocities
	// Scale multiplies the model (K) to match the observation: in the
	// observation's unit per K (dimensionless when both are K). It is
	// constrained to Scale >= 0: a maser is in emission, and a negative
	// scale would fit an absorption or baseline dip with an inverted model.
	// At Scale = 0 no emission of the model fits within the allowed shifts
	// and Shift is undetermined.
	Scale float64
	// ShiftAtBound is true when the best shift lies within half a channel
	// of FitOptions.MaxShift: the optimum may lie beyond the bound.
	ShiftAtBound bool
	Chi2         [4]float64 // per Stokes parameter (0 for unused ones)
	N            int        // channels
	NUsed        int        // Stokes parameters used
	// RedChi2 is the total reduced chi-square chi2 / (N*NUsed - 3), with
	// shift, scale and checkpoint as the free parameters.
	RedChi2 float64
}

// RedChi2Of returns chi2_k / N for one Stokes parameter (a per-parameter
// figure of merit; the three fitted parameters are shared and not
// subtracted).
func (f Fit) RedChi2Of(k int) float64 { return f.Chi2[k] / float64(f.N) }

// FitOptions bound the shift search.
type FitOptions struct {
	// MaxShift bounds |shift| (m/s); 0 means no bound (the scan centres on
	// the shift that aligns the I peaks).
	MaxShift float64
}

// Fitter fits model spectra to one observation, reusing its workspace;
// it is not safe for concurrent use.
type Fitter struct {
	obs  *Observed
	opt  FitOptions
	w    [4][]float64 // 1/sigma^2
	m    [4][]float64 // model on the observed grid
	step float64      // coarse scan step, m/s
	dv   float64      // observed channel width, m/s
	// window is the half-width of the coarse scan about the peak-aligning
	// shift: three observed half-power widths (at least 8 channels).
	window float64
}

// NewFitter prepares the fit of models to obs.
func NewFitter(obs *Observed, opt FitOptions) *Fitter {
	n := obs.Channels()
	f := &Fitter{obs: obs, opt: opt}
	for k := range obs.Use {
		if !obs.Use[k] {
			continue
		}
		f.w[k] = make([]float64, n)
		for i, e := range obs.Err[k] {
			f.w[k][i] = 1 / (e * e)
		}
		f.m[k] = make([]float64, n)
	}
	span := obs.Velocity[n-1] - obs.Velocity[0]
	if f.opt.MaxShift <= 0 {
		f.opt.MaxShift = math.Inf(1)
	}
	dv := span / float64(n-1)
	f.dv = dv
	peak := 0.0
	for _, x := range obs.Stokes[0] {
		peak = math.Max(peak, x)
	}
	half := 0
	for _, x := range obs.Stokes[0] {
		if x > peak/2 {
			half++
		}
	}
	f.window = 3 * math.Max(float64(half), 8) * dv
	// Coarse step: one observed channel, at most 200 scan points.
	f.step = math.Max(dv, 2*f.window/200)
	return f
}

// sample interpolates y(x) linearly at xs (both increasing); zero outside x.
func sample(dst, x, y []float64, xs []float64, shift float64) {
	j := 0
	n := len(x)
	for i, v := range xs {
		u := v - shift
		if u < x[0] || u > x[n-1] {
			dst[i] = 0
			continue
		}
		for j < n-2 && x[j+1] < u {
			j++
		}
		for j > 0 && x[j] > u {
			j--
		}
		t := (u - x[j]) / (x[j+1] - x[j])
		dst[i] = y[j] + t*(y[j+1]-y[j])
	}
}

// eval returns the total chi-square at shift, with the chi-square of each
// Stokes parameter and the scale.
func (f *Fitter) eval(ms *ModelSpectrum, shift float64) (tot float64, chi [4]float64, scale float64) {
	o := f.obs
	for k := range o.Use {
		if o.Use[k] {
			sample(f.m[k], ms.Velocity, ms.Stokes[k], o.Velocity, shift)
		}
	}
	// Scale: weighted least squares on I under scale >= 0. chi2 is a
	// parabola in the scale, so the constrained minimum is the
	// unconstrained one clamped at 0 (non-negative least squares in 1-D).
	var sxy, sxx float64
	for i, w := range f.w[0] {
		sxy += w * o.Stokes[0][i] * f.m[0][i]
		sxx += w * f.m[0][i] * f.m[0][i]
	}
	if sxx > 0 {
		scale = math.Max(sxy/sxx, 0)
	}
	for k := range o.Use {
		if !o.Use[k] {
			continue
		}
		var c float64
		for i, w := range f.w[k] {
			r := o.Stokes[k][i] - scale*f.m[k][i]
			c += w * r * r
		}
		chi[k] = c
		tot += c
	}
	return tot, chi, scale
}

// FitSpectrum finds the shift and scale of one model checkpoint.
func (f *Fitter) FitSpectrum(ms *ModelSpectrum) Fit {
	o := f.obs
	// Coarse scan around the shift that aligns the peaks.
	pk := func(v, y []float64) float64 {
		b := 0
		for i := range y {
			if y[i] > y[b] {
				b = i
			}
		}
		return v[b]
	}
	guess := pk(o.Velocity, o.Stokes[0]) - pk(ms.Velocity, ms.Stokes[0])
	clamp := func(x float64) float64 { return math.Max(-f.opt.MaxShift, math.Min(f.opt.MaxShift, x)) }
	best, bestChi := clamp(guess), math.Inf(1)
	lo, hi := clamp(guess-f.window), clamp(guess+f.window)
	for x := lo; x <= hi+f.step/2; x += f.step {
		if c, _, _ := f.eval(ms, x); c < bestChi {
			best, bestChi = x, c
		}
	}
	// Refine with Nelder-Mead (1-D), the shift held inside the bound.
	prob := optimize.Problem{Func: func(x []float64) float64 {
		if math.Abs(x[0]) > f.opt.MaxShift {
			return math.Inf(1)
		}
		c, _, _ := f.eval(ms, x[0])
		return c
	}}
	res, err := optimize.Minimize(prob, []float64{best}, &optimize.Settings{
		FuncEvaluations: 200,
		Converger:       &optimize.FunctionConverge{Absolute: 1e-9, Relative: 1e-9, Iterations: 20},
	}, &optimize.NelderMead{SimplexSize: f.step / 2})
	if err == nil && res != nil && res.F < bestChi {
		best = res.X[0]
	}
	tot, chi, scale := f.eval(ms, best)
	nu := 0
	for _, u := range o.Use {
		if u {
			nu++
		}
	}
	fit := Fit{Checkpoint: ms.Checkpoint, Saturation: ms.Saturation, Shift: best, Scale: scale, Chi2: chi, N: o.Channels(), NUsed: nu,
		ShiftAtBound: scale > 0 && !math.IsInf(f.opt.MaxShift, 1) && math.Abs(best) >= f.opt.MaxShift-f.dv/2}
	fit.RedChi2 = tot / float64(fit.N*nu-3)
	return fit
}

// BestCheckpoint fits every checkpoint of a model and returns the fit with
// the lowest total chi-square, and all fits in checkpoint order.
func (f *Fitter) BestCheckpoint(ms []ModelSpectrum) (Fit, []Fit) {
	all := make([]Fit, len(ms))
	bi := -1
	for i := range ms {
		all[i] = f.FitSpectrum(&ms[i])
		if bi < 0 || all[i].RedChi2 < all[bi].RedChi2 {
			bi = i
		}
	}
	if bi < 0 {
		return Fit{RedChi2: math.NaN()}, nil
	}
	return all[bi], all
}

// Ranked is one model of a run directory with its best fit.
type Ranked struct {
	Model *RunModel
	Best  Fit
}

// Rank fits every model and sorts them by the total reduced chi-square of
// their best checkpoint (ties keep model order).
func Rank(obs *Observed, models []RunModel, opt FitOptions) []Ranked {
	f := NewFitter(obs, opt)
	out := make([]Ranked, 0, len(models))
	for i := range models {
		b, _ := f.BestCheckpoint(models[i].Spectra)
		out = append(out, Ranked{Model: &models[i], Best: b})
	}
	sort.SliceStable(out, func(a, b int) bool {
		x, y := out[a].Best.RedChi2, out[b].Best.RedChi2
		if math.IsNaN(y) {
			return !math.IsNaN(x)
		}
		return x < y
	})
	return out
}
