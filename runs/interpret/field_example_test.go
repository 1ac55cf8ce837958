package interpret_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"maserpol/runs/interpret"
)

// ExampleGKKTheta infers the field angle from a measured m_l with the
// saturated relation of Goldreich, Keeley & Kwan (1973). Below m_l = 1/3
// both branches exist and the orientation is ambiguous.
func ExampleGKKTheta() {
	for _, ml := range []float64{0.6, 0.2} {
		e, err := interpret.GKKTheta(ml, 0.02, interpret.AnyBranch)
		if err != nil {
			fmt.Println(err)
			continue
		}
		fmt.Printf("m_l = %.2f: theta = %.1f deg, field %s to the EVPA, ambiguous %v, other branch %.1f deg\n",
			ml, e.Theta*180/math.Pi, e.Orientation, e.Ambiguous, e.Alt*180/math.Pi)
	}
	// Output:
	// m_l = 0.60: theta = 40.2 deg, field parallel to the EVPA, ambiguous false, other branch NaN deg
	// m_l = 0.20: theta = 66.0 deg, field perpendicular to the EVPA, ambiguous true, other branch 48.2 deg
}

// ExampleFitZeeman fits V = A dI/dv + C I to an invented line with
// Hanning-smoothed noise; the error of A is inflated for the channel
// correlation.
func ExampleFitZeeman() {
	s := interpret.SynthLine{Start: -8e3, Step: 100, Channels: 161, Peak: 20, Width: 1000, B: 10, Factor: 0.8214, NoiseI: 0.01, NoiseV: 0.01, Hanning: true}
	o, _ := s.Draw(rand.New(rand.NewPCG(1, 2)))
	f, err := interpret.FitZeeman(interpret.ZeemanFitInput{Velocity: o.Velocity, I: o.Stokes[0], V: o.Stokes[3], SigmaV: o.Err[3], SigmaI: o.Err[0], Window: [2]float64{-3e3, 3e3}, Hanning: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("A = %.2f +/- %.2f m/s (true %.2f), error inflation %.2f\n", f.A, f.AErr, s.Factor*s.B, f.Inflation)
	// Output:
	// A = 8.42 +/- 0.23 m/s (true 8.21), error inflation 1.62
}

// BenchmarkFitZeeman is one feature's V fit (161 channels, Hanning).
func BenchmarkFitZeeman(b *testing.B) {
	s := interpret.SynthLine{Start: -8e3, Step: 100, Channels: 161, Peak: 20, Width: 1000, B: 10, Factor: 0.8214, NoiseI: 0.01, NoiseV: 0.01, Hanning: true}
	o, _ := s.Draw(rand.New(rand.NewPCG(1, 2)))
	in := interpret.ZeemanFitInput{Velocity: o.Velocity, I: o.Stokes[0], V: o.Stokes[3], SigmaV: o.Err[3], SigmaI: o.Err[0], Window: [2]float64{-3e3, 3e3}, Hanning: true}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := interpret.FitZeeman(in); err != nil {
			b.Fatal(err)
		}
	}
}
