package interpret

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

const degree = math.Pi / 180

// TestGKKTheta: Goldreich, Keeley & Kwan 1973 (ApJ 179, 111), saturated
// J = 1-0: q_b = (2 - 3 sin^2 theta)/(3 sin^2 theta) for sin^2 theta >= 1/3,
// parallel below theta_F = 54.74 deg, perpendicular above. Values worked
// by hand from that formula: 90 deg -> m_l = 1/3 (perpendicular), 60 deg ->
// 1/9 (perpendicular), 45 deg -> 1/3 (parallel), theta_F -> 0. Tolerance
// 1e-9 rad: closed forms.
func TestGKKTheta(t *testing.T) {
	if d := ThetaF/degree - 54.7356; math.Abs(d) > 1e-4 {
		t.Errorf("theta_F = %.5f deg, want 54.7356", ThetaF/degree)
	}
	cases := []struct {
		theta float64 // deg
		ml    float64
		perp  bool
	}{{90, 1.0 / 3, true}, {60, 1.0 / 9, true}, {45, 1.0 / 3, false}, {50, (2 - 3*math.Pow(math.Sin(50*degree), 2)) / (3 * math.Pow(math.Sin(50*degree), 2)), false}}
	for _, c := range cases {
		q := GKKMl(c.theta * degree)
		if math.Abs(math.Abs(q)-c.ml) > 1e-12 || (q < 0) != c.perp {
			t.Errorf("GKK q_b(%g deg) = %.6f, want %s%.6f", c.theta, q, map[bool]string{true: "-", false: "+"}[c.perp], c.ml)
		}
		var got float64
		if c.perp {
			got, _ = ThetaPerpendicular(c.ml)
		} else {
			got = ThetaParallel(c.ml)
		}
		if math.Abs(got-c.theta*degree) > 1e-9 {
			t.Errorf("inverse GKK of m_l = %.6f (%v): %.6f deg, want %g", c.ml, c.perp, got/degree, c.theta)
		}
		br := Parallel
		if c.perp {
			br = Perpendicular
		}
		e, err := GKKTheta(c.ml, 0, br)
		if err != nil {
			t.Fatal(err)
		}
		want := OrientParallel
		if c.perp {
			want = OrientPerpendicular
		}
		// The 54.7 deg rule: the field lies along the EVPA below theta_F.
		if e.Orientation != want {
			t.Errorf("theta %g deg: orientation %v, want %v", c.theta, e.Orientation, want)
		}
	}
	// m_l above 1/3 beyond its error: only the parallel branch, not ambiguous.
	e, err := GKKTheta(0.6, 0.05, AnyBranch)
	if err != nil || e.Orientation != OrientParallel || e.Ambiguous || !math.IsNaN(e.Alt) {
		t.Errorf("m_l = 0.6 +/- 0.05: %+v, %v; want parallel, unambiguous, no other branch", e, err)
	}
	if _, err := GKKTheta(0.6, 0.05, Perpendicular); err == nil {
		t.Error("m_l = 0.6 +/- 0.05 on the perpendicular branch: want an error (that branch ends at 1/3)")
	}
	// m_l = 0.2: both branches exist, ambiguous, both angles given.
	e, err = GKKTheta(0.2, 0.02, AnyBranch)
	if err != nil || !e.Ambiguous || math.IsNaN(e.Alt) || e.Orientation != OrientPerpendicular {
		t.Errorf("m_l = 0.2 +/- 0.02: %+v, %v; want ambiguous, perpendicular more probable, other branch given", e, err)
	}
	// Near theta_F the chosen angle straddles 54.7 deg: ambiguous even with
	// the branch given.
	e, _ = GKKTheta(0.01, 0.02, Parallel)
	if !e.Ambiguous {
		t.Errorf("m_l = 0.01 +/- 0.02 (parallel): theta %.2f +/- %.2f deg not flagged ambiguous", e.Theta/degree, e.ThetaErr/degree)
	}
}

// TestPerpendicularProbability checks the branch probability against an
// independent Monte Carlo of the forward GKK relation: field directions
// uniform on the sphere (cos theta uniform), m_l = |q_b(theta)|, and the
// fraction of those with m_l in a narrow bin that are perpendicular. The
// tolerance 0.03 covers the binomial error of ~1e4 draws in the bin (0.005)
// and the bin width.
func TestPerpendicularProbability(t *testing.T) {
	if p := PerpendicularProbability(0); math.Abs(p-0.5) > 1e-12 {
		t.Errorf("P_perp(0) = %v, want 1/2 (the branches meet at theta_F)", p)
	}
	rng := rand.New(rand.NewPCG(7, 9))
	for _, m := range []float64{0.05, 0.2, 0.3} {
		var in, perp int
		for range 4000000 {
			th := math.Acos(rng.Float64())
			q := GKKMl(th)
			if math.Abs(math.Abs(q)-m) < 0.005 {
				in++
				if q < 0 {
					perp++
				}
			}
		}
		mc := float64(perp) / float64(in)
		if p := PerpendicularProbability(m); math.Abs(p-mc) > 0.03 {
			t.Errorf("m_l = %g: P_perp = %.4f, Monte Carlo %.4f (%d draws in the bin)", m, p, mc, in)
		}
	}
}

// TestHanningInflation: the exact sandwich error of A with Hanning
// correlation tends to sqrt(1 + 2 rho_1 + 2 rho_2) = sqrt(8/3) = 1.633
// (derivation in field.go) for a line much wider than a channel.
func TestHanningInflation(t *testing.T) {
	s := SynthLine{Start: -20e3, Step: 50, Channels: 801, Peak: 100, Width: 2000, NoiseI: 0.1, NoiseV: 0.1, Hanning: true}
	o, err := s.Draw(rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	f, err := FitZeeman(ZeemanFitInput{Velocity: o.Velocity, I: o.Stokes[0], V: o.Stokes[3], SigmaV: o.Err[3], Window: [2]float64{-8e3, 8e3}, Hanning: true})
	if err != nil {
		t.Fatal(err)
	}
	if want := math.Sqrt(8.0 / 3); math.Abs(f.Inflation-want) > 0.01*want {
		t.Errorf("inflation %.4f, want %.4f within 1 %%", f.Inflation, want)
	}
}

// flatGrid is a factor grid with one factor everywhere, valid, for the
// statistical checks of the fit and its errors.
func flatGrid(factor float64) *FactorGrid {
	return &FactorGrid{
		Thetas: []float64{0, ThetaGridMax}, LogSat: []float64{math.Log(1e-3), math.Log(1e3)},
		Factor: [][]float64{{factor, factor}, {factor, factor}},
		RGO:    [][]float64{{1e-6, 1e-6}, {1e-6, 1e-6}},
		Good:   [][]bool{{true, true}, {true, true}},
		B0:     1e-3, BMax: 1e3, Linear: factor,
	}
}

// TestFieldUnbiased: synthetic spectra from our own generator (SynthLine)
// with a known field and Gaussian noise, 200 draws each: the mean B_los is
// within 0.2 sigma of the truth and the quoted sigma matches the scatter
// within 15 % (the criteria; 0.2 sigma is 2.8 standard errors of a
// 200-draw mean, 15 % is 3 standard errors of a 200-draw rms), for
// independent and Hanning-correlated channels. Without the correlation the
// quoted sigma must fall short by the factor sqrt(8/3), so the check can fail.
func TestFieldUnbiased(t *testing.T) {
	const factor = 0.8214 // m/s per G, SiO v=1 J=1-0 (levels: 0.0008214 km/s per G)
	g := flatGrid(factor)
	// V/I about 3e-3 at the V peaks, B_los detected at about 9 sigma, as
	// for a typical maser feature; eight channels per 1/e half-width.
	for _, c := range []struct{ hann, assume bool }{{false, false}, {true, true}, {true, false}} {
		s := SynthLine{Start: -10e3, Step: 125, Channels: 161, Peak: 50, Width: 1000, B: 5, Theta: 30 * degree, Factor: factor, C: 0.002, NoiseI: 0.05, NoiseV: 0.05, Hanning: c.hann}
		rng := rand.New(rand.NewPCG(11, 13))
		var sum, sum2, sig float64
		const n = 200
		for range n {
			o, err := s.Draw(rng)
			if err != nil {
				t.Fatal(err)
			}
			r, err := AnalyzeFeature(Feature{Name: "synthetic", Obs: o, SatLo: 1e-2, SatHi: 1e-2, Theta: s.Theta, ThetaErr: 0, Ml: math.NaN(), Hanning: c.assume}, g)
			if err != nil {
				t.Fatal(err)
			}
			sum += r.BLos
			sum2 += r.BLos * r.BLos
			sig += r.BLosErr
		}
		mean := sum / n
		sd := math.Sqrt(sum2/n - mean*mean)
		sig /= n
		truth := s.B * math.Cos(s.Theta)
		t.Logf("hanning %v (assumed %v): mean %.6f G (truth %.6f), scatter %.6f G, quoted %.6f G", c.hann, c.assume, mean, truth, sd, sig)
		if c.hann && !c.assume {
			if r := sd / sig; math.Abs(r-math.Sqrt(8.0/3)) > 0.25 {
				t.Errorf("Hanning channels fitted as independent: scatter/quoted = %.3f, want about 1.63", r)
			}
			continue
		}
		if math.Abs(mean-truth) > 0.2*sd {
			t.Errorf("hanning %v: mean B_los %.6f G, truth %.6f G: bias %.2f sigma (want < 0.2)", c.hann, mean, truth, (mean-truth)/sd)
		}
		if math.Abs(sig/sd-1) > 0.15 {
			t.Errorf("hanning %v: quoted sigma %.6f G against scatter %.6f G (want within 15 %%)", c.hann, sig, sd)
		}
	}
}

// TestFieldNotDetected: with no field the verdict is "not detected" in at
// least 95 % of 200 draws (a 3-sigma threshold gives 99.7 % for Gaussian
// noise), and the upper limit covers zero.
func TestFieldNotDetected(t *testing.T) {
	g := flatGrid(0.8214)
	s := SynthLine{Start: -10e3, Step: 100, Channels: 201, Peak: 50, Width: 800, Factor: 0.8214, NoiseI: 0.05, NoiseV: 0.05}
	rng := rand.New(rand.NewPCG(3, 5))
	nd := 0
	for range 200 {
		o, _ := s.Draw(rng)
		r, err := AnalyzeFeature(Feature{Name: "no field", Obs: o, SatLo: 1e-2, SatHi: 1e-2, Theta: math.NaN(), Ml: math.NaN()}, g)
		if err != nil {
			t.Fatal(err)
		}
		if r.Verdict == VerdictNotDetected {
			nd++
			if !(r.UpperLimit > math.Abs(r.BLos)) {
				t.Errorf("upper limit %.4g G below |B_los| %.4g G", r.UpperLimit, math.Abs(r.BLos))
			}
		}
	}
	if nd < 190 {
		t.Errorf("not detected in %d of 200 draws, want >= 190", nd)
	}
}

// TestFieldPoorFit: a V that is not dI/dv-shaped (a narrow spike beside
// the line) is a poor fit.
func TestFieldPoorFit(t *testing.T) {
	g := flatGrid(0.8214)
	s := SynthLine{Start: -10e3, Step: 100, Channels: 201, Peak: 50, Width: 800, B: 1, Factor: 0.8214, NoiseI: 0.05, NoiseV: 0.05}
	o, _ := s.Draw(rand.New(rand.NewPCG(1, 1)))
	for k := 100; k < 104; k++ {
		o.Stokes[3][k] += 2
	}
	r, err := AnalyzeFeature(Feature{Name: "spike", Obs: o, SatLo: 1e-2, SatHi: 1e-2, Theta: 0, Ml: math.NaN()}, g)
	if err != nil {
		t.Fatal(err)
	}
	if r.Verdict != VerdictPoorFit {
		t.Errorf("verdict %q, want poor fit (chi2 %.4g for %d channels)", r.Verdict, r.Fit.Chi2, r.Fit.N)
	}
}

// TestFieldFromModelThinLine: the standard thin-line weak-field relation
// V = cos(theta) dv_Z dI/dv (dv_Z from levels: SplitKmsPerG B). An
// unsaturated model spectrum of transfer at a known field, with small
// noise added, run through the factor grid of the same species, returns
// B within 3 % (the factor grid's own tolerance against
// the linear value at R/Gamma <= 3e-3, see TestZeemanFactorThinLimit);
// the grid's unsaturated factor is the linear value within 2 %.
func TestFieldFromModelThinLine(t *testing.T) {
	sp, err := species.Resolve("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	base := transfer.Params{Species: sp, Doppler: 1000, Saturation: 1, FirstCheckpoint: 1e-3, CheckpointsPerDecade: 1}
	f, err := ZeemanFactors(context.Background(), FactorSpec{Base: base, Thetas: []float64{0, 40 * degree, 80 * degree}, Component: Blend}, 2, transfer.Run)
	if err != nil {
		t.Fatal(err)
	}
	g, err := NewFactorGrid(f)
	if err != nil {
		t.Fatal(err)
	}
	cs, _ := levels.Components(sp)
	lin := LinearFactor(cs[0])
	if fac, _, _, _ := g.At(1e-3, 0); math.Abs(fac/lin-1) > 0.02 {
		t.Errorf("unsaturated factor %.4g m/s per G, linear-Zeeman %.4g", fac, lin)
	}
	// The observation: the same model at B = 2 G, theta = 40 deg (splitting
	// 1.6e-3 Doppler widths: linear), first checkpoint, 100 K peak.
	p := base.WithDefaults()
	p.Field, p.Theta, p.Channels, p.Tolerance = 2, 40*degree, 512, 1e-7
	tr, err := transfer.Run(context.Background(), p)
	if err != nil {
		t.Fatal(err)
	}
	cp := tr.Checkpoints[0]
	ms := ModelSpectrum{Velocity: tr.Velocity, Stokes: [4][]float64{cp.I, cp.Q, cp.U, cp.V}}
	var vel []float64
	for v := -5e3; v <= 5e3; v += 50 {
		vel = append(vel, v)
	}
	o := Synthesize(&ms, vel, 0, 100/cp.IPeak, [4]float64{0.01, 0.01, 0.01, 0.001}, rand.New(rand.NewPCG(5, 8)))
	r, err := AnalyzeFeature(Feature{Name: "model", Obs: o, SatLo: 1e-3, SatHi: 1e-3, Theta: 40 * degree, Ml: math.NaN()}, g)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(r.B/2-1) > 0.03 {
		t.Errorf("B = %.4f +/- %.4f G from a model at 2 G", r.B, r.BErr)
	}
}

// TestFieldObtuseTheta: theta and 180 deg - theta give the same |B| with
// B_los of the same sign (the factor depends on the acute angle; B =
// B_los/cos(theta) changes sign with cos theta).
func TestFieldObtuseTheta(t *testing.T) {
	g := flatGrid(0.8214)
	s := SynthLine{Start: -10e3, Step: 100, Channels: 201, Peak: 50, Width: 800, B: 5, Theta: 40 * degree, Factor: 0.8214, NoiseI: 0.01, NoiseV: 0.01}
	o, _ := s.Draw(rand.New(rand.NewPCG(2, 2)))
	var b [2]float64
	for i, th := range []float64{40, 140} {
		r, err := AnalyzeFeature(Feature{Name: "x", Obs: o, SatLo: 0.01, SatHi: 0.01, Theta: th * degree, Ml: math.NaN()}, g)
		if err != nil {
			t.Fatal(err)
		}
		b[i] = r.B
	}
	if math.Abs(b[0]+b[1]) > 1e-9*math.Abs(b[0]) || b[0] <= 0 {
		t.Errorf("B(40 deg) = %v, B(140 deg) = %v; want equal and opposite, B(40) > 0", b[0], b[1])
	}
}

// TestFactorGridSaturatedTheta: the factor grid carries the saturated
// behaviour of V with theta (Watson & Wyld 2001, ApJ 558, L55, from
// memory; also Nedoluha & Watson 1990): at theta = 0 the thin-line factor
// holds at every saturation (within 1 %: the sigma components alone, no
// pi), while for g Omega >> R and R/Gamma >~ 100 the factor A/(B
// cos theta) exceeds the thin-line value more and more as theta grows, so
// that the standard relation would overestimate B cos(theta) at large
// angles. Checked:
// ratio to the linear value within 1 % at 0 deg, rising from 40 to 60 to
// 75 deg at R/Gamma = 100, and above 2 at 75 deg.
func TestFactorGridSaturatedTheta(t *testing.T) {
	sp, err := species.Resolve("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	base := transfer.Params{Species: sp, Doppler: 1000, GammaUpper: 5, GammaLower: 5}
	g, f, err := BuildFactorGrid(context.Background(), FieldGridSpec{Base: base, Component: Blend, Thetas: []float64{0, 40 * degree, 60 * degree, 75 * degree}, SatLo: 1e-3, SatHi: 100, CheckpointsPerDecade: 1}, 2, transfer.Run)
	if err != nil {
		t.Fatal(err)
	}
	for _, sat := range []float64{1e-3, 1, 100} {
		if r, _, _, _ := g.At(sat, 0); math.Abs(r/f.Linear-1) > 0.01 {
			t.Errorf("theta 0, R/Gamma %g: factor/linear = %.4f, want 1 within 1 %%", sat, r/f.Linear)
		}
	}
	var prev float64
	for _, th := range []float64{40, 60, 75} {
		r, rgo, _, _ := g.At(100, th*degree)
		if rgo > 0.1 {
			t.Fatalf("R/(g Omega) = %.3g at B0: not in the g Omega >> R regime", rgo)
		}
		ratio := r / f.Linear
		if ratio <= prev {
			t.Errorf("R/Gamma 100: factor/linear %.3f at %g deg, not above %.3f at the smaller angle", ratio, th, prev)
		}
		prev = ratio
	}
	if prev < 2 {
		t.Errorf("R/Gamma 100, 75 deg: factor/linear = %.3f, want > 2", prev)
	}
}

// TestFitZeemanReference: the fit, its independent-channel error and its
// Hanning sandwich error against testdata/field/check/fit_values.csv,
// computed with NumPy/SciPy from the equations by fit_reference.py beside
// it (same spectrum, sigma_V and window). Tolerance 1e-9 relative: the same
// arithmetic up to round-off.
func TestFitZeemanReference(t *testing.T) {
	ref, err := ecsv.ReadFile("../../testdata/field/check/fit_values.csv")
	if err != nil {
		t.Fatal(err)
	}
	get := func(c string) float64 {
		x, err := ref.Floats(c)
		if err != nil {
			t.Fatal(err)
		}
		return x[0]
	}
	o, err := ReadObserved("../../testdata/field/spectra/C12-02.ecsv", ReadOptions{Stokes: "IV"})
	if err != nil {
		t.Fatal(err)
	}
	sig := make([]float64, o.Channels())
	for i := range sig {
		sig[i] = 0.005
	}
	for _, hann := range []bool{false, true} {
		f, err := FitZeeman(ZeemanFitInput{Velocity: o.Velocity, I: o.Stokes[0], V: o.Stokes[3], SigmaV: sig, Window: [2]float64{-2000, 3800}, Hanning: hann})
		if err != nil {
			t.Fatal(err)
		}
		wantErr := get("A_err_indep_ms")
		if hann {
			wantErr = get("A_err_hanning_ms")
		}
		for _, c := range []struct {
			name      string
			got, want float64
		}{{"A", f.A, get("A_ms")}, {"C", f.C, get("C")}, {"sigma_A", f.AErr, wantErr}, {"chi2", f.Chi2, get("chi2")}, {"n", float64(f.N), get("n")}} {
			if math.Abs(c.got-c.want) > 1e-9*math.Abs(c.want) {
				t.Errorf("hanning %v: %s = %.12g, SciPy reference %.12g", hann, c.name, c.got, c.want)
			}
		}
	}
}

// TestPeakPolarization: m_l and EVPA at the I peak of a spectrum with
// known Q and U (worked by hand: Q = 0.3 I cos 2chi, U = 0.3 I sin 2chi,
// chi = 25 deg), and the first-order noise-bias correction (Wardle &
// Kronberg 1974): with P = 0.05 and sigma = 0.03 per Stokes parameter the
// debiased P is sqrt(0.05^2 - 0.03^2) = 0.04.
func TestPeakPolarization(t *testing.T) {
	o := &Observed{Velocity: []float64{0, 1, 2}}
	for k := range o.Use {
		o.Use[k] = true
		o.Err[k] = []float64{1e-9, 1e-9, 1e-9}
	}
	chi := 25 * degree
	o.Stokes[0] = []float64{0.5, 1, 0.5}
	o.Stokes[1] = []float64{0, 0.3 * math.Cos(2*chi), 0}
	o.Stokes[2] = []float64{0, 0.3 * math.Sin(2*chi), 0}
	o.Stokes[3] = []float64{0, 0, 0}
	ml, _, evpa, _, ok := PeakPolarization(o)
	if !ok || math.Abs(ml-0.3) > 1e-9 || math.Abs(evpa-chi) > 1e-9 {
		t.Errorf("m_l %v, EVPA %v deg, ok %v; want 0.3, 25 deg", ml, evpa/degree, ok)
	}
	o.Stokes[1] = []float64{0, 0.05, 0}
	o.Stokes[2] = []float64{0, 0, 0}
	o.Err[1] = []float64{0.03, 0.03, 0.03}
	o.Err[2] = []float64{0.03, 0.03, 0.03}
	ml, mlErr, _, _, _ := PeakPolarization(o)
	if math.Abs(ml-0.04) > 1e-12 || math.Abs(mlErr-0.03) > 1e-12 {
		t.Errorf("debiased m_l %v +/- %v, want 0.04 +/- 0.03", ml, mlErr)
	}
}
