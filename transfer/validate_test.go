package transfer

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"
)

// TestValidate: bad parameters give errors naming the field and the
// allowed range.
func TestValidate(t *testing.T) {
	tr := j10Split(2e3, 10)
	good := Params{Theta: deg(60), Doppler: 1000}
	for _, tc := range []struct {
		name  string
		edit  func(p *Params)
		field string
	}{
		{"theta above pi", func(p *Params) { p.Theta = 4 }, "Theta"},
		{"negative theta", func(p *Params) { p.Theta = -0.1 }, "Theta"},
		{"NaN field", func(p *Params) { p.Chi = math.NaN() }, "Chi"},
		{"negative Doppler", func(p *Params) { p.Doppler = -1 }, "Doppler"},
		{"no Doppler", func(p *Params) { p.Doppler = 0 }, "Doppler"},
		{"infinite Gamma", func(p *Params) { p.GammaUpper = math.Inf(1) }, "GammaUpper"},
		{"negative Gamma", func(p *Params) { p.GammaLower = -2 }, "GammaLower"},
		{"negative saturation", func(p *Params) { p.Saturation = -1 }, "Saturation"},
		{"negative gain", func(p *Params) { p.Gain = -3 }, "Gain"},
		{"seed over-polarized", func(p *Params) { p.Seed.LinearFraction, p.Seed.CircularFraction = 0.8, 0.8 }, "Seed"},
		{"alignment", func(p *Params) { p.Pump = Pump{Kind: Anisotropic, Alignment: 2} }, "Pump.Alignment"},
		{"no inversion", func(p *Params) { p.Pump.LowerPump = 1 }, "Pump.LowerPump"},
		{"Faraday without length", func(p *Params) { p.ElectronDensity = 1 }, "GainLength"},
		{"few channels", func(p *Params) { p.Channels = 3 }, "Channels"},
		{"tolerance", func(p *Params) { p.Tolerance = 0.5 }, "Tolerance"},
	} {
		p := good
		tc.edit(&p)
		_, err := NewModel(tr, p)
		var pe *ParamError
		if !errors.As(err, &pe) || pe.Field != tc.field || !strings.Contains(err.Error(), tc.field) {
			t.Errorf("%s: error %v, want a ParamError naming %s", tc.name, err, tc.field)
		}
	}
	// A species with no allowed transition.
	empty := j10Split(2e3, 10)
	empty.Lines = nil
	if _, err := NewModel(empty, good); err == nil || !strings.Contains(err.Error(), "no allowed transition") {
		t.Errorf("no lines: error %v", err)
	}
	if _, err := Run(context.Background(), good); err == nil {
		t.Error("Run without species: no error")
	}
}

// TestRunCancelled: Run stops on a cancelled context.
func TestRunCancelled(t *testing.T) {
	m, err := NewModel(j10Split(2e3, 10), Params{Theta: 1, Doppler: 1000})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := m.Run(ctx); !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}

// TestZeroFieldWarns: without a field there is no Zeeman splitting; the
// populations-only output is still finite and the validity warning is
// given (the density matrix, valid there, is tested in coherence_test.go).
func TestZeroFieldWarns(t *testing.T) {
	tr := j10(0.5, 0)
	tj := run(t, tr, Params{Theta: 1, Doppler: 1000, Saturation: 10, Population: Rates})
	c := tj.Checkpoints[len(tj.Checkpoints)-1]
	if c.Valid || len(tj.Warnings) == 0 || !strings.Contains(strings.Join(tj.Warnings, " "), "g Omega = 0") {
		t.Errorf("zero field: valid %v, warnings %q", c.Valid, tj.Warnings)
	}
	if c.PV > 1e-12 {
		t.Errorf("zero field: P_V = %g, want 0", c.PV)
	}
}

// TestStepErrorPath forces the integrator's failure path: a local error
// tolerance of 1e-30 (below rounding, set past Validate through the
// unexported copy of the parameters) cannot be met by any step, so the step
// size collapses below its floor. Run must return a *StepError whose
// Position, Channel and Velocity locate the failure (finite, on the grid,
// and named in the message), and no trajectory, so no NaN or partial output
// reaches the caller. The same model then runs normally again with a sane
// tolerance: the failure leaves no state behind.
func TestStepErrorPath(t *testing.T) {
	p := Params{Theta: deg(60), Doppler: 1000, Saturation: 10}
	m, err := NewModel(j10Split(2e3, 10), p)
	if err != nil {
		t.Fatal(err)
	}
	m.p.Tolerance = 1e-30
	tj, err := m.Run(context.Background())
	var se *StepError
	if !errors.As(err, &se) {
		t.Fatalf("error %v (%T), want a *StepError", err, err)
	}
	if tj != nil {
		t.Errorf("failed run returned a trajectory with %d checkpoints", len(tj.Checkpoints))
	}
	if math.IsNaN(se.Position) || math.IsInf(se.Position, 0) || se.Position < 0 {
		t.Errorf("Position %g, want a finite gain >= 0", se.Position)
	}
	if se.Channel < 0 || se.Channel >= m.n || se.Velocity != m.v[se.Channel] {
		t.Errorf("Channel %d (v = %g m/s), want a channel of the grid and its velocity", se.Channel, se.Velocity)
	}
	msg := err.Error()
	for _, want := range []string{
		fmt.Sprintf("at gain %.6g", se.Position),
		fmt.Sprintf("channel %d", se.Channel),
		fmt.Sprintf("v = %.4g km/s", se.Velocity/1e3),
		"cannot meet the tolerance",
	} {
		if !strings.Contains(msg, want) {
			t.Errorf("message %q does not contain %q", msg, want)
		}
	}
	if strings.Contains(msg, "NaN") {
		t.Errorf("message %q contains NaN", msg)
	}
	m.p.Tolerance = DefaultTolerance
	again := run(t, m.tr, p) // a fresh model: the reference
	tj, err = m.Run(context.Background())
	if err != nil {
		t.Fatalf("rerun after failure: %v", err)
	}
	a, b := tj.Checkpoints[len(tj.Checkpoints)-1], again.Checkpoints[len(again.Checkpoints)-1]
	if a.Saturation != b.Saturation || a.Ml != b.Ml || a.PV != b.PV {
		t.Errorf("rerun after failure differs from a fresh model: (%g, %g, %g) vs (%g, %g, %g)", a.Saturation, a.Ml, a.PV, b.Saturation, b.Ml, b.PV)
	}
}

// TestGainModeCheckpoints: a thin, gain-limited column that never reaches
// FirstCheckpoint still records its history on the same log grid, and
// the unsaturated growth is exponential in the gain (I = I_seed e^tau at
// line centre for R << Gamma: the standard unsaturated maser, common practice).
func TestGainModeCheckpoints(t *testing.T) {
	p := Params{Species: testSpecies(-0.155), Field: 5, Theta: math.Pi / 2, Doppler: 1000, Channels: 64, Gain: 5}
	tr, err := Run(context.Background(), p)
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Checkpoints) < 10 {
		t.Fatalf("%d checkpoints for 5 e-folds of gain at 8 per decade; want >= 10", len(tr.Checkpoints))
	}
	t.Logf("%d checkpoints, seed R/Gamma %.3g, final %.3g", len(tr.Checkpoints), tr.SeedSaturation, tr.Checkpoints[len(tr.Checkpoints)-1].Saturation)
	last := tr.Checkpoints[len(tr.Checkpoints)-1]
	if math.Abs(last.Gain-5) > 1e-9 {
		t.Errorf("last checkpoint at gain %v, want 5", last.Gain)
	}
	for i := 1; i < len(tr.Checkpoints); i++ {
		a, b := tr.Checkpoints[i-1], tr.Checkpoints[i]
		if !(b.Saturation > a.Saturation) {
			t.Fatalf("checkpoint %d: saturation %v not above %v", i, b.Saturation, a.Saturation)
		}
		// Unsaturated: ln(I_peak) grows with the line-centre gain, within
		// the profile sampling (a few per cent at 64 channels).
		if got := math.Log(b.IPeak/a.IPeak) / (b.Gain - a.Gain); math.Abs(got-1) > 0.03 {
			t.Errorf("checkpoint %d: d ln I / d tau = %.4f, want 1", i, got)
		}
	}
}
