package transfer

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/unit/constant"
)

// TestOperatorMatchesMatExp checks the analytic evolution operator against
// gonum's mat.Exp (Pade approximation with scaling and squaring) for
// constant coefficients, with and without magneto-optical terms, including
// the degenerate cases |eta| = |rho|, eta.rho = 0 (nilpotent traceless part)
// and steps with eigenvalues near zero that exercise the series branches.
// Source: physics.md section 5; Landi Degl'Innocenti & Landolfi (2004) for
// the form of K. Tolerance 1e-11 relative: both are accurate to rounding
// for these norms (|K s| <= 8).
func TestOperatorMatchesMatExp(t *testing.T) {
	cases := []struct {
		name string
		k    Propagation
	}{
		{"unpolarized gain", Propagation{EtaI: 1.3}},
		{"Q and V gain", Propagation{EtaI: 1, EtaQ: 0.3, EtaV: -0.2}},
		{"full eta", Propagation{EtaI: 0.7, EtaQ: -0.4, EtaU: 0.25, EtaV: 0.5}},
		{"Faraday only", Propagation{EtaI: 0.2, RhoV: 3}},
		{"Faraday with gain", Propagation{EtaI: 1, EtaQ: 0.3, EtaV: 0.1, RhoV: 0.8}},
		{"general", Propagation{EtaI: -0.3, EtaQ: 0.2, EtaU: -0.5, EtaV: 0.1, RhoQ: 0.4, RhoU: -0.7, RhoV: 1.1}},
		{"eta perp rho, equal norms", Propagation{EtaI: 0.5, EtaQ: 0.6, RhoV: 0.6}},
		{"tiny terms", Propagation{EtaI: 1, EtaQ: 1e-5, EtaV: 2e-6, RhoV: 3e-6}},
		{"eta parallel rho", Propagation{EtaI: 0.1, EtaV: 0.4, RhoV: 0.9}},
	}
	for _, c := range cases {
		for _, s := range []float64{1e-3, 0.1, 1, 2.5} {
			var want mat.Dense
			var ks mat.Dense
			ks.Scale(s, c.k.Matrix())
			want.Exp(&ks)
			got := c.k.Operator(s)
			scale := mat.Norm(&want, math.Inf(1))
			var d mat.Dense
			d.Sub(got, &want)
			if e := mat.Norm(&d, math.Inf(1)) / scale; e > 1e-11 {
				t.Errorf("%s, s=%g: |exp(Ks) - mat.Exp|/|mat.Exp| = %.3g\n got %v\nwant %v", c.name, s, e, mat.Formatted(got), mat.Formatted(&want))
			}
		}
	}
}

// TestConstantCoefficientColumn integrates an unsaturated column (seed far
// below saturation, so the populations and hence K stay constant) with the
// adaptive integrator and compares every channel with mat.Exp(K s) applied
// to the seed: physics.md section 7, "unsaturated, constant-coefficient
// columns: the integrator equals the exact exp(K s)". Polarized seed and
// in-source Faraday rotation included. Tolerance 1e-9 relative: the
// populations change by R/Gamma ~ 1e-12 along this column.
func TestConstantCoefficientColumn(t *testing.T) {
	tr := j10Split(3e3, 10)
	p := Params{Theta: deg(40), Chi: deg(20), Doppler: 1000, Channels: 64, Gain: 6,
		Seed:            Seed{Tb: 1e-6, LinearFraction: 0.3, CircularFraction: 0.1, Angle: deg(-35)},
		ElectronDensity: 1e3, GainLength: 1e10}
	m, err := NewModel(tr, p)
	if err != nil {
		t.Fatal(err)
	}
	if m.rhoV == 0 {
		t.Fatal("Faraday term not set")
	}
	// K of the unsaturated column, captured before the run.
	k0 := make([]Propagation, m.n)
	for k := range k0 {
		k0[k] = Propagation{EtaI: m.cur.eI[k], EtaQ: m.cur.eQ[k], EtaV: m.cur.eV[k], RhoV: m.rhoV}
	}
	seed := m.seed
	tj, err := m.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	last := tj.Checkpoints[len(tj.Checkpoints)-1]
	if math.Abs(last.Gain-6) > 1e-9 {
		t.Fatalf("final gain %g, want 6", last.Gain)
	}
	toK := m.tsat / m.p.BeamSolid
	c2, s2 := math.Cos(2*p.Chi), math.Sin(2*p.Chi)
	for k := 0; k < m.n; k++ {
		var ks, e mat.Dense
		ks.Scale(6, k0[k].Matrix())
		e.Exp(&ks)
		x := mat.NewVecDense(4, seed[:])
		var y mat.VecDense
		y.MulVec(&e, x)
		qs := y.AtVec(1)*c2 - y.AtVec(2)*s2
		us := y.AtVec(1)*s2 + y.AtVec(2)*c2
		want := []float64{y.AtVec(0), qs, us, y.AtVec(3)}
		got := []float64{last.I[k], last.Q[k], last.U[k], last.V[k]}
		for s := range want {
			if d := math.Abs(got[s]/toK - want[s]); d > 1e-9*y.AtVec(0) {
				t.Errorf("channel %d Stokes %d: got %.12g want %.12g (K)", k, s, got[s], want[s]*toK)
			}
		}
	}
}

// TestFaradayCoefficient checks the rotation-measure coefficient against
// the standard 0.812 rad m^-2 per (cm^-3 microgauss pc) (e.g. Rybicki &
// Lightman 1979, sect. 8.3; three digits in the source).
func TestFaradayCoefficient(t *testing.T) {
	const pc = 3.0856775814913673e16 // m (IAU 2015 definition)
	rm := FaradayCoefficient * 1e6 * 1e-10 * pc
	if math.Abs(rm-0.812) > 0.0005 {
		t.Errorf("RM coefficient %.5f rad m^-2, want 0.812", rm)
	}
}

// TestFaradaySign holds the Faraday convention of doc.go: with B_parallel
// > 0 (towards the observer) the rotation measure is positive and the EVPA
// of a linearly polarized seed increases (counterclockwise on the sky,
// north through east) by RM lambda^2, RM = FaradayCoefficient n_e B_par L
// (the standard chi = chi_0 + RM lambda^2 with RM > 0 for a field towards
// the observer; e.g. Rybicki & Lightman 1979, sect. 8.3). In the model's
// units that is RhoV s/2 with L = s GainLength. The column is short
// (unsaturated line-centre gain 1e-3), so the maser terms change the seed's
// polarization by < 1e-6 and every channel, line or continuum, must show
// the same rotation within 1e-6 rad. B_parallel < 0 (Field < 0 or theta >
// 90 deg) must rotate the other way by the same amount.
func TestFaradaySign(t *testing.T) {
	const (
		ne    = 1e3  // cm^-3
		gain  = 1e-3 // unsaturated line-centre gain of the column
		glen  = 1e14 // m per unit gain: path L = 1e11 m
		field = 10.0 // G
		chi0  = 0.35 // rad, seed EVPA on the sky
		nu0   = 43.122e9
	)
	lambda := float64(constant.LightSpeedInVacuum) / nu0
	for _, tc := range []struct {
		b, th float64
	}{{field, 60}, {-field, 60}, {field, 120}} {
		bpar := tc.b * 1e-4 * math.Cos(deg(tc.th)) // T, along +k
		want := FaradayCoefficient * ne * 1e6 * bpar * lambda * lambda * gain * glen
		p := Params{Theta: deg(tc.th), Chi: deg(25), Doppler: 1000, Channels: 64, Gain: gain,
			Seed:            Seed{Tb: 100, LinearFraction: 0.5, Angle: chi0},
			ElectronDensity: ne, GainLength: glen}
		tj := run(t, j10Split(2e3, tc.b), p)
		c := tj.Checkpoints[len(tj.Checkpoints)-1]
		if math.Abs(c.Gain-gain) > 1e-12 {
			t.Fatalf("column gain %g, want %g", c.Gain, gain)
		}
		if math.Abs(want) < 0.3 || math.Abs(want) > 1.2 {
			t.Fatalf("test design: rotation %g rad should be clearly nonzero and below pi/2", want)
		}
		if (want > 0) != (bpar > 0) {
			t.Fatalf("FaradayCoefficient %g has the wrong sign", FaradayCoefficient)
		}
		for k := range c.I {
			got := math.Remainder(0.5*math.Atan2(c.U[k], c.Q[k])-chi0, math.Pi)
			if math.Abs(got-want) > 1e-6 {
				t.Errorf("B = %g G, theta = %g deg, channel %d: EVPA rotated by %.7f rad, want %+.7f (RM lambda^2, B_parallel %+g T)", tc.b, tc.th, k, got, want, bpar)
				break
			}
		}
		t.Logf("B_parallel %+.3g G: EVPA rotation %+.5f rad", bpar*1e4, want)
	}
}
