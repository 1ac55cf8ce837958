package transfer

import (
	"context"
	"math"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

// TestToleranceCalibration is the calibration of DefaultTolerance (with
// errFloor and maxDLnI): at the default, q_b stays within 1e-4 absolute and
// P_V within 0.1 % (relative) of a run at Tolerance 1e-6 at every
// checkpoint, for J=1-0 (128 channels, to R/Gamma = 1e4), h2o-22 at 0.3 G
// (128 channels) and synthetic-j6-5 at 1 G (64 channels), both to 1e3 (the
// channels are fewer than a converged spectrum needs, to keep the reference
// runs short; at 256 channels the errors were smaller: j6-5 at 4e-4 moved
// q_b by 1.8e-5 and P_V by 0.043 %, 193 steps). The bounds are the project's accuracy goal for the
// reported quantities (issue 13); the tight run stands in for the exact
// solution (its own error is below 1e-6 in q_b, measured against 1e-7 on
// J=1-0).
func TestToleranceCalibration(t *testing.T) {
	cases := []struct {
		name     string
		field    float64
		channels int
		sat      float64
	}{
		{"j1-0", 10, 128, 1e4},
		{"h2o-22", 0.3, 128, 1e3},
		{"synthetic-j6-5", 1, 64, 1e3},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			var tr *levels.Transition
			p := Params{Theta: deg(60), Doppler: 1000, Channels: c.channels, Saturation: c.sat, Population: Rates}
			if c.name == "j1-0" {
				tr = j10Split(144, c.field)
				p.GammaUpper, p.GammaLower = 0.01, 0.01
			} else {
				sp, err := species.Preset(c.name)
				if err != nil {
					t.Fatal(err)
				}
				if tr, err = levels.NewTransition(sp, c.field); err != nil {
					t.Fatal(err)
				}
			}
			run := func(tol float64) *Trajectory {
				q := p
				q.Tolerance = tol
				m, err := NewModel(tr, q)
				if err != nil {
					t.Fatal(err)
				}
				tj, err := m.Run(context.Background())
				if err != nil {
					t.Fatal(err)
				}
				return tj
			}
			ref, got := run(1e-6), run(0) // 0: DefaultTolerance
			if len(got.Checkpoints) != len(ref.Checkpoints) {
				t.Fatalf("%d checkpoints, reference %d", len(got.Checkpoints), len(ref.Checkpoints))
			}
			dq, dp := 0.0, 0.0
			for i, g := range got.Checkpoints {
				r := ref.Checkpoints[i]
				if math.Abs(g.Saturation/r.Saturation-1) > 1e-5 {
					t.Errorf("checkpoint %d at R/Gamma = %g, reference %g", i, g.Saturation, r.Saturation)
				}
				dq = math.Max(dq, math.Abs(g.Qb-r.Qb))
				dp = math.Max(dp, math.Abs(g.PV/r.PV-1))
			}
			t.Logf("%s: %d steps (reference %d): max |dq_b| %.2g, max |dP_V|/P_V %.2g", c.name, got.Steps, ref.Steps, dq, dp)
			if dq > 1e-4 {
				t.Errorf("q_b differs from the tolerance-1e-6 run by %.3g (allowed 1e-4)", dq)
			}
			if dp > 1e-3 {
				t.Errorf("P_V differs from the tolerance-1e-6 run by %.3g relative (allowed 1e-3)", dp)
			}
		})
	}
}
