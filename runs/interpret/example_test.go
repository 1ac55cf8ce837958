package interpret_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs/interpret"
)

// A model curve is interpolated linearly in log saturation: R/Gamma = 10
// lies half-way between 1 and 100, so every quantity takes the mean of
// its two neighbours there. Outside the curve the end sample is returned
// with ok = false.
func ExampleCurve_At() {
	c := interpret.Curve{
		{Saturation: 1, Ml: 0.02, Qb: -0.02, RoverGOmega: 2e-4},
		{Saturation: 100, Ml: 0.30, Qb: -0.30, RoverGOmega: 2e-2},
	}
	for _, sat := range []float64{10, 1000} {
		s, ok := c.At(sat)
		fmt.Printf("R/Gamma = %g: m_l = %.3f, q_b = %+.3f, perpendicular p = %.3f, R/(g Omega) = %.4f, covered %v\n",
			sat, s.Ml, s.Qb, s.Project(interpret.Perpendicular), s.RoverGOmega, ok)
	}
	// Output:
	// R/Gamma = 10: m_l = 0.160, q_b = -0.160, perpendicular p = 0.160, R/(g Omega) = 0.0101, covered true
	// R/Gamma = 1000: m_l = 0.300, q_b = -0.300, perpendicular p = 0.300, R/(g Omega) = 0.0200, covered false
}

// The EVPA relative to the projected field picks the branch on which a
// model is compared; within the tolerance of 45 deg it is undecided.
func ExampleBranchOf() {
	deg := math.Pi / 180
	for _, psi := range []float64{10, 44, 80, -70} {
		fmt.Printf("EVPA - chi_B = %+3g deg: %v\n", psi, interpret.BranchOf(psi*deg, 3*deg))
	}
	// Output:
	// EVPA - chi_B = +10 deg: parallel
	// EVPA - chi_B = +44 deg: any
	// EVPA - chi_B = +80 deg: perpendicular
	// EVPA - chi_B = -70 deg: perpendicular
}

// The single-component factors that turn a fitted V = A dI/dv into
// B cos(theta) = A / factor, for the hyperfine components of the HCN-like
// preset and for the blend (thin line, hyperfine structure unresolved).
// The full-model value comes from ZeemanFactors, which runs the transfer.
func ExampleLinearFactor() {
	sp, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		fmt.Println(err)
		return
	}
	cs, err := levels.Components(sp)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range cs {
		fmt.Printf("F=%g-%g at %+6.2f km/s: %+.3f m/s per G\n",
			c.Fu, c.Fl, interpret.ComponentVelocity(sp, c)/1e3, interpret.LinearFactor(c))
	}
	fmt.Printf("blend: %+.3f m/s per G\n", interpret.BlendLinearFactor(cs))
	// Output:
	// F=1-1 at  +4.01 km/s: -0.718 m/s per G
	// F=2-1 at  -0.83 km/s: -0.071 m/s per G
	// F=0-1 at  -7.89 km/s: -1.041 m/s per G
	// blend: -0.394 m/s per G
}

// Reading an observed spectrum from a plain CSV table in memory: units in
// brackets, no error columns, so the errors come from the rms of the
// line-free channels. (An invented feature of the fictitious source
// Hydra W4; the "noise" is a fixed pattern of rms 16.3 mK so that the
// output is stable.) The weak line wings just below the 3 sigma cut count
// as line-free and raise sigma_I above the pattern's rms.
func ExampleParseObserved() {
	var b strings.Builder
	b.WriteString("# Hydra W4 (invented source), demonstration table\n")
	b.WriteString("velocity [km/s],I [mK],Q [mK],U [mK],V [mK]\n")
	for i := 0; i < 60; i++ {
		v := -6 + 0.2*float64(i)
		line := 4000 * math.Exp(-v*v)
		n := 20 * float64(i%3-1) // -20, 0, +20 mK
		fmt.Fprintf(&b, "%.1f,%.3f,%.3f,%.3f,%.3f\n", v, line+n, 0.3*line-n, n, -0.01*v*line+n)
	}
	o, err := interpret.ParseObserved([]byte(b.String()), "hydra-w4.csv", interpret.ReadOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d channels, %.1f..%.1f km/s, unit %s\n", o.Channels(), o.Velocity[0]/1e3, o.Velocity[o.Channels()-1]/1e3, o.Unit)
	for k, name := range interpret.StokesNames {
		fmt.Printf("sigma_%s = %.4f K (%s)\n", name, o.Err[k][0], o.ErrFrom[k])
	}
	// Output:
	// 60 channels, -6.0..5.8 km/s, unit K
	// sigma_I = 0.0184 K (rms of 39 line-free channels)
	// sigma_Q = 0.0164 K (rms of 39 line-free channels)
	// sigma_U = 0.0163 K (rms of 39 line-free channels)
	// sigma_V = 0.0163 K (rms of 39 line-free channels)
}

// Fitting one model spectrum to an observation: the observation is the
// model itself shifted by +2.5 km/s, scaled by 0.6 and given noise of 1 %
// of the scaled peak (fixed PCG seed); the fit recovers shift and scale
// within the noise, and the reduced chi-square is near 1 (its sd for 641
// degrees of freedom is 0.06).
func ExampleFitter_FitSpectrum() {
	var ms interpret.ModelSpectrum
	for i := 0; i < 400; i++ {
		v := float64(i-200) * 50 // m/s
		x := v / 1000            // line of 1/e half-width 1 km/s
		I := 100 * math.Exp(-x*x)
		ms.Velocity = append(ms.Velocity, v)
		ms.Stokes[0] = append(ms.Stokes[0], I)
		ms.Stokes[1] = append(ms.Stokes[1], -0.15*I)
		ms.Stokes[2] = append(ms.Stokes[2], 0)
		ms.Stokes[3] = append(ms.Stokes[3], 0.01*x*I)
	}
	var vel []float64
	for i := 0; i <= 160; i++ {
		vel = append(vel, -5000+float64(i)*100)
	}
	rng := rand.New(rand.NewPCG(7, 11))
	obs := interpret.Synthesize(&ms, vel, 2500, 0.6, [4]float64{0.6, 0.6, 0.6, 0.6}, rng)
	f := interpret.NewFitter(obs, interpret.FitOptions{}).FitSpectrum(&ms)
	fmt.Printf("shift %.2f km/s, scale %.2f, reduced chi-square %.2f over %d channels\n",
		f.Shift/1e3, f.Scale, f.RedChi2, f.N)
	// Output:
	// shift 2.50 km/s, scale 0.60, reduced chi-square 1.06 over 161 channels
}

// Evaluate judges a measurement against model curves. Here the curves are
// constructed rather than run: for each field angle theta the saturated
// limit q_b of a J=1-0 maser under isotropic pumping (Goldreich, Keeley &
// Kwan 1973), approached as s/(1+s) from zero (unsaturated masers are not
// linearly polarized). A perpendicular m_l = 0.40 +/- 0.02 at R/Gamma
// 100..1000 exceeds the 1/3 that the field alone reaches there.
func ExampleEvaluate() {
	gkk := func(th float64) float64 {
		s2 := math.Sin(th) * math.Sin(th)
		if s2 < 1.0/3 {
			return 1
		}
		return (2 - 3*s2) / (3 * s2)
	}
	curve := func(q float64) interpret.Curve {
		var c interpret.Curve
		for k := -20; k <= 40; k++ {
			s := math.Pow(10, float64(k)/10)
			f := s / (1 + s)
			c = append(c, interpret.Sample{Saturation: s, Ml: math.Abs(q) * f, Qb: q * f, RoverGOmega: 1e-5 * s, Excess: 1e-5 * s / interpret.ValidLimit})
		}
		return c
	}
	var rs []interpret.CaseResult
	for i := 0; i <= 18; i++ {
		th := float64(i) * 5 * math.Pi / 180
		rs = append(rs, interpret.CaseResult{Case: interpret.Case{Mechanism: interpret.FieldIsotropic, Theta: th}, Curve: curve(gkk(th))})
	}
	// One anisotropically pumped model, perpendicular q_b = -0.4 throughout.
	rs = append(rs, interpret.CaseResult{
		Case:  interpret.Case{Mechanism: interpret.AnisotropicPump, Theta: math.Pi / 2, Alignment: -0.1},
		Curve: curve(-0.4)})
	m := interpret.Measurement{Ml: 0.40, MlErr: 0.02, Branch: interpret.Perpendicular, SatLo: 100, SatHi: 1000}
	d, err := interpret.Evaluate(m, rs, 30, 1e-3) // fields in gauss
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("field alone reaches %.3f; exceeds it: %v\n", d.FieldMax, d.ExceedsField)
	for _, v := range d.Verdicts {
		if v.NModels == 0 {
			continue // mechanism not run (no seed or weak-field cases here)
		}
		fmt.Printf("%s: consistent %s (%d of %d models), valid %v\n", v.Mechanism, v.Consistent, v.NConsistent, v.NModels, v.Valid)
	}
	// Output:
	// field alone reaches 0.333; exceeds it: true
	// field, isotropic pumping: consistent none (0 of 19 models), valid true
	// anisotropic pumping: consistent -0.1 (theta 90 deg) (1 of 1 models), valid true
}

// FitVdI recovers the Zeeman term A of V = A dI/dv + C I; B cos(theta)
// then follows from A and the factor (m/s per gauss). The residual of an
// exact V is round-off, about sqrt(machine epsilon) from the normal
// equations.
func ExampleFitVdI() {
	var v, I []float64
	for i := 0; i <= 200; i++ {
		x := -5000 + 50*float64(i) // m/s
		v = append(v, x)
		I = append(I, 50*math.Exp(-(x/1000)*(x/1000)))
	}
	dIdv := interpret.Derivative(nil, v, I)
	const a, c = 0.35, 0.002 // m/s, dimensionless
	V := make([]float64, len(v))
	for k := range v {
		V[k] = a*dIdv[k] + c*I[k]
	}
	fa, fc, resid, n := interpret.FitVdI(v, I, dIdv, V, -3000, 3000)
	factor := -0.718 // m/s per G, as for the F=1-1 line above
	fmt.Printf("A = %.3f m/s, C = %.4f, residual below 1e-6 %v, %d channels: B cos(theta) = %.3f G\n", fa, fc, resid < 1e-6, n, fa/factor)
	// Output:
	// A = 0.350 m/s, C = 0.0020, residual below 1e-6 true, 121 channels: B cos(theta) = -0.487 G
}
