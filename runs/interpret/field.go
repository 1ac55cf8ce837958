package interpret

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Channel correlation of Hanning-smoothed spectra. Smoothing white noise
// of variance s^2 with the weights (1/4, 1/2, 1/4) leaves noise of variance
// (1/16 + 1/4 + 1/16) s^2 = 3/8 s^2 whose correlation between channels
// i and i+k is the kernel's autocorrelation over its zero-lag value:
//
//	rho_1 = (1/4 1/2 + 1/2 1/4) / (3/8) = 2/3,   rho_2 = (1/4 1/4) / (3/8) = 1/6,
//
// and zero beyond. A least-squares coefficient sum_i w_i V_i whose weights
// vary slowly over a few channels then has its variance multiplied by
// 1 + 2 rho_1 + 2 rho_2 = 8/3 (error x 1.633) against independent channels
// of the same rms; FitZeeman computes the exact factor for the weights at
// hand (the sandwich covariance) and reports it.
var HanningRho = [3]float64{1, 2.0 / 3, 1.0 / 6}

// ZeemanFitInput is one spectrum prepared for the V = A dI/dv + C I fit.
type ZeemanFitInput struct {
	Velocity []float64 // m/s, strictly increasing
	I, V     []float64
	// SigmaV is the 1-sigma noise of V per channel (same unit as V);
	// SigmaI that of I (nil: the noise of I is not propagated).
	SigmaV, SigmaI []float64
	// Window is the fitted velocity range, m/s.
	Window [2]float64
	// Hanning: the channels are correlated as after Hanning smoothing
	// (HanningRho); SigmaV is the rms of the smoothed channels.
	Hanning bool
}

// ZeemanFit is the weighted least-squares fit of V = A dI/dv + C I.
type ZeemanFit struct {
	A, AErr float64 // m/s
	C, CErr float64 // dimensionless (instrumental or hyperfine I-shaped V)
	// Inflation is the factor by which channel correlation multiplies
	// the error of A against independent channels (1 without Hanning).
	Inflation float64
	N         int     // channels in the window
	Chi2      float64 // sum of squared normalized residuals
	// Dof is the degrees of freedom of Chi2 (N - 2); with correlated
	// channels the Satterthwaite equivalent, Chi2 ~ Scale chi2(Dof).
	Dof, Scale float64
	// PValue is the probability of a chi-square at least this large for
	// a correct model (the fit residual).
	PValue float64
	// Model is A dI/dv + C I on every channel; DIdv the derivative used.
	Model, DIdv []float64
}

// RedChi2 is Chi2 / (N - 2).
func (f ZeemanFit) RedChi2() float64 { return f.Chi2 / float64(f.N-2) }

// FitZeeman fits V = A dI/dv + C I by weighted least squares over the
// window, dI/dv by five-point differences of the observed I. The errors of
// A and C are the sandwich covariance M X^T W S W X M, M = (X^T W X)^-1,
// with S the channel noise covariance (diagonal, or banded after Hanning
// smoothing), which is exact for the weighted estimator with Gaussian
// noise. The noise of I reaches the fit through dI/dv: to first order it
// adds A^2 var(dI/dv) to each channel's variance (included when SigmaI is
// given; its correlation between channels is not), and it biases A low by
// the fraction var(noise of dI/dv)/var(dI/dv) over the window (regression
// dilution), about 1e-4 for a line of peak signal-to-noise 1000 in I and
// eight channels per half-width: neglected.
func FitZeeman(in ZeemanFitInput) (ZeemanFit, error) {
	n := len(in.Velocity)
	if len(in.I) != n || len(in.V) != n || len(in.SigmaV) != n || (in.SigmaI != nil && len(in.SigmaI) != n) {
		return ZeemanFit{}, fmt.Errorf("fit: %d velocities but %d I, %d V and %d errors", n, len(in.I), len(in.V), len(in.SigmaV))
	}
	rho := []float64{1}
	if in.Hanning {
		rho = HanningRho[:]
	}
	d, dvar := derivative5(in.Velocity, in.I, rho)
	var idx []int
	for k, v := range in.Velocity {
		if v >= in.Window[0] && v <= in.Window[1] {
			idx = append(idx, k)
		}
	}
	f := ZeemanFit{N: len(idx), DIdv: d, Model: make([]float64, n)}
	if len(idx) < 5 {
		return f, fmt.Errorf("fit window %.4g..%.4g km/s holds %d channels (need at least 5)", in.Window[0]/1e3, in.Window[1]/1e3, len(idx))
	}
	sig := append([]float64(nil), in.SigmaV...)
	var cov [2][2]float64
	// Two passes: the second adds the noise of I carried into the
	// regressor, A^2 var(dI/dv), to the variance of each channel (first
	// order in that noise).
	for pass := 0; pass < 2; pass++ {
		if pass == 1 {
			if in.SigmaI == nil {
				break
			}
			for _, k := range idx {
				sig[k] = math.Sqrt(in.SigmaV[k]*in.SigmaV[k] + f.A*f.A*dvar[k]*in.SigmaI[k]*in.SigmaI[k])
			}
		}
		var err error
		if cov, err = f.solve(in, d, idx, sig, rho); err != nil {
			return f, err
		}
	}
	f.AErr, f.CErr = math.Sqrt(cov[0][0]), math.Sqrt(cov[1][1])
	for _, k := range idx {
		r := (in.V[k] - f.Model[k]) / sig[k]
		f.Chi2 += r * r
	}
	// With correlated channels the mean of Chi2 stays about N - 2 while its
	// variance grows by c = sum over lags of rho_k^2; matching both moments
	// gives Chi2 ~ c chi2(nu), nu = (N - 2)/c (Satterthwaite 1946).
	c := 1.0
	for _, r := range rho[1:] {
		c += 2 * r * r
	}
	f.Scale = c
	f.Dof = float64(f.N-2) / c
	if f.Dof > 0 {
		f.PValue = distuv.ChiSquared{K: f.Dof}.Survival(f.Chi2 / c)
	}
	return f, nil
}

// solve does one weighted fit with per-channel errors sig and returns the
// sandwich covariance of (A, C); it sets A, C, Model and Inflation.
func (f *ZeemanFit) solve(in ZeemanFitInput, d []float64, idx []int, sig, rho []float64) ([2][2]float64, error) {
	var cov [2][2]float64
	var xtwx mat.SymDense
	xtwx.ReuseAsSym(2)
	var b [2]float64
	for _, k := range idx {
		w := 1 / (sig[k] * sig[k])
		x := [2]float64{d[k], in.I[k]}
		for p := 0; p < 2; p++ {
			b[p] += w * x[p] * in.V[k]
			for q := p; q < 2; q++ {
				xtwx.SetSym(p, q, xtwx.At(p, q)+w*x[p]*x[q])
			}
		}
	}
	var m mat.Dense
	if err := m.Inverse(&xtwx); err != nil {
		return cov, fmt.Errorf("fit: dI/dv and I are degenerate over the window (%v)", err)
	}
	f.A = m.At(0, 0)*b[0] + m.At(0, 1)*b[1]
	f.C = m.At(1, 0)*b[0] + m.At(1, 1)*b[1]
	for k := range f.Model {
		f.Model[k] = f.A*d[k] + f.C*in.I[k]
	}
	// Sandwich: G = X^T W S W X with S_ij = rho_|i-j| sigma_i sigma_j, so
	// (W S W)_ij = rho_|i-j| / (sigma_i sigma_j). Window channels are
	// contiguous, so positions in idx are channel lags.
	var g [2][2]float64
	for a, k := range idx {
		for c := max(0, a-len(rho)+1); c < min(len(idx), a+len(rho)); c++ {
			j := idx[c]
			lag := j - k
			if lag < 0 {
				lag = -lag
			}
			r := rho[lag] / (sig[k] * sig[j])
			xk := [2]float64{d[k], in.I[k]}
			xj := [2]float64{d[j], in.I[j]}
			for p := 0; p < 2; p++ {
				for q := 0; q < 2; q++ {
					g[p][q] += r * xk[p] * xj[q]
				}
			}
		}
	}
	for p := 0; p < 2; p++ {
		for q := 0; q < 2; q++ {
			for s := 0; s < 2; s++ {
				for t := 0; t < 2; t++ {
					cov[p][q] += m.At(p, s) * g[s][t] * m.At(t, q)
				}
			}
		}
	}
	f.Inflation = math.Sqrt(cov[0][0] / m.At(0, 0))
	return cov, nil
}

// derivative5 returns dI/dv by the five-point central difference
// (truncation error O(h^4), against O(h^2) for three points: a line of
// eight channels per 1/e half-width would otherwise bias A by about
// 1 %) on a uniform grid, three points next to the ends and on a
// non-uniform grid (Derivative). var[k] is the variance of d[k] per unit
// variance of I for channels correlated as rho.
func derivative5(v, I []float64, rho []float64) (d, dvar []float64) {
	n := len(v)
	d = Derivative(nil, v, I)
	dvar = make([]float64, n)
	uniform := n >= 5
	h := 0.0
	if n > 1 {
		h = (v[n-1] - v[0]) / float64(n-1)
	}
	for k := 1; k < n && uniform; k++ {
		uniform = math.Abs(v[k]-v[k-1]-h) <= 1e-6*math.Abs(h)
	}
	// Stencil offsets and weights per channel; the variance of d[k] is
	// sum_ij w_i w_j rho_|i-j| (per unit variance of I).
	var off [4]int
	var wt [4]float64
	for k := range d {
		m := 0
		switch {
		case uniform && k >= 2 && k < n-2:
			d[k] = (-I[k+2] + 8*I[k+1] - 8*I[k-1] + I[k-2]) / (12 * h)
			off, wt, m = [4]int{2, 1, -1, -2}, [4]float64{-1 / (12 * h), 8 / (12 * h), -8 / (12 * h), 1 / (12 * h)}, 4
		case k > 0 && k < n-1:
			dx := v[k+1] - v[k-1]
			off, wt, m = [4]int{1, -1}, [4]float64{1 / dx, -1 / dx}, 2
		case k == 0 && n > 1:
			dx := v[1] - v[0]
			off, wt, m = [4]int{1, 0}, [4]float64{1 / dx, -1 / dx}, 2
		case n > 1:
			dx := v[n-1] - v[n-2]
			off, wt, m = [4]int{0, -1}, [4]float64{1 / dx, -1 / dx}, 2
		}
		var s float64
		for i := 0; i < m; i++ {
			for j := 0; j < m; j++ {
				if l := abs(off[i] - off[j]); l < len(rho) {
					s += wt[i] * wt[j] * rho[l]
				}
			}
		}
		dvar[k] = s
	}
	return d, dvar
}

// LineWindow chooses the fit window of a spectrum automatically: the
// contiguous run of channels around the peak of I where I exceeds three
// times sigmaI, widened on each side by half the run's width (so that the
// wings, where dI/dv is largest relative to I, are in) and at least two
// channels. It returns the window in m/s and the peak index, or an error
// when the peak is below five times sigmaI (no line).
func LineWindow(v, I []float64, sigmaI float64) ([2]float64, int, error) {
	n := len(v)
	pk := 0
	for k := range I {
		if I[k] > I[pk] {
			pk = k
		}
	}
	if !(I[pk] >= 5*sigmaI) {
		return [2]float64{}, pk, fmt.Errorf("no line: the peak of I (%.4g) is below 5 times its noise (%.4g)", I[pk], sigmaI)
	}
	lo, hi := pk, pk
	for lo > 0 && I[lo-1] > 3*sigmaI {
		lo--
	}
	for hi < n-1 && I[hi+1] > 3*sigmaI {
		hi++
	}
	pad := max(2, (hi-lo+1)/2)
	lo, hi = max(0, lo-pad), min(n-1, hi+pad)
	return [2]float64{v[lo], v[hi]}, pk, nil
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}
