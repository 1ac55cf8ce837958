package transfer

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/unit/constant"

	"maserpol/levels"
)

// energyBalance returns, for the current state of m, the power the beam
// gains, sum_k (K S)_I over channels, and the power the molecules give,
// kappa sum_j sum_ab R_ab (n_a - n_b): physics.md section 7 ("gain of I
// along ds equals h nu sum R_ab (n_a - n_b) over transitions and
// velocities", here in units of h nu per channel width). The molecular
// side is computed independently of the model's rate code: R_ab from the
// weights of physics.md section 3 with the resonance of each line located
// from its frequency, and the populations from the full (upper + lower)
// system solved by LU (fullSolve). every selects a subset of classes for
// large systems (then both sides are restricted to those classes' lines).
func energyBalance(t *testing.T, m *Model, every int) (beam, molecules float64) {
	c := float64(constant.LightSpeedInVacuum)
	nu0 := m.p.Species.Frequency
	st, ct := math.Sin(m.p.Theta), math.Cos(m.p.Theta)
	weights := func(q int) (wi, wq, wv float64) {
		if q == 0 {
			return st * st / 2, st * st / 2, 0
		}
		return (1 + ct*ct) / 4, -st * st / 4, float64(q) * ct / 2
	}
	S := &m.cur.st
	// The spectrum at position x through the cubic B-spline kernel of doc.go.
	at := func(s int, x float64) float64 {
		k := int(math.Floor(x))
		f := x - float64(k)
		get := func(k int) float64 {
			if k < 0 || k >= m.n {
				return m.seed[s] // the model continues the spectrum by the seed
			}
			return S[s][k]
		}
		g := 1 - f
		return g*g*g/6*get(k-1) + (4-6*f*f+3*f*f*f)/6*get(k) + (4-6*g*g+3*g*g*g)/6*get(k+1) + f*f*f/6*get(k+2)
	}
	nU, nL := len(m.tr.Upper.States), len(m.tr.Lower.States)
	r := make([]float64, len(m.lines))
	for j := m.jlo; j < m.jhi; j++ {
		if (j-m.jlo)%every != 0 {
			continue
		}
		for i, l := range m.lines {
			x := float64(j) - c*l.offset/(nu0*m.dv)
			wi, wq, wv := weights(l.q)
			r[i] = math.Max(0, 3*l.s*(wi*at(0, x)+wq*at(1, x)+wv*at(3, x)))
		}
		up, lo := fullSolve(t, nU, nL, m.lines, r, m.rs.gKE(true), m.rs.gKE(false), m.rs.pump(true), m.rs.pump(false), m.phi[j])
		var dmax float64
		for i, l := range m.lines {
			if d := math.Abs(m.cur.src[i*m.stride+m.pad+j] - (up[l.up] - lo[l.lo])); d > dmax {
				dmax = d
			}
		}
		if dmax > 1e-9 {
			t.Logf("class %d: inversions differ from the full system by %g (phi %g)", j, dmax, m.phi[j])
		}
		for i, l := range m.lines {
			molecules += m.kappa * r[i] * (up[l.up] - lo[l.lo])
			if every > 1 {
				// The beam side restricted to this class: the channels the
				// line of this class amplifies, with the transfer weights.
				dn := m.cur.src[i*m.stride+m.pad+j]
				for t := -1; t <= 2; t++ {
					k := j + l.i0 + t
					if k < 0 || k >= m.n {
						continue
					}
					wi, wq, wv := weights(l.q)
					beam += m.kappa * 3 * l.s * l.w[t+1] * dn * (wi*S[0][k] + wq*S[1][k] + wv*S[3][k])
				}
			}
		}
	}
	if every == 1 {
		for k := 0; k < m.n; k++ {
			beam += m.cur.eI[k]*S[0][k] + m.cur.eQ[k]*S[1][k] + m.cur.eV[k]*S[3][k]
		}
	}
	return beam, molecules
}

// TestEnergyConservation checks the reciprocity of the weights in the rates
// and in the transfer (physics.md sections 3 and 7) for saturated J=1-0 and
// hyperfine models, and that an actual small integration step gains what
// K S predicts. Tolerances: 1e-9 for the identity (rounding only), 1e-3
// for the finite step (its O(h) truncation).
func TestEnergyConservation(t *testing.T) {
	h2o := presetAt(t, "h2o-22", 2)
	for _, tc := range []struct {
		name string
		tr   *levels.Transition
		p    Params
	}{
		{"J=1-0 theta 60", j10Split(2e3, 10), Params{Theta: deg(60), Doppler: 1000, Saturation: 100, Population: Rates}},
		{"J=1-0 polarized seed, unequal Gamma", j10Split(2e3, 10), Params{Theta: deg(35), Doppler: 1000, Saturation: 30, GammaUpper: 2, GammaLower: 0.5,
			Seed: Seed{Tb: 50, LinearFraction: 0.5, CircularFraction: 0.2, Angle: 0.3}, Population: Rates}},
		{"h2o-22 theta 40 aligned pump", h2o, Params{Theta: deg(40), Doppler: 600, Saturation: 1e3, Pump: Pump{Kind: Anisotropic, Alignment: 0.4, LowerPump: 0.3}, Population: Rates}},
	} {
		m, err := NewModel(tc.tr, tc.p)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := m.Run(context.Background()); err != nil {
			t.Fatal(err)
		}
		beam, mol := energyBalance(t, m, 1)
		if math.Abs(beam-mol) > 1e-9*math.Abs(beam) {
			t.Errorf("%s: beam gains %.12g, molecules give %.12g", tc.name, beam, mol)
		}
		// A short real step: sum of dI over channels / h.
		var i0 float64
		for _, v := range m.cur.st[0] {
			i0 += v
		}
		h := 1e-4 * i0 / beam // a relative change of 1e-4 in the integrated I
		if _, _, err := m.step(0, h); err != nil {
			t.Fatal(err)
		}
		var i1 float64
		for _, v := range m.end.st[0] {
			i1 += v
		}
		if fd := (i1 - i0) / h; math.Abs(fd-beam) > 1e-3*beam {
			t.Errorf("%s: finite step gains %.8g per unit gain, K S gives %.8g", tc.name, fd, beam)
		}
	}
}
