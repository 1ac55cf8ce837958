package transfer

import (
	"context"
	"math"
	"testing"

	"gonum.org/v1/gonum/unit/constant"

	"maserpol/levels"
	"maserpol/levels/species"
)

func run(t testing.TB, tr *levels.Transition, p Params) *Trajectory {
	t.Helper()
	m, err := NewModel(tr, p)
	if err != nil {
		t.Fatal(err)
	}
	tj, err := m.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range tj.Checkpoints {
		for _, v := range [][]float64{c.I, c.Q, c.U, c.V, {c.Saturation, c.Gain, c.TbdOmega, c.IPeak, c.Ml, c.MlInt, c.EVPA, c.Qb, c.PV, c.VIPeak, c.RoverGOmega}} {
			for _, x := range v {
				if math.IsNaN(x) {
					t.Fatalf("NaN in checkpoint at saturation %g", c.Saturation)
				}
			}
		}
	}
	return tj
}

// gkkParams: J=1-0 with the Zeeman splitting 1e-3 of the Doppler width and
// Gamma small enough that g Omega >> R up to R/Gamma = 1e4 (the GKK regime).
func gkkParams(theta float64) (*levels.Transition, Params) {
	// 144 Hz at 43.122 GHz is 1.0 m/s: splitting/Doppler = 1e-3.
	return j10Split(144, 10), Params{Theta: deg(theta), Doppler: 1000, GammaUpper: 1e-3, GammaLower: 1e-3}
}

// TestGKKSaturatedLimit: Goldreich, Keeley & Kwan 1973 (ApJ 179, 111),
// J=1-0, g Omega >> R >> Gamma, splitting << Doppler width, isotropic
// pumping: q_b -> (2 - 3 sin^2 theta)/(3 sin^2 theta) for sin^2 theta >= 1/3.
// Checked within 0.01 at every checkpoint with R/Gamma >= 1e3 (the brief's
// tolerance; convergence is fast above 54.7 deg).
func TestGKKSaturatedLimit(t *testing.T) {
	for _, th := range []float64{90, 75, 60, math.Acos(1/math.Sqrt(3)) * 180 / math.Pi} {
		tr, p := gkkParams(th)
		tj := run(t, tr, p)
		s2 := math.Pow(math.Sin(deg(th)), 2)
		want := (2 - 3*s2) / (3 * s2)
		n := 0
		for _, c := range tj.Checkpoints {
			if c.Saturation < 1e3*(1-1e-3) {
				continue
			}
			n++
			if math.Abs(c.Qb-want) > 0.01 {
				t.Errorf("theta %.2f deg, R/Gamma %.3g: q_b = %.4f, GKK limit %.4f", th, c.Saturation, c.Qb, want)
			}
			if !c.Valid {
				t.Errorf("theta %.2f: checkpoint R/Gamma %.3g flagged invalid (R/gOmega %.3g) although g Omega >> R", th, c.Saturation, c.RoverGOmega)
			}
		}
		if n < 8 {
			t.Errorf("theta %.2f: only %d checkpoints above R/Gamma = 1e3", th, n)
		}
	}
}

// TestGKKSmallAngles: same source; for sin^2 theta < 1/3 the polarization
// is parallel (q_b > 0) and q_b rises slowly towards +1.
func TestGKKSmallAngles(t *testing.T) {
	for _, th := range []float64{20, 30} {
		tr, p := gkkParams(th)
		tj := run(t, tr, p)
		prev := -1.0
		for _, c := range tj.Checkpoints {
			if c.Saturation < 10 {
				continue
			}
			if c.Qb < prev-1e-4 {
				t.Errorf("theta %g: q_b falls from %.4f to %.4f at R/Gamma %.3g", th, prev, c.Qb, c.Saturation)
			}
			prev = c.Qb
		}
		if prev < 0.7 || prev > 1 {
			t.Errorf("theta %g: q_b = %.4f at R/Gamma = 1e4, want rising towards +1 (> 0.7)", th, prev)
		}
	}
}

// TestUnsaturatedNotLinearlyPolarized: GKK 1973, unsaturated masers
// (R << Gamma) with splitting << line width carry no linear polarization.
// m_l grows as R/Gamma at the onset of saturation, so m_l < 1e-3 at
// R/Gamma <= 1e-3 (and the polarization then does appear, m_l > 0.1, once
// saturated: the check can fail both ways).
func TestUnsaturatedNotLinearlyPolarized(t *testing.T) {
	tr, p := gkkParams(90)
	p.Saturation = 1e2
	tj := run(t, tr, p)
	for _, c := range tj.Checkpoints {
		if c.Saturation <= 1e-3*(1+1e-3) && c.Ml > 1e-3 {
			t.Errorf("R/Gamma %.3g: m_l = %.3g, want < 1e-3", c.Saturation, c.Ml)
		}
	}
	if last := tj.Checkpoints[len(tj.Checkpoints)-1]; last.Ml < 0.1 {
		t.Errorf("saturated m_l = %.3g, want > 0.1", last.Ml)
	}
}

// fitRatio returns sum(V dI/dv)/sum((dI/dv)^2) with central differences.
func fitRatio(v, I, V []float64) float64 {
	var num, den float64
	for k := 1; k < len(v)-1; k++ {
		d := (I[k+1] - I[k-1]) / (v[k+1] - v[k-1])
		num += V[k] * d
		den += d * d
	}
	return num / den
}

// TestThinLineWeakFieldV: standard weak-field relation for an optically
// thin line, V(v) = cos(theta) dv_Z dI/dv with dv_Z the velocity shift of
// the sigma+ component relative to pi taken from the level structure
// (levels.Components SplitKmsPerG; radio velocities, so a sigma+ at higher
// frequency has dv_Z > 0 in this form: see doc.go). Tolerance 0.5 %: the
// relation is exact to first order in dv_Z/v_D = 8e-3.
func TestThinLineWeakFieldV(t *testing.T) {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	comps, err := levels.Components(sp)
	if err != nil || len(comps) != 1 {
		t.Fatalf("components: %v %v", comps, err)
	}
	for _, b := range []float64{10, -10} {
		for _, th := range []float64{0, 30, 70, 120} {
			p := Params{Species: sp, Field: b, Theta: deg(th), Doppler: 1000, Gain: 0.05}
			tj, err := Run(context.Background(), p)
			if err != nil {
				t.Fatal(err)
			}
			c := tj.Checkpoints[len(tj.Checkpoints)-1]
			want := math.Cos(deg(th)) * comps[0].SplitKmsPerG * 1e3 * b
			got := fitRatio(tj.Velocity, c.I, c.V)
			t.Logf("B = %g G, theta %g: V/(dI/dv) = %.6g m/s, level structure %.6g m/s", b, th, got, want)
			if math.Abs(got-want) > 5e-3*math.Abs(comps[0].SplitKmsPerG*1e3*b) {
				t.Errorf("B = %g G, theta %g: V/(dI/dv) = %.5g m/s, level structure gives %.5g m/s", b, th, got, want)
			}
		}
	}
}

// TestVSign holds the V sign convention of doc.go: V = RCP - LCP (IAU 1973,
// IEEE sense), and with B along +k (Field > 0, theta < 90 deg) V > 0 on the
// high-frequency (low-velocity) wing exactly when the sigma+ component lies
// at the higher frequency (SplitHzPerG > 0, e.g. SiO with g < 0 in nuclear
// magnetons).
func TestVSign(t *testing.T) {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	comps, _ := levels.Components(sp)
	if comps[0].SplitHzPerG <= 0 {
		t.Fatalf("SiO preset: sigma+ shift %g Hz/G, expected > 0 for g < 0", comps[0].SplitHzPerG)
	}
	for _, tc := range []struct {
		b, th          float64
		hiWingPositive bool
	}{{10, 30, true}, {-10, 30, false}, {10, 150, false}, {-10, 150, true}} {
		tj, err := Run(context.Background(), Params{Species: sp, Field: tc.b, Theta: deg(tc.th), Doppler: 1000, Saturation: 1})
		if err != nil {
			t.Fatal(err)
		}
		c := tj.Checkpoints[len(tj.Checkpoints)-1]
		var hi, lo float64 // V at -v_D (high frequency) and +v_D
		for k, v := range tj.Velocity {
			if math.Abs(v+1000) < math.Abs(tj.Velocity[0]-tj.Velocity[1]) {
				hi = c.V[k]
			}
			if math.Abs(v-1000) < math.Abs(tj.Velocity[0]-tj.Velocity[1]) {
				lo = c.V[k]
			}
		}
		if (hi > 0) != tc.hiWingPositive || (lo > 0) == tc.hiWingPositive {
			t.Errorf("B = %g G, theta = %g deg: V(high-frequency wing) = %g K, V(low) = %g K; want high-wing positive = %v", tc.b, tc.th, hi, lo, tc.hiWingPositive)
		}
	}
}

// TestVProportionalToSplitting: Watson & Wyld 2001 (ApJ 558, L55): V is
// proportional to the Zeeman splitting while splitting/line width is below
// about 0.1, saturated or not. P_V per unit splitting at splitting/Doppler
// = 1e-3, 3e-3, 1e-2 agrees within 1 % (the deviation is second order,
// (splitting/width)^2 ~ 1e-4, plus integration error).
func TestVProportionalToSplitting(t *testing.T) {
	// Splitting/Doppler 1e-3 is 144 Hz at 43.122 GHz for v_D = 1 km/s.
	var ref []float64
	for _, f := range []float64{1, 3, 10} {
		tj := run(t, j10Split(144*f, 10), Params{Theta: deg(45), Doppler: 1000, GammaUpper: 1e-3, GammaLower: 1e-3, Saturation: 1e3})
		var got []float64
		for _, c := range tj.Checkpoints {
			if c.Saturation >= 1e-2*(1-1e-3) && (len(got) == 0 || c.Saturation >= 10*(1-1e-3) && len(got) == 1 || c.Saturation >= 1e3*(1-1e-3) && len(got) == 2) {
				got = append(got, c.PV/f)
			}
		}
		t.Logf("splitting x%g: P_V/splitting at R/Gamma 1e-2, 10, 1e3: %.6g", f, got)
		if ref == nil {
			ref = got
			continue
		}
		for i := range got {
			if math.Abs(got[i]/ref[i]-1) > 0.01 {
				t.Errorf("splitting x%g, checkpoint %d: P_V/splitting = %.5g, at 1e-3 of the width %.5g", f, i, got[i], ref[i])
			}
		}
	}
}

// TestSaturatedPVFlatInTheta: Watson & Wyld 2001: for saturated masers P_V
// does not fall with theta until theta is near 90 deg, unlike the
// unsaturated cos(theta) law (which the same runs obey within 2 % at
// R/Gamma = 1e-2: P_V(75)/P_V(15) = cos 75/cos 15 = 0.268).
func TestSaturatedPVFlatInTheta(t *testing.T) {
	pv := func(th, sat float64) float64 {
		tr, p := gkkParams(th)
		p.Saturation = 1e3
		for _, c := range run(t, tr, p).Checkpoints {
			if c.Saturation >= sat*(1-1e-3) {
				return c.PV
			}
		}
		t.Fatal("checkpoint not reached")
		return 0
	}
	ref := pv(15, 1e3)
	for _, th := range []float64{30, 45, 60, 75} {
		r := pv(th, 1e3) / ref
		t.Logf("P_V(%g)/P_V(15) = %.4f at R/Gamma = 1e3", th, r)
		if r < 0.9 {
			t.Errorf("saturated (R/Gamma = 1e3): P_V(%g deg)/P_V(15 deg) = %.3f, want >= 0.9 (not falling with theta)", th, r)
		}
	}
	want := math.Cos(deg(75)) / math.Cos(deg(15))
	if r := pv(75, 1e-2) / pv(15, 1e-2); math.Abs(r/want-1) > 0.02 {
		t.Errorf("unsaturated: P_V(75)/P_V(15) = %.4f, cos law %.4f", r, want)
	}
	if v := pv(90, 1e3); v > 1e-12 {
		t.Errorf("P_V at theta = 90 deg is %g, want 0", v)
	}
}

// TestSymmetries: physics.md section 7: B -> -B flips V and keeps I, Q, U;
// chi_B -> chi_B + 90 deg flips sky Q and U. Tolerance 1e-9 relative to
// I_peak (the two runs take identical steps).
func TestSymmetries(t *testing.T) {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	base := Params{Species: sp, Field: 30, Theta: deg(50), Chi: deg(10), Doppler: 1000, Saturation: 300}
	runP := func(p Params) Checkpoint {
		tj, err := Run(context.Background(), p)
		if err != nil {
			t.Fatal(err)
		}
		return tj.Checkpoints[len(tj.Checkpoints)-1]
	}
	a := runP(base)
	nb := base
	nb.Field = -base.Field
	b := runP(nb)
	nc := base
	nc.Chi = base.Chi + math.Pi/2
	c := runP(nc)
	tol := 1e-9 * a.IPeak
	if a.PV < 1e-3 || a.Ml < 1e-2 {
		t.Fatalf("test model too weakly polarized: P_V %g, m_l %g", a.PV, a.Ml)
	}
	for k := range a.I {
		if math.Abs(a.I[k]-b.I[k]) > tol || math.Abs(a.Q[k]-b.Q[k]) > tol || math.Abs(a.U[k]-b.U[k]) > tol || math.Abs(a.V[k]+b.V[k]) > tol {
			t.Fatalf("B -> -B, channel %d: (I,Q,U,V) = (%g,%g,%g,%g) vs (%g,%g,%g,%g)", k, a.I[k], a.Q[k], a.U[k], a.V[k], b.I[k], b.Q[k], b.U[k], b.V[k])
		}
		if math.Abs(a.I[k]-c.I[k]) > tol || math.Abs(a.Q[k]+c.Q[k]) > tol || math.Abs(a.U[k]+c.U[k]) > tol || math.Abs(a.V[k]-c.V[k]) > tol {
			t.Fatalf("chi -> chi + 90 deg, channel %d: (I,Q,U,V) = (%g,%g,%g,%g) vs (%g,%g,%g,%g)", k, a.I[k], a.Q[k], a.U[k], a.V[k], c.I[k], c.Q[k], c.U[k], c.V[k])
		}
	}
	// EVPA: parallel or perpendicular to the projected field (q_b sign).
	want := base.Chi
	if a.Qb < 0 {
		want += math.Pi / 2
	}
	if d := math.Remainder(a.EVPA-want, math.Pi); math.Abs(d) > 1e-9 {
		t.Errorf("EVPA %.6f rad, want %.6f (mod pi) for q_b = %.3f", a.EVPA, want, a.Qb)
	}
}

// TestConvergence: physics.md section 7: m_l stable to 1e-3 under halving
// the step tolerance and doubling the channels (theta = 70 deg, where the
// polarization changes fastest with saturation).
func TestConvergence(t *testing.T) {
	tr, p := gkkParams(70)
	p.Saturation = 1e3
	ml := func(p Params) []float64 {
		var out []float64
		for _, c := range run(t, tr, p).Checkpoints {
			out = append(out, c.Ml)
		}
		return out
	}
	ref := ml(p)
	ph := p
	ph.Tolerance = DefaultTolerance / 2
	pc := p
	pc.Channels = 2 * DefaultChannels
	for name, got := range map[string][]float64{"tolerance/2": ml(ph), "2x channels": ml(pc)} {
		if len(got) != len(ref) {
			t.Fatalf("%s: %d checkpoints, want %d", name, len(got), len(ref))
		}
		for i := range got {
			if math.Abs(got[i]-ref[i]) > 1e-3 {
				t.Errorf("%s: checkpoint %d: m_l %.5f vs %.5f", name, i, got[i], ref[i])
			}
		}
	}
}

// TestDopplerWidth: v_D = sqrt(2kT/m + v_t^2) with CODATA 2018 k and amu
// (exact k; amu to 10 digits): SiO (43.972 amu) at 1000 K is 614.4 m/s.
func TestDopplerWidth(t *testing.T) {
	want := math.Sqrt(2*1.380649e-23*1000/(43.972*1.66053906660e-27) + 300*300)
	if got := DopplerWidth(1000, 43.972, 300); math.Abs(got-want) > 1e-9*want {
		t.Errorf("DopplerWidth = %.10g, want %.10g", got, want)
	}
	// T_b dOmega of R = Gamma: 4 pi h nu Gamma/(A k).
	got := SaturationTbdOmega(43.122e9, 3e-6, 1)
	want = 4 * math.Pi * float64(constant.Planck) * 43.122e9 / (3e-6 * float64(constant.Boltzmann))
	if math.Abs(got-want) > 1e-12*want {
		t.Errorf("SaturationTbdOmega = %g, want %g", got, want)
	}
}
