package interpret

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// SynthLine describes an invented single-feature spectrum for tests and
// demonstrations: a Gaussian line in I and the thin-line Zeeman V,
//
//	I(v) = Peak exp(-((v - Center)/Width)^2),
//	V(v) = A dI/dv + C I(v),  A = Factor B cos(theta),
//
// sampled on Channels channels of width Step from Start (m/s), with
// independent Gaussian noise of rms NoiseI, NoiseV per channel. With
// Hanning the noise is smoothed with (1/4, 1/2, 1/4) and rescaled so that
// its rms per channel stays NoiseI, NoiseV (channels then correlated as
// HanningRho).
type SynthLine struct {
	Start, Step    float64 // m/s
	Channels       int
	Peak           float64 // K
	Center, Width  float64 // m/s; Width is the 1/e half-width
	B, Theta       float64 // gauss, rad
	Factor         float64 // m/s per gauss (V = Factor B cos(theta) dI/dv)
	C              float64 // I-shaped part of V
	NoiseI, NoiseV float64 // K
	Hanning        bool
}

// Draw makes one noisy spectrum; errors are set to the noise rms.
func (s SynthLine) Draw(rng *rand.Rand) (*Observed, error) {
	if s.Channels < 8 || !(s.Step > 0) || !(s.Width > 0) {
		return nil, fmt.Errorf("synthetic line: %d channels of %g m/s, width %g m/s (need >= 8 channels, positive step and width)", s.Channels, s.Step, s.Width)
	}
	n := s.Channels
	o := &Observed{File: "synthetic", Velocity: make([]float64, n), Unit: "K"}
	o.Use[0], o.Use[3] = true, true
	I, V := make([]float64, n), make([]float64, n)
	a := s.Factor * s.B * math.Cos(s.Theta)
	for k := range I {
		v := s.Start + float64(k)*s.Step
		o.Velocity[k] = v
		x := (v - s.Center) / s.Width
		I[k] = s.Peak * math.Exp(-x*x)
		// dI/dv analytically: the relation holds for the true line.
		V[k] = a*(-2*x/s.Width)*I[k] + s.C*I[k]
	}
	for k, sig := range [2]float64{s.NoiseI, s.NoiseV} {
		e := s.noise(rng)
		dst := I
		if k == 1 {
			dst = V
		}
		for i := range dst {
			dst[i] += sig * e[i]
		}
	}
	o.Stokes[0], o.Stokes[3] = I, V
	for _, k := range []int{0, 3} {
		sig := s.NoiseI
		if k == 3 {
			sig = s.NoiseV
		}
		o.Err[k] = make([]float64, n)
		for i := range o.Err[k] {
			o.Err[k][i] = sig
		}
		o.ErrFrom[k] = "synthetic noise rms"
	}
	return o, nil
}

// noise draws unit-rms noise, Hanning-smoothed when asked.
func (s SynthLine) noise(rng *rand.Rand) []float64 {
	n := s.Channels
	if !s.Hanning {
		e := make([]float64, n)
		for i := range e {
			e[i] = rng.NormFloat64()
		}
		return e
	}
	w := make([]float64, n+2)
	for i := range w {
		w[i] = rng.NormFloat64()
	}
	e := make([]float64, n)
	norm := 1 / math.Sqrt(3.0/8)
	for i := range e {
		e[i] = norm * (0.25*w[i] + 0.5*w[i+1] + 0.25*w[i+2])
	}
	return e
}
