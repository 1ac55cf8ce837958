package transfer

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
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
