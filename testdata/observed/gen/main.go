// Command gen makes the invented example observation of testdata/observed:
// it runs model GenModel of study.toml with transfer.Run, takes checkpoint
// GenCheckpoint, shifts it to the invented systemic velocity, scales it and
// adds Gaussian noise from a seeded PCG stream (math/rand/v2), and writes
// kestrel9-sio.ecsv. Run from the repository root:
//
//	go run ./testdata/observed/gen
//
// The ranking test (runs/interpret) reads the same constants from the
// file's metadata and checks that Compare recovers them.
package main

import (
	"bytes"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"strconv"

	"maserpol/config"
	"maserpol/runs/ecsv"
	"maserpol/runs/interpret"
	"maserpol/transfer"
)

// The invented truth.
const (
	GenModel      = 2       // theta = 70 deg
	GenCheckpoint = 6       // R/Gamma = 10
	GenShift      = -14.3e3 // m/s: invented systemic velocity of the feature
	GenScale      = 0.8     // observed K per model K (beam dilution, invented)
	GenNoise      = 0.004   // rms noise relative to the peak of scaled I
	Seed1, Seed2  = 2024, 9 // PCG seeds
	Channels      = 120     // observed channels
	ChannelWidth  = 0.1e3   // m/s
)

func main() {
	if err := run(); err != nil {
		fmt.Fprintln(os.Stderr, "gen:", err)
		os.Exit(1)
	}
}

func run() error {
	st, err := config.Load("testdata/observed/study.toml")
	if err != nil {
		return err
	}
	m := st.Models[GenModel]
	tr, err := transfer.Run(context.Background(), m.Params)
	if err != nil {
		return err
	}
	cp := tr.Checkpoints[GenCheckpoint]
	ms := interpret.ModelSpectrum{Checkpoint: GenCheckpoint, Saturation: cp.Saturation, Velocity: tr.Velocity,
		Stokes: [4][]float64{cp.I, cp.Q, cp.U, cp.V}}
	vel := make([]float64, Channels)
	for i := range vel {
		vel[i] = GenShift + (float64(i)-Channels/2)*ChannelWidth
	}
	rms := GenNoise * GenScale * cp.IPeak
	rng := rand.New(rand.NewPCG(Seed1, Seed2))
	obs := interpret.Synthesize(&ms, vel, GenShift, GenScale, [4]float64{rms, rms, rms, rms}, rng)
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	meta := []ecsv.Meta{
		{Key: "source", Value: "Kestrel-9 (invented evolved star), SiO v=1 J=1-0 feature; demonstration data made by maserpol, not an observation"},
		{Key: "made_from", Value: "study.toml model " + m.Name + " (" + m.Values[1].Text + "), checkpoint " + strconv.Itoa(GenCheckpoint)},
		{Key: "true_model", Value: m.Name},
		{Key: "true_checkpoint", Value: strconv.Itoa(GenCheckpoint)},
		{Key: "true_saturation", Value: f(cp.Saturation)},
		{Key: "true_shift_kms", Value: f(GenShift / 1e3)},
		{Key: "true_scale", Value: f(GenScale)},
		{Key: "noise_rms_K", Value: f(rms)},
		{Key: "rng", Value: fmt.Sprintf("math/rand/v2 PCG(%d, %d), NormFloat64 for every channel of I, then of Q, U and V", Seed1, Seed2)},
	}
	var buf bytes.Buffer
	if err := interpret.WriteObserved(&buf, obs, meta); err != nil {
		return err
	}
	const out = "testdata/observed/kestrel9-sio.ecsv"
	tmp := out + ".tmp"
	if err := os.WriteFile(tmp, buf.Bytes(), 0o644); err != nil {
		return err
	}
	return os.Rename(tmp, out)
}
