package interpret_test

import (
	"context"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"maserpol/config"
	"maserpol/runs"
	"maserpol/runs/interpret"
)

// BenchmarkRankKestrel9 ranks the four models of the committed invented
// example (testdata/observed/study.toml, 10 checkpoints each) against its
// observation kestrel9-sio.ecsv (120 channels, IQUV): what `compare` spends
// after reading the run directory. The study is run once, outside the
// timer, into a temporary directory.
func BenchmarkRankKestrel9(b *testing.B) {
	const dir = "../../testdata/observed"
	st, err := config.Load(filepath.Join(dir, "study.toml"))
	if err != nil {
		b.Fatal(err)
	}
	run := filepath.Join(b.TempDir(), "run")
	if _, err := runs.Execute(context.Background(), st, run, runs.Options{Workers: 2, NoPlots: true}); err != nil {
		b.Fatal(err)
	}
	models, _, err := interpret.ReadRunDir(run)
	if err != nil {
		b.Fatal(err)
	}
	obs, err := interpret.ReadObserved(filepath.Join(dir, "kestrel9-sio.ecsv"), interpret.ReadOptions{})
	if err != nil {
		b.Fatal(err)
	}
	spectra := 0
	for _, m := range models {
		spectra += len(m.Spectra)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if rk := interpret.Rank(obs, models, interpret.FitOptions{}); len(rk) != len(models) {
			b.Fatalf("%d ranked, want %d", len(rk), len(models))
		}
	}
	b.ReportMetric(float64(spectra), "spectra/op")
}

// BenchmarkFitSpectrum fits one model checkpoint (400 channels) to one
// observation (161 channels, IQUV) with a reused Fitter: the inner step of
// Rank.
func BenchmarkFitSpectrum(b *testing.B) {
	var ms interpret.ModelSpectrum
	for i := 0; i < 400; i++ {
		v := float64(i-200) * 50 // m/s
		x := v / 1000
		I := 100 * math.Exp(-x*x)
		ms.Velocity = append(ms.Velocity, v)
		ms.Stokes[0] = append(ms.Stokes[0], I)
		ms.Stokes[1] = append(ms.Stokes[1], -0.15*I)
		ms.Stokes[2] = append(ms.Stokes[2], 0)
		ms.Stokes[3] = append(ms.Stokes[3], 0.01*x*I)
	}
	var vel []float64
	for i := 0; i <= 160; i++ {
		vel = append(vel, -5000+float64(i)*100)
	}
	obs := interpret.Synthesize(&ms, vel, 2500, 0.6, [4]float64{0.6, 0.6, 0.6, 0.6}, rand.New(rand.NewPCG(7, 11)))
	f := interpret.NewFitter(obs, interpret.FitOptions{})
	b.ReportAllocs()
	for b.Loop() {
		if fit := f.FitSpectrum(&ms); !(math.Abs(fit.Shift-2500) < 50) {
			b.Fatalf("shift %g m/s, want about 2500", fit.Shift)
		}
	}
}
