package interpret

import (
	"context"
	"errors"
	"math"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs/figures"
	"maserpol/transfer"
)

// gkkQb is the saturated GKK limit of q_b for a J=1-0 maser (Goldreich,
// Keeley & Kwan 1973, ApJ 179, 111; physics.md section 7).
func gkkQb(theta float64) float64 {
	s2 := math.Sin(theta) * math.Sin(theta)
	if s2 < 1.0/3 {
		return 1
	}
	return (2 - 3*s2) / (3 * s2)
}

// constructed builds a curve whose polarization approaches p(s) = q *
// s/(1+s): zero when unsaturated (GKK: unsaturated masers are not linearly
// polarized), q when saturated. The shape between is invented; the tests
// below only use saturation ranges where the conclusion does not depend
// on it.
func constructed(q, rg float64) Curve {
	var c Curve
	for k := -30; k <= 40; k++ {
		s := math.Pow(10, float64(k)/10)
		f := s / (1 + s)
		c = append(c, Sample{Saturation: s, Ml: math.Abs(q) * f, Qb: q * f, RoverGOmega: rg * s, Excess: rg * s / ValidLimit})
	}
	return c
}

// gkkResults: isotropic field cases on a 5 deg grid with GKK curves, one
// anisotropic case of fixed projected polarization pAniso (perpendicular
// when negative q_b) and one seed case of q_b = qSeed at low saturation.
func gkkResults(qAniso, qSeed float64) []CaseResult {
	var rs []CaseResult
	for i := 0; i <= 18; i++ {
		th := float64(i) * 5 * math.Pi / 180
		rs = append(rs, CaseResult{Case: Case{Mechanism: FieldIsotropic, Theta: th}, Curve: constructed(gkkQb(th), 1e-5)})
	}
	flat := func(q float64) Curve {
		var c Curve
		for k := -30; k <= 40; k++ {
			s := math.Pow(10, float64(k)/10)
			c = append(c, Sample{Saturation: s, Ml: math.Abs(q), Qb: q, RoverGOmega: 1e-5 * s, Excess: 1e-5 * s / ValidLimit})
		}
		return c
	}
	rs = append(rs, CaseResult{Case: Case{Mechanism: AnisotropicPump, Theta: math.Pi / 2, Alignment: 0.1}, Curve: flat(qAniso)})
	// A seed whose polarization decays with saturation: qSeed/(1+s).
	var sc Curve
	for k := -30; k <= 40; k++ {
		s := math.Pow(10, float64(k)/10)
		sc = append(sc, Sample{Saturation: s, Ml: math.Abs(qSeed) / (1 + s), Qb: qSeed / (1 + s), RoverGOmega: 1e-5 * s, Excess: 1e-5 * s / ValidLimit})
	}
	rs = append(rs, CaseResult{Case: Case{Mechanism: PolarizedSeed, Theta: math.Pi / 2, SeedFraction: math.Abs(qSeed)}, Curve: sc})
	return rs
}

func verdict(t *testing.T, d *Diagnosis, m Mechanism) Verdict {
	t.Helper()
	for _, v := range d.Verdicts {
		if v.Mechanism == m {
			return v
		}
	}
	t.Fatalf("no verdict for %v", m)
	return Verdict{}
}

func TestEvaluateConstructed(t *testing.T) {
	for _, tc := range []struct {
		name            string
		m               Measurement
		qAniso, qSeed   float64
		exceeds         bool
		fieldConsistent string
		aniso, seed     bool
	}{
		// physics.md 7: at high saturation the perpendicular m_l of a J=1-0
		// maser is at most 1/3 (theta = 90 deg); 0.40 +/- 0.02 exceeds it
		// by more than 2 sigma, so a non-field mechanism must be named.
		{"perpendicular 0.40 saturated", Measurement{Ml: 0.40, MlErr: 0.02, Branch: Perpendicular, SatLo: 100, SatHi: 1000}, -0.40, -0.9, true, "none", true, false},
		// 0.30 perpendicular: GKK gives -q_b = 0.2450 at 70 deg and 0.2855 at
		// 75 deg; linear in theta between them, times s/(1+s) at R/Gamma =
		// 1000, it reaches 0.26 at 71.9 deg (python3 by hand), and stays
		// within 0.26..0.34 up to 90 deg (1/3).
		{"perpendicular 0.30 saturated", Measurement{Ml: 0.30, MlErr: 0.02, Branch: Perpendicular, SatLo: 100, SatHi: 1000}, -0.9, -0.9, false, "theta 71.9-90 deg", false, false},
		// Parallel 0.8 over R/Gamma 1..1000: theta < 35.3 deg (q_b -> 1)
		// reaches it; at 40 deg q_b -> 0.613 (< 0.7); linear in theta from
		// 35 deg (1) to 40 deg it falls to 0.7 at 38.9 deg.
		{"parallel 0.80", Measurement{Ml: 0.80, MlErr: 0.05, Branch: Parallel, SatLo: 1, SatHi: 1000}, -0.9, 0.9, false, "theta 0-38.9 deg", false, false},
		// Unsaturated masers are not linearly polarized (GKK): m_l = 0.2 at
		// R/Gamma 1e-3..1e-2 exceeds the field alone; the seed reproduces it.
		{"unsaturated 0.20", Measurement{Ml: 0.20, MlErr: 0.02, Branch: AnyBranch, SatLo: 1e-3, SatHi: 1e-2}, 0.9, 0.2, true, "none", false, true},
		// The orthogonal branch: a perpendicular anisotropic-pumping case does
		// not reproduce a parallel measurement. The field does, between the
		// grid angles 40 deg (q_b -> 0.613) and 45 deg (0.333): q_b
		// interpolated linearly in theta passes 0.44 at 43.1 deg and 0.36 at
		// 44.5 deg (times s/(1+s): 43.0 deg at R/Gamma = 100).
		{"parallel 0.40 between grid angles", Measurement{Ml: 0.40, MlErr: 0.02, Branch: Parallel, SatLo: 100, SatHi: 1000}, -0.40, -0.9, false, "theta 43-44.5 deg", false, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d, err := Evaluate(tc.m, gkkResults(tc.qAniso, tc.qSeed), 30, 1e-3)
			if err != nil {
				t.Fatal(err)
			}
			if d.ExceedsField != tc.exceeds {
				t.Errorf("ExceedsField = %v, want %v (field max %.4f)", d.ExceedsField, tc.exceeds, d.FieldMax)
			}
			if v := verdict(t, d, FieldIsotropic); v.Consistent != tc.fieldConsistent {
				t.Errorf("field consistent = %q, want %q", v.Consistent, tc.fieldConsistent)
			}
			if v := verdict(t, d, AnisotropicPump); v.Reproduces != tc.aniso {
				t.Errorf("anisotropic reproduces = %v, want %v", v.Reproduces, tc.aniso)
			}
			if v := verdict(t, d, PolarizedSeed); v.Reproduces != tc.seed {
				t.Errorf("seed reproduces = %v, want %v", v.Reproduces, tc.seed)
			}
			text := strings.Join(d.Statements, " ")
			if tc.exceeds && !strings.Contains(text, "other than the field") {
				t.Errorf("statements do not name a non-field mechanism: %s", text)
			}
			if tc.aniso && !strings.Contains(text, "anisotropic pumping") {
				t.Errorf("statements do not name anisotropic pumping: %s", text)
			}
		})
	}
}

func TestEvaluateValidity(t *testing.T) {
	rs := gkkResults(-0.4, -0.9)
	for i := range rs {
		for j := range rs[i].Curve {
			rs[i].Curve[j].RoverGOmega = 0.5 // R/gOmega above 0.1 everywhere, rate equations
			rs[i].Curve[j].Excess = 0.5 / ValidLimit
		}
	}
	d, err := Evaluate(Measurement{Ml: 0.30, MlErr: 0.02, Branch: Perpendicular, SatLo: 100, SatHi: 1000}, rs, 1, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	v := verdict(t, d, FieldIsotropic)
	if v.Valid || !v.Reproduces {
		t.Errorf("valid = %v, reproduces = %v; want false, true", v.Valid, v.Reproduces)
	}
	if !strings.Contains(strings.Join(d.Warnings, " "), "OUTSIDE its validity") {
		t.Errorf("no validity warning: %q", d.Warnings)
	}
}

func TestEvaluateBadMeasurement(t *testing.T) {
	for _, m := range []Measurement{
		{Ml: 1.2, MlErr: 0.1, SatLo: 1, SatHi: 2},
		{Ml: 0.2, MlErr: -0.1, SatLo: 1, SatHi: 2},
		{Ml: 0.2, MlErr: 0.1, SatLo: 3, SatHi: 2},
		{Ml: 0.2, MlErr: 0.1, SatLo: 0, SatHi: 2},
	} {
		if _, err := Evaluate(m, gkkResults(0, 0), 1, 1); err == nil || !strings.Contains(err.Error(), "allowed") {
			t.Errorf("%+v: error %v, want one naming the allowed range", m, err)
		}
	}
}

func TestBranchOf(t *testing.T) {
	tol := 5 * math.Pi / 180
	for _, tc := range []struct {
		deg  float64
		want Branch
	}{{0, Parallel}, {30, Parallel}, {-20, Parallel}, {90, Perpendicular}, {70, Perpendicular}, {45, AnyBranch}, {-43, AnyBranch}, {180, Parallel}} {
		if got := BranchOf(tc.deg*math.Pi/180, tol); got != tc.want {
			t.Errorf("BranchOf(%g deg) = %v, want %v", tc.deg, got, tc.want)
		}
	}
}

func TestCurveAt(t *testing.T) {
	c := Curve{{Saturation: 1, Ml: 0.1}, {Saturation: 100, Ml: 0.3}}
	// Linear in log saturation: halfway in log at 10.
	if s, ok := c.At(10); !ok || math.Abs(s.Ml-0.2) > 1e-12 {
		t.Errorf("At(10) = %v, %v; want 0.2, true", s.Ml, ok)
	}
	if s, ok := c.At(1000); ok || s.Ml != 0.3 {
		t.Errorf("At(1000) = %v, %v; want clamped 0.3, false", s.Ml, ok)
	}
}

func TestRunCasesOrder(t *testing.T) {
	var cs []Case
	for i := 0; i < 9; i++ {
		cs = append(cs, Case{Params: transfer.Params{Theta: float64(i)}})
	}
	fake := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		return &transfer.Trajectory{Checkpoints: []transfer.Checkpoint{{Saturation: 1, Ml: p.Theta}}}, nil
	}
	for _, w := range []int{1, 3} {
		rs := RunCases(context.Background(), cs, w, fake, nil)
		for i, r := range rs {
			if r.Curve[0].Ml != float64(i) {
				t.Fatalf("workers %d: case %d has result %v", w, i, r.Curve[0].Ml)
			}
		}
	}
}

// TestDiagnoseSiO runs the quick grid through the real model: the field
// alone tops out at 1/3 perpendicular at high saturation (GKK), so 0.40 is
// beyond it and anisotropic pumping must be the mechanism named.
func TestDiagnoseSiO(t *testing.T) {
	sp, err := species.Resolve("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	spec := DiagnoseSpec{
		Base:        transfer.Params{Species: sp, Doppler: 1000, CheckpointsPerDecade: 4},
		Measurement: Measurement{Ml: 0.40, MlErr: 0.02, Branch: Perpendicular, SatLo: 100, SatHi: 1000},
		Grid:        QuickGrid(),
	}
	d, err := Diagnose(context.Background(), spec, 2, transfer.Run, nil)
	if err != nil {
		t.Fatal(err)
	}
	// GKK limit 1/3; the model approaches it from below (0.330 at R/Gamma
	// 100 in transfer's own runs), tolerance 0.01 for incomplete saturation.
	if math.Abs(d.FieldMax-1.0/3) > 0.01 {
		t.Errorf("field max = %.4f, want 1/3 within 0.01", d.FieldMax)
	}
	if !d.ExceedsField {
		t.Error("0.40 perpendicular does not exceed the field alone")
	}
	if v := verdict(t, d, AnisotropicPump); !v.Reproduces {
		t.Errorf("anisotropic pumping does not reproduce 0.40 (reach %.3f..%.3f)", v.Reach.Lo, v.Reach.Hi)
	}
	if v := verdict(t, d, FieldIsotropic); !v.Valid {
		t.Errorf("default field %.3g G is not in the valid regime: R/gOmega %.3g..%.3g", d.Field, v.RGOmega.Lo, v.RGOmega.Hi)
	}
	// The weak-field cases run the density matrix: valid at R > gOmega
	// (physics.md section 8), and they say how the EVPA lies.
	if v := verdict(t, d, WeakField); !v.Valid || v.RGOmega.Lo < 1 {
		t.Errorf("weak-field cases: valid %v, R/gOmega %.3g..%.3g (want valid, >= 1)", v.Valid, v.RGOmega.Lo, v.RGOmega.Hi)
	}
	// The figure: a shaded band per mechanism, the measurement as a point
	// with its error bar, every panel showing ink.
	fig := DiagnosisFigure(d, "")
	if n := len(fig.Panels[0].Bands); n != len(d.Envelopes)+1 {
		t.Errorf("%d bands for %d mechanisms and the measurement", n, len(d.Envelopes))
	}
	measured := false
	for _, c := range fig.Panels[0].Curves {
		measured = measured || len(c.YErr) == 1 && c.YErr[0] == 2*0.02
	}
	if !measured {
		t.Error("the measurement has no error bar")
	}
	paths, err := fig.Save(filepath.Join(t.TempDir(), "diag"), []string{"png"})
	if err != nil {
		t.Fatal(err)
	}
	if e, err := figures.EmptyPanels(paths[0], fig); err != nil || len(e) > 0 {
		t.Errorf("empty panels %v (%v)", e, err)
	}
}

// pvResults: isotropic field cases on a 5 deg grid with q_b = 0.5 at every
// angle and saturation and P_V = 0.1 cos(theta), so that m_l = 0.5 allows
// every angle and P_V alone selects them. Invented curves.
func pvResults(rg float64) []CaseResult {
	var rs []CaseResult
	for i := 0; i <= 18; i++ {
		th := float64(i) * 5 * math.Pi / 180
		var c Curve
		for k := -30; k <= 40; k++ {
			s := math.Pow(10, float64(k)/10)
			c = append(c, Sample{Saturation: s, Ml: 0.5, Qb: 0.5, PV: 0.1 * math.Cos(th), RoverGOmega: rg * s, Excess: rg * s / ValidLimit})
		}
		rs = append(rs, CaseResult{Case: Case{Mechanism: FieldIsotropic, Theta: th}, Curve: c})
	}
	return rs
}

// TestEvaluatePV: P_V = 0.05 +/- 0.005 (2 sigma: 0.04..0.06) with P_V =
// 0.1 cos(theta) interpolated linearly between the 5 deg grid angles
// selects 53.1..66.4 deg (0.06 is reached at 53.09 deg between 50 and 55
// deg, 0.04 at 66.40 deg between 65 and 70 deg; /usr/bin/python3 by hand).
// Without P_V, m_l allows every angle; the verdict says P_V narrowed it.
func TestEvaluatePV(t *testing.T) {
	m := Measurement{Ml: 0.5, MlErr: 0.02, PV: 0.05, PVErr: 0.005, HasPV: true, SatLo: 1, SatHi: 100}
	d, err := Evaluate(m, pvResults(1e-5), 10, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	v := verdict(t, d, FieldIsotropic)
	if v.Consistent != "theta 53.1-66.4 deg" || v.ConsistentMl != "theta 0-90 deg" || !v.PVConstrained {
		t.Errorf("consistent %q, from m_l alone %q, P_V constrained %v; want theta 53.1-66.4 deg, theta 0-90 deg, true", v.Consistent, v.ConsistentMl, v.PVConstrained)
	}
	if text := strings.Join(d.Statements, " "); !strings.Contains(text, "narrowed the field angles from theta 0-90 deg (m_l alone) to theta 53.1-66.4 deg") {
		t.Errorf("statements do not say how P_V constrained the angles: %s", text)
	}
	// A P_V range holding every angle's P_V (0..0.1 within -0.05..0.15) does not constrain.
	m.PV, m.PVErr = 0.05, 0.05
	d, err = Evaluate(m, pvResults(1e-5), 10, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	if v := verdict(t, d, FieldIsotropic); v.PVConstrained || !strings.Contains(strings.Join(d.Statements, " "), "did not narrow") {
		t.Errorf("P_V constrained %v; statements %q", v.PVConstrained, d.Statements)
	}
}

// R/(g Omega) = 1e-3 R/Gamma crosses 0.1 at R/Gamma = 100, inside the
// measured 10..300: the verdict is partly outside validity, valid up to
// 100 (the log-log interpolation is exact for this power law).
func TestEvaluatePartlyValid(t *testing.T) {
	d, err := Evaluate(Measurement{Ml: 0.5, MlErr: 0.02, SatLo: 10, SatHi: 300}, pvResults(1e-3), 10, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	v := verdict(t, d, FieldIsotropic)
	if v.Valid || !v.PartlyValid() || math.Abs(v.ValidUpTo/100-1) > 1e-9 {
		t.Errorf("valid %v, partly %v, valid up to %g; want false, true, 100", v.Valid, v.PartlyValid(), v.ValidUpTo)
	}
	if w := strings.Join(d.Warnings, " "); !strings.Contains(w, "partly outside its validity") || strings.Contains(w, "OUTSIDE") {
		t.Errorf("warnings %q", d.Warnings)
	}
}

// Intervals that touch to within the merge gap print as one range, never
// as "6.9-30, 30-49.6".
func TestMergeTouchingIntervals(t *testing.T) {
	got := formatIntervals(mergeIntervals([]Interval{{30.04, 49.6}, {6.9, 29.96}, {70, 80}}, 0.5))
	if got != "6.9-49.6, 70-80" {
		t.Errorf("got %q, want \"6.9-49.6, 70-80\"", got)
	}
}

// TestWeakFieldNotComputed: a weak-field model whose density matrix is
// beyond practical size is reported as not computed without running
// (water at 1.3 mG, every one of its 886 unknowns strongly coupled at
// R/Gamma = 1e3), and a mechanism none of whose models ran is listed among
// what the diagnosis cannot rule out.
func TestWeakFieldNotComputed(t *testing.T) {
	sp, err := species.Preset("h2o-22")
	if err != nil {
		t.Fatal(err)
	}
	called := false
	run := practicalDensity(func(context.Context, transfer.Params) (*transfer.Trajectory, error) {
		called = true
		return nil, errors.New("ran")
	})
	p := transfer.Params{Species: sp, Field: 1.3e-3, Theta: 1, Doppler: 1000, Saturation: 1e3, Channels: 64, Population: transfer.Density}
	if _, err := run(context.Background(), p); err == nil || called || !strings.Contains(err.Error(), "not computed") {
		t.Errorf("error %v, inner run called %v", err, called)
	}
	p.Population = transfer.Auto
	if _, err := run(context.Background(), p); !called || err == nil || err.Error() != "ran" {
		t.Errorf("automatic model: inner run called %v, error %v", called, err)
	}

	rs := gkkResults(-0.9, -0.9)
	for _, th := range []float64{0.5, 1} {
		rs = append(rs, CaseResult{Case: Case{Mechanism: WeakField, Theta: th, RoverGOmega: 10}, Err: errors.New("not computed: too large")})
	}
	d, err := Evaluate(Measurement{Ml: 0.30, MlErr: 0.02, Branch: Perpendicular, SatLo: 100, SatHi: 1000}, rs, 30, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	if v := verdict(t, d, WeakField); v.NModels != 0 || v.Reproduces {
		t.Errorf("weak field: %d models, reproduces %v", v.NModels, v.Reproduces)
	}
	if text := strings.Join(d.CannotRuleOut, " "); !strings.Contains(text, "weak field (R > g Omega) mechanism: none of its models was computed") {
		t.Errorf("cannot rule out: %s", text)
	}
}

// TestDiagnoseWaterWithinAutoLimits: the diagnosis runs its models to
// three times the top of the measured saturation, so that for water at
// the default field the field, pumping and seed cases stay within the
// automatic model's limits and get the density matrix (valid where
// R/gOmega ~ 1), instead of the rate equations flagged outside validity
// (at ten times, 2610 unknowns per class at R/Gamma = 1e4, they did not).
// The models are not run: each case's parameters are checked with
// transfer.Model.DensitySize.
func TestDiagnoseWaterWithinAutoLimits(t *testing.T) {
	sp, err := species.Preset("h2o-22")
	if err != nil {
		t.Fatal(err)
	}
	var mu sync.Mutex
	var seen []transfer.Params
	run := func(_ context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		mu.Lock()
		seen = append(seen, p)
		mu.Unlock()
		return nil, errors.New("not run in this test")
	}
	spec := DiagnoseSpec{Base: transfer.Params{Species: sp, Doppler: 1000}, Measurement: Measurement{Ml: 0.3, MlErr: 0.03, SatLo: 100, SatHi: 1000}, Grid: QuickGrid()}
	if _, err := Diagnose(context.Background(), spec, 1, run, nil); len(seen) == 0 {
		t.Fatalf("no model run: %v", err)
	} // every model fails here; only the parameters count
	checked := 0
	for _, p := range seen {
		if p.Population == transfer.Density {
			continue // the weak-field cases: beyond the limits by design (TestWeakFieldNotComputed)
		}
		tr, err := levels.NewTransition(p.Species, p.Field)
		if err != nil {
			t.Fatal(err)
		}
		m, err := transfer.NewModel(tr, p)
		if err != nil {
			t.Fatal(err)
		}
		if n, strong, ok := m.DensitySize(); !ok {
			t.Fatalf("B = %.3g G to R/Gamma = %.3g: %d unknowns, %d strong: beyond the automatic model's limits", p.Field, p.Saturation, n, strong)
		}
		checked++
	}
	if checked == 0 {
		t.Fatal("no field, pumping or seed case was run")
	}
}
