package runs

import (
	"context"
	"math"
	"strings"
	"testing"

	"maserpol/levels/species"
	"maserpol/transfer"
)

// gaussTrajectory is one checkpoint of a Gaussian line of 1/e half-width
// w (m/s) centred at c on n channels from v0 to v1 (m/s).
func gaussTrajectory(n int, v0, v1, c, w float64) *transfer.Trajectory {
	tr := &transfer.Trajectory{}
	cp := transfer.Checkpoint{Valid: true}
	for i := 0; i < n; i++ {
		v := v0 + (v1-v0)*float64(i)/float64(n-1)
		tr.Velocity = append(tr.Velocity, v)
		x := (v - c) / w
		cp.I = append(cp.I, math.Exp(-x*x))
	}
	tr.Checkpoints = []transfer.Checkpoint{cp}
	return tr
}

// TestCheckGrid checks each reason a grid cannot hold a result, on
// Gaussian lines whose width in channels is known exactly (FWHM = 2
// sqrt(ln 2) w for exp(-(v/w)^2)).
func TestCheckGrid(t *testing.T) {
	sio, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	p := transfer.Params{Species: sio, Field: 10}
	for _, c := range []struct {
		name   string
		tr     *transfer.Trajectory
		valid  bool
		reason string
	}{
		// 201 channels over +-4 km/s: 40 m/s each; w = 1 km/s is 25 channels.
		{"resolved", gaussTrajectory(201, -4000, 4000, 0, 1000), true, ""},
		// w = 100 m/s is 2.5 channels.
		{"narrow", gaussTrajectory(201, -4000, 4000, 0, 100), false, "channels per Doppler half-width"},
		// w = 150 m/s is 3.75 channels: resolved.
		{"just resolved", gaussTrajectory(201, -4000, 4000, 0, 150), true, ""},
		// A 1 km/s line on a +-1 km/s grid: cut at both ends.
		{"cut", gaussTrajectory(201, -1000, 1000, 0, 1000), false, "edge of the channel grid"},
		// The SiO line (near 0 km/s) is off a grid from 50 to 60 km/s.
		{"line off the grid", gaussTrajectory(201, 50000, 60000, 55000, 1000), false, "outside the channel grid"},
	} {
		w := checkGrid(context.Background(), p, c.tr)
		if got := c.tr.Checkpoints[0].Valid; got != c.valid {
			t.Errorf("%s: valid = %v, want %v (warnings %q)", c.name, got, c.valid, w)
		}
		if c.reason != "" && !strings.Contains(strings.Join(w, "\n"), c.reason) {
			t.Errorf("%s: warnings %q do not say %q", c.name, w, c.reason)
		}
		if c.valid && len(w) > 0 {
			t.Errorf("%s: unexpected warnings %q", c.name, w)
		}
	}
}
