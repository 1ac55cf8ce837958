package transfer

import (
	"context"
	"math"
	"strings"
	"testing"

	"maserpol/levels/species"
)

// TestDefaultChannelsConverged doubles the channels of the default grid:
// P_V must stay within 0.5 % at every checkpoint up to R/Gamma = 100, and
// the default grid must not draw the channel warning, while a grid of a
// quarter of the channels must. (Run for the H2O preset as well when the
// default was chosen, at 0.1 G: 256 channels 0.72 %, 384 0.42 %, 512
// 0.16 %, against 2048; too slow for the suite.)
func TestDefaultChannelsConverged(t *testing.T) {
	for _, c := range []struct {
		sp string
		b  float64 // G
	}{{"sio-v1-j1-0", 3}, {"hcn-like-j1-0", 1}} {
		sp, err := species.Resolve(c.sp)
		if err != nil {
			t.Fatal(err)
		}
		run := func(n int) *Trajectory {
			p := Params{Species: sp, Field: c.b, Theta: 60 * math.Pi / 180, Doppler: 1000, Channels: n,
				Saturation: 100, CheckpointsPerDecade: 1, FirstCheckpoint: 0.01}
			tr, err := Run(context.Background(), p)
			if err != nil {
				t.Fatal(err)
			}
			return tr
		}
		def, fine := run(DefaultChannels), run(2*DefaultChannels)
		for _, w := range def.Warnings {
			if strings.Contains(w, "channels per line width") {
				t.Errorf("%s: default grid warns: %s", c.sp, w)
			}
		}
		if len(def.Checkpoints) != len(fine.Checkpoints) {
			t.Fatalf("%s: %d and %d checkpoints", c.sp, len(def.Checkpoints), len(fine.Checkpoints))
		}
		for k := range def.Checkpoints {
			a, b := def.Checkpoints[k].PV, fine.Checkpoints[k].PV
			if d := math.Abs(a/b - 1); d > 0.005 {
				t.Errorf("%s: checkpoint %d (R/Gamma %.3g): P_V %.6g at %d channels, %.6g at %d: %.2f %% apart", c.sp, k, def.Checkpoints[k].Saturation, a, DefaultChannels, b, 2*DefaultChannels, 100*d)
			}
		}
		coarse := run(DefaultChannels / 4)
		warned := false
		for _, w := range coarse.Warnings {
			warned = warned || strings.Contains(w, "channels per line width after gain narrowing")
		}
		if !warned {
			t.Errorf("%s: %d channels draw no channel warning", c.sp, DefaultChannels/4)
		}
	}
}
