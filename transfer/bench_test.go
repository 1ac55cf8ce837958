package transfer

import (
	"context"
	"fmt"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

// BenchmarkJ10 runs the J=1-0 reference model (256 channels, seed to
// R/Gamma = 1e4 with default checkpoints). Target: under 50 ms per run on
// one core.
func BenchmarkJ10(b *testing.B) {
	benchJ10(b, 256)
}

func BenchmarkJ10Channels128(b *testing.B) { benchJ10(b, 128) }
func BenchmarkJ10Channels256(b *testing.B) { benchJ10(b, 256) }
func BenchmarkJ10Channels512(b *testing.B) { benchJ10(b, 512) }

func benchJ10(b *testing.B, channels int) {
	tr := j10Split(144, 10)
	m, err := NewModel(tr, Params{Theta: deg(60), Doppler: 1000, GammaUpper: 0.01, GammaLower: 0.01, Channels: channels})
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := m.Run(ctx); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkStep times one accepted integration step of the J=1-0 model in
// the saturated regime; it must not allocate.
func BenchmarkStep(b *testing.B) {
	tr := j10Split(144, 10)
	m, err := NewModel(tr, Params{Theta: deg(60), Doppler: 1000, GammaUpper: 0.01, GammaLower: 0.01})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, err := m.step(10, 0.1); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkJ10Rates128 and BenchmarkJ10Density128 run J=1-0 at 128
// channels to R/Gamma = 1e4 with the rate equations and with the density
// matrix throughout: the density matrix's target is at most 3x the
// populations-only time (compare the two in one run); J10Rates128 itself
// has a target of 8 ms (issue 13).
func BenchmarkJ10Rates128(b *testing.B)   { benchJ10Model(b, 128, Rates) }
func BenchmarkJ10Density128(b *testing.B) { benchJ10Model(b, 128, Density) }

func benchJ10Model(b *testing.B, channels int, pm PopulationModel) {
	tr := j10Split(144, 10)
	m, err := NewModel(tr, Params{Theta: deg(60), Doppler: 1000, GammaUpper: 0.01, GammaLower: 0.01, Channels: channels, Population: pm})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := m.Run(context.Background()); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkStepDensity times one integration step of J=1-0 with the
// density matrix in the saturated regime; it must not allocate.
func BenchmarkStepDensity(b *testing.B) {
	m, err := NewModel(j10Split(144, 10), Params{Theta: deg(60), Doppler: 1000, GammaUpper: 0.01, GammaLower: 0.01, Population: Density})
	if err != nil {
		b.Fatal(err)
	}
	m.csOn = true
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, _, err := m.step(10, 0.1); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkSyntheticJ65Auto is BenchmarkSyntheticJ65 with the default
// automatic population model (target: at most 5x the populations-only
// time).
func BenchmarkSyntheticJ65Auto(b *testing.B) { benchJ65(b, Auto) }

// BenchmarkSyntheticJ65Density forces the density matrix on the synthetic
// J=6-5 line (about 2100 real unknowns per class at R/Gamma = 1e3, which
// the automatic model declines): the cost of its coherences, to compare
// with BenchmarkSyntheticJ65 side by side. Minutes per run; use
// -benchtime 1x.
func BenchmarkSyntheticJ65Density(b *testing.B) { benchJ65(b, Density) }

// BenchmarkSyntheticJ65 runs the synthetic J=6-5 hyperfine preset (104
// upper and 88 lower sublevels, about 1700 lines at 1 G) with 256 channels
// to R/Gamma = 1e3 with the rate equations. Target: under 1.2 s (issue 13;
// 256 channels set explicitly: the default is 512).
func BenchmarkSyntheticJ65(b *testing.B) { benchJ65(b, Rates) }

// BenchmarkH2O22 is BenchmarkSyntheticJ65 for the h2o-22 preset at 0.3 G
// (about 280 lines; target 0.25 s), with the rate equations and with the
// automatic model.
func BenchmarkH2O22(b *testing.B)     { benchPreset(b, "h2o-22", 0.3, Rates) }
func BenchmarkH2O22Auto(b *testing.B) { benchPreset(b, "h2o-22", 0.3, Auto) }

func benchJ65(b *testing.B, pm PopulationModel) { benchPreset(b, "synthetic-j6-5", 1, pm) }

// benchPreset runs a preset at the given field (G) with 256 channels,
// theta 60 deg, T = 1000 K, to R/Gamma = 1e3.
func benchPreset(b *testing.B, name string, field float64, pm PopulationModel) {
	tr := presetAt(b, name, field)
	m, err := NewModel(tr, Params{Theta: deg(60), Temperature: 1000, Saturation: 1e3, Channels: 256, Population: pm})
	if err != nil {
		b.Fatal(err)
	}
	if m.cs != nil {
		b.Logf("density matrix: %d real unknowns per class", m.cs.dim)
	} else if pm == Auto {
		b.Logf("auto: %v", m.warnings)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		tj, err := m.Run(context.Background())
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(tj.Steps), "steps")
	}
}

// BenchmarkLines times one integration step without step history (two
// population solves over every velocity class plus three exponential
// transfers over every channel; in a run, steps from the third on solve
// once, see midHistory)
// for species with increasing numbers of line components, all at 256
// channels, and reports the cost per line per channel and per line per
// active velocity class: the measure of how the step scales with the
// number of transitions. The hand-built J=1-0 and the sio-v1-j1-0 preset
// have 3 lines, h2o-22 about 280 at 0.3 G, synthetic-j6-5 about 1700 at
// 1 G.
func BenchmarkLines(b *testing.B) {
	cases := []struct {
		name  string
		field float64
	}{{"j1-0", 10}, {"sio-v1-j1-0", 10}, {"h2o-22", 0.3}, {"synthetic-j6-5", 1}}
	for _, c := range cases {
		var tr *levels.Transition
		if c.name == "j1-0" {
			tr = j10Split(144, c.field)
		} else {
			sp, err := species.Preset(c.name)
			if err != nil {
				b.Fatal(err)
			}
			if tr, err = levels.NewTransition(sp, c.field); err != nil {
				b.Fatal(err)
			}
		}
		m, err := NewModel(tr, Params{Theta: deg(60), Doppler: 1000, Channels: 256})
		if err != nil {
			b.Fatal(err)
		}
		b.Run(fmt.Sprintf("%s/lines=%d", c.name, len(m.lines)), func(b *testing.B) {
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				if _, _, err := m.step(0, 0.1); err != nil {
					b.Fatal(err)
				}
			}
			ns := float64(b.Elapsed().Nanoseconds()) / float64(b.N)
			nl := float64(len(m.lines))
			b.ReportMetric(ns/(nl*float64(m.n)), "ns/line-channel")
			b.ReportMetric(ns/(nl*float64(m.jhi-m.jlo)), "ns/line-class")
		})
	}
}

// BenchmarkH2ODemo runs one model of the water demo (h2o-22 at 300 mG,
// theta 60 deg, v_D 0.6 km/s, 256 channels, to R/Gamma = 30) with the
// automatic population model, for profiling the density-matrix path.
func BenchmarkH2ODemo(b *testing.B) {
	tr := presetAt(b, "h2o-22", 0.3)
	m, err := NewModel(tr, Params{Theta: deg(60), Doppler: 600, Saturation: 30, CheckpointsPerDecade: 4, FirstCheckpoint: 0.01})
	if err != nil {
		b.Fatal(err)
	}
	if m.cs != nil {
		b.Logf("density matrix: %d unknowns, %d stencil entries, %d pairs, %d slots", m.cs.dim, len(m.cs.entries), len(m.cs.pairs), len(m.cs.slots))
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := m.Run(context.Background()); err != nil {
			b.Fatal(err)
		}
	}
}
