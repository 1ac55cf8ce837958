package interpret

import (
	"context"
	"errors"
	"math"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/transfer"
)

func TestFitVdI(t *testing.T) {
	// V = 0.37 dI/dv - 0.002 I exactly for a Gaussian I: the fit returns
	// both with zero residual (the derivative is the same finite difference).
	n := 101
	v := make([]float64, n)
	I := make([]float64, n)
	for i := range v {
		v[i] = float64(i-50) * 0.1
		I[i] = math.Exp(-v[i] * v[i])
	}
	d := Derivative(nil, v, I)
	V := make([]float64, n)
	for i := range V {
		V[i] = 0.37*d[i] - 0.002*I[i]
	}
	a, c, res, m := FitVdI(v, I, d, V, -2, 2)
	if math.Abs(a-0.37) > 1e-12 || math.Abs(c+0.002) > 1e-12 || res > 1e-6 || m != 41 {
		t.Errorf("A = %v, C = %v, residual %v, n %d; want 0.37, -0.002, 0, 41", a, c, res, m)
	}
}

// TestZeemanFactorThinLimit: for an isolated component in the unsaturated
// limit, the fitted factor equals the linear-Zeeman value, V = cos(theta)
// dv_Z dI/dv (physics.md section 7, standard weak-field relation). The
// checkpoints up to R/Gamma = 3.2e-3 are used: the onset of saturation
// moves the factor of a hyperfine component by about 2.4 % at R/Gamma = 0.01
// and proportionally less below (measured with this model). The tolerance
// 2 % covers that (~0.8 %), the finite B0 (relative O(1e-4) cubic term),
// the finite-difference derivative (O(dv^2/v_D^2) ~ 1e-3 at 24 channels per
// Doppler width) and the integrator error in V.
func TestZeemanFactorThinLimit(t *testing.T) {
	// SiO J=1-0 has no hyperfine structure; the HCN-like preset has
	// components MHz apart (several km/s), so each is isolated at 0.5 km/s.
	for _, name := range []string{"sio-v1-j1-0", "hcn-like-j1-0"} {
		sp, err := species.Resolve(name)
		if err != nil {
			t.Fatal(err)
		}
		spec := FactorSpec{
			Base:      transfer.Params{Species: sp, Doppler: 500, Saturation: 10, FirstCheckpoint: 1e-3, CheckpointsPerDecade: 2},
			Thetas:    []float64{0, math.Pi / 4, math.Pi / 2},
			Component: Blend,
		}
		if name == "hcn-like-j1-0" {
			cs, err := levels.Components(sp)
			if err != nil {
				t.Fatal(err)
			}
			for i, c := range cs {
				if c.Strength > cs[max(spec.Component, 0)].Strength {
					spec.Component = i
				}
			}
		}
		f, err := ZeemanFactors(context.Background(), spec, 2, transfer.Run)
		if err != nil {
			t.Fatal(err)
		}
		if len(f.Rows) == 0 {
			t.Fatal("no rows")
		}
		for _, r := range f.Rows {
			if r.Saturation > 3.2e-3 {
				continue
			}
			if math.Abs(r.Ratio-1) > 0.02 {
				t.Errorf("%s theta %.0f deg R/Gamma %.3g: factor %.5g m/s/G, linear %.5g m/s/G, ratio %.4f (want 1 within 0.02)", name, r.Theta*180/math.Pi, r.Saturation, r.Factor, r.Linear, r.Ratio)
			}
			if math.Abs(r.Linearity) > 0.01 {
				t.Errorf("%s: linearity %.3g above 1 %%", name, r.Linearity)
			}
			// In the thin limit V is dI/dv-shaped: a good fit. R/(g Omega)
			// scales as 1/B, so the row holds from B0 R/(g Omega)/0.1 on.
			if !r.GoodFit || r.Residual > MaxResidual {
				t.Errorf("%s: residual %.3g not a good fit", name, r.Residual)
			}
			if want := f.B0 * r.RoverGOmega / ValidLimit; math.Abs(r.BValidMin/want-1) > 1e-12 || !(r.BValidMin < f.B0) {
				t.Errorf("%s: valid from %g G, want %g G (below B0 = %g G)", name, r.BValidMin, want, f.B0)
			}
		}
		if !(f.BMax > f.B0) {
			t.Errorf("%s: linear range up to %g G, not above B0 = %g G", name, f.BMax, f.B0)
		}
	}
}

// At theta = 90 deg B cos(theta) = 0: the factor is undefined.
func TestZeemanFactorPerpendicularOnly(t *testing.T) {
	sp, err := species.Resolve("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	spec := FactorSpec{Base: transfer.Params{Species: sp, Doppler: 500, Saturation: 10}, Thetas: []float64{math.Pi / 2}, Component: Blend}
	run := func(context.Context, transfer.Params) (*transfer.Trajectory, error) {
		t.Error("a model ran for theta = 90 deg only")
		return nil, errors.New("not run")
	}
	if _, err := ZeemanFactors(context.Background(), spec, 1, run); !errors.Is(err, ErrNoAngles) {
		t.Errorf("err = %v, want ErrNoAngles", err)
	}
}

// TestZeemanFactorOnePopulationModel: the B0 and 2 B0 runs of a factor
// table use one population model. Water at 22 mG to R/Gamma = 100 has
// more strongly coupled coherences than the automatic model takes on, so
// every run, 2 B0 included (where the automatic model alone would take
// the density matrix), is set to the rate equations with a warning; SiO
// keeps the automatic model.
func TestZeemanFactorOnePopulationModel(t *testing.T) {
	for _, tc := range []struct {
		preset string
		field  float64
		want   transfer.PopulationModel
	}{
		{"h2o-22", 0.0226, transfer.Rates},
		{"sio-v1-j1-0", 0.1, transfer.Auto},
	} {
		sp, err := species.Preset(tc.preset)
		if err != nil {
			t.Fatal(err)
		}
		var cases []Case
		for _, b := range []float64{tc.field, 2 * tc.field} {
			cases = append(cases, Case{Params: transfer.Params{Species: sp, Field: b, Theta: 1, Doppler: 1000, Saturation: 100, Channels: 64}})
		}
		f := &Factors{}
		if err := samePopulationModel(cases, f); err != nil {
			t.Fatal(err)
		}
		for _, c := range cases {
			if c.Params.Population != tc.want {
				t.Errorf("%s at %g G: population model %v, want %v", tc.preset, c.Params.Field, c.Params.Population, tc.want)
			}
		}
		if warned := len(f.Warnings) > 0; warned != (tc.want == transfer.Rates) {
			t.Errorf("%s: warnings %q", tc.preset, f.Warnings)
		}
	}
}
