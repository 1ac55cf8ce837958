package transfer

import (
	"context"
	"errors"
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
// output is still finite and the validity warning is given.
func TestZeroFieldWarns(t *testing.T) {
	tr := j10(0.5, 0)
	tj := run(t, tr, Params{Theta: 1, Doppler: 1000, Saturation: 10})
	c := tj.Checkpoints[len(tj.Checkpoints)-1]
	if c.Valid || len(tj.Warnings) == 0 || !strings.Contains(strings.Join(tj.Warnings, " "), "g Omega = 0") {
		t.Errorf("zero field: valid %v, warnings %q", c.Valid, tj.Warnings)
	}
	if c.PV > 1e-12 {
		t.Errorf("zero field: P_V = %g, want 0", c.PV)
	}
}
