package interpret

import "math"

// Derivative writes the central-difference derivative dy/dx of samples on
// a strictly increasing (not necessarily uniform) grid into dst, one-sided
// at the ends, and returns dst. dst may be nil.
func Derivative(dst, x, y []float64) []float64 {
	n := len(x)
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	if n < 2 {
		for i := range dst {
			dst[i] = 0
		}
		return dst
	}
	dst[0] = (y[1] - y[0]) / (x[1] - x[0])
	dst[n-1] = (y[n-1] - y[n-2]) / (x[n-1] - x[n-2])
	for i := 1; i < n-1; i++ {
		dst[i] = (y[i+1] - y[i-1]) / (x[i+1] - x[i-1])
	}
	return dst
}

// FitVdI fits V = A dI/dv + C I by linear least squares over the channels
// whose velocity lies in [lo, hi]. A (in the unit of v) is the Zeeman
// term; C (dimensionless) absorbs a V profile shaped like I, which a
// hyperfine-mixed component produces when its sigma+ and sigma- strengths
// differ (and which observers fit for instrumental leakage: common
// practice). It returns A, C, the relative rms residual
// rms(V - A dI/dv - C I)/rms(V) and the number of channels. dIdv must be
// the derivative of I on the grid v (Derivative). With fewer than two
// usable channels or a degenerate system, A and C are NaN.
func FitVdI(v, I, dIdv, V []float64, lo, hi float64) (a, c, resid float64, n int) {
	// Normal equations of a two-parameter fit, solved directly (2x2).
	var sdd, sdi, sii, sdv, siv, svv float64
	for k, x := range v {
		if x < lo || x > hi {
			continue
		}
		d, i, w := dIdv[k], I[k], V[k]
		sdd += d * d
		sdi += d * i
		sii += i * i
		sdv += d * w
		siv += i * w
		svv += w * w
		n++
	}
	det := sdd*sii - sdi*sdi
	if n < 2 || !(math.Abs(det) > 1e-14*sdd*sii) {
		return math.NaN(), math.NaN(), math.NaN(), n
	}
	a = (sdv*sii - siv*sdi) / det
	c = (siv*sdd - sdv*sdi) / det
	// sum (V - a d - c i)^2 = svv - a sdv - c siv at the solution.
	res := math.Max(svv-a*sdv-c*siv, 0)
	if svv == 0 {
		return a, c, 0, n
	}
	return a, c, math.Sqrt(res / svv), n
}
