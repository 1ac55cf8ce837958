package runs

import (
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"maserpol/config"
	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
	"maserpol/transfer"
)

// halfDecades is synthetic with two checkpoints per decade, R/Gamma =
// 10^-2, 10^-1.5, ..., 10^2 (9 checkpoints), the spectra scaled with the
// saturation; the decades subset is then checkpoints 0, 2, 4, 6, 8.
func halfDecades(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
	tr, err := synthetic(ctx, p)
	if err != nil {
		return nil, err
	}
	base := tr.Checkpoints[0]
	tr.Checkpoints = nil
	for k := 0; k < 9; k++ {
		sat := math.Pow(10, float64(k)/2-2)
		cp := base
		cp.Saturation, cp.RoverGOmega, cp.IPeak = sat, sat/tr.GOmega, sat
		cp.Valid = cp.RoverGOmega <= ValidLimit
		for _, s := range []*[]float64{&cp.I, &cp.Q, &cp.U, &cp.V} {
			x := make([]float64, len(*s))
			for i, v := range *s {
				x[i] = v * sat / base.Saturation
			}
			*s = x
		}
		tr.Checkpoints = append(tr.Checkpoints, cp)
	}
	return tr, nil
}

func TestSpectraCheckpoints(t *testing.T) {
	traj := func(sats ...float64) *transfer.Trajectory {
		tr := &transfer.Trajectory{}
		for _, s := range sats {
			tr.Checkpoints = append(tr.Checkpoints, transfer.Checkpoint{Saturation: s})
		}
		return tr
	}
	var half []float64 // 2 per decade from 1e-3 to 1e4, as the columns end (99.98 for 100)
	for k := 0; k <= 14; k++ {
		half = append(half, math.Pow(10, float64(k)/2-3)*(1-2e-4))
	}
	small := study(t, cfg2x3) // 6 models
	big := study(t, strings.Replace(cfg2x3, `theta = ["30 deg", "60 deg", "90 deg"]`, `theta = { from = "5 deg", to = "90 deg", steps = 9 }`, 1))
	decades := study(t, strings.Replace(cfg2x3, "plots = false", `plots = false`+"\n"+`spectra = "decades"`, 1))
	all := study(t, strings.Replace(cfg2x3, `theta = ["30 deg", "60 deg", "90 deg"]`, `theta = { from = "5 deg", to = "90 deg", steps = 9 }`, 1)+`spectra = "all"`+"\n")
	if len(big.Models) <= MaxAllSpectra || len(all.Models) <= MaxAllSpectra {
		t.Fatalf("%d models", len(big.Models))
	}
	seq := func(n int) []int {
		out := make([]int, n)
		for i := range out {
			out[i] = i
		}
		return out
	}
	for _, c := range []struct {
		name string
		st   *config.Study
		sats []float64
		want []int
	}{
		{"default, 6 models: all", small, half, seq(15)},
		{"default, 18 models: decades", big, half, []int{0, 2, 4, 6, 8, 10, 12, 14}},
		{"all", all, half, seq(15)},
		{"decades", decades, half, []int{0, 2, 4, 6, 8, 10, 12, 14}},
		// 3 per decade from 0.02: first, nearest to 0.1, 1, 10, last.
		{"decades, 3 per decade", decades, []float64{0.02, 0.043, 0.093, 0.2, 0.43, 0.93, 2, 4.3, 9.3, 20}, []int{0, 2, 5, 8, 9}},
		{"decades, two checkpoints", decades, []float64{1e-3, 1e4}, []int{0, 1}},
		{"decades, one", decades, []float64{5}, []int{0}},
	} {
		if got := SpectraCheckpoints(c.st, traj(c.sats...)); !slices.Equal(got, c.want) {
			t.Errorf("%s: %v, want %v", c.name, got, c.want)
		}
	}
}

// TestDecadeSpectra: with output.spectra = "decades" the spectra hold the
// subset with their checkpoint indices, the summary every checkpoint;
// tables stay byte-identical under workers, interruption and resume, and
// sharding and merge; a resume of the complete run recomputes nothing
// (the checksums hold); compare's reader says which checkpoints it has;
// figures get the sign of P_V at every checkpoint.
func TestDecadeSpectra(t *testing.T) {
	st := study(t, strings.Replace(cfg2x3, "plots = false", `plots = false`+"\n"+`spectra = "decades"`, 1))
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 2, Model: halfDecades})
	sp, err := ecsv.ReadFile(filepath.Join(ref, "spectra", "m0001.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	ck, _ := sp.Floats("checkpoint")
	var got []float64
	for i, c := range ck {
		if i == 0 || c != ck[i-1] {
			got = append(got, c)
		}
	}
	if !slices.Equal(got, []float64{0, 2, 4, 6, 8}) {
		t.Errorf("spectra checkpoints %v, want 0 2 4 6 8", got)
	}
	if v, _ := sp.MetaValue("spectra_checkpoints"); v != `5 of 9 (output.spectra = "decades")` {
		t.Errorf("spectra_checkpoints meta %q", v)
	}
	sum, _ := ecsv.ReadFile(SummaryPath(ref))
	if len(sum.Rows) != 6*9 {
		t.Errorf("summary has %d rows, want 54", len(sum.Rows))
	}

	// Interrupted and resumed.
	d := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	var n atomic.Int32
	stopAfter := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		if n.Add(1) > 2 {
			cancel()
		}
		return halfDecades(c, p)
	}
	if _, err := Execute(ctx, st, d, Options{Workers: 1, Model: stopAfter}); !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled run returned %v", err)
	}
	var calls atomic.Int32
	counting := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		calls.Add(1)
		return halfDecades(c, p)
	}
	rep := execute(t, st, d, Options{Workers: 2, Resume: true, Model: counting})
	if calls.Load() != 4 || rep.Skipped != 2 {
		t.Errorf("resume computed %d models (skipped %d); want 4 (2)", calls.Load(), rep.Skipped)
	}
	sameTables(t, tables(t, ref), tables(t, d), "resumed vs uninterrupted")
	calls.Store(0)
	execute(t, st, d, Options{Resume: true, Model: counting})
	if calls.Load() != 0 {
		t.Errorf("resume of a complete run recomputed %d models", calls.Load())
	}
	// A damaged spectrum is caught by the checksum and recomputed.
	f := filepath.Join(d, "spectra", "m0003.ecsv")
	data, _ := os.ReadFile(f)
	os.WriteFile(f, []byte(strings.Replace(string(data), "\n0,", "\n1,", 1)), 0o644)
	calls.Store(0)
	execute(t, st, d, Options{Resume: true, Model: counting})
	if calls.Load() != 1 {
		t.Errorf("resume after damaging a spectrum recomputed %d models, want 1", calls.Load())
	}
	sameTables(t, tables(t, ref), tables(t, d), "after repairing a damaged spectrum")

	// Sharded and merged.
	root := t.TempDir()
	var shards []string
	for k := 1; k <= 2; k++ {
		sd := filepath.Join(root, string(rune('0'+k)))
		execute(t, st, sd, Options{Workers: 1, Shard: Shard{k, 2}, Model: halfDecades})
		shards = append(shards, sd)
	}
	dst := filepath.Join(root, "merged")
	if _, err := Merge(dst, shards...); err != nil {
		t.Fatal(err)
	}
	sameTables(t, tables(t, ref), tables(t, dst), "merged vs unsharded")

	// Figures: the sign of P_V at all 9 checkpoints, from the 5 written.
	var signs [][]float64
	if _, err := Plot(ref, PlotOptions{Formats: []string{"svg"}, Workers: 2}); err != nil {
		t.Fatal(err)
	}
	models, err := readSummary(sum)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range models {
		if err := plotSpectra(ref, m, func(*figures.Stack, string) error { return nil }); err != nil {
			t.Fatal(err)
		}
		signs = append(signs, m.pvSign)
	}
	// synthetic: V = -2x I cos(theta) B 1e-3 = (v_D cos(theta) B 1e-3) dI/dv,
	// A > 0 at every checkpoint (also at theta = 90 deg, where
	// cos(theta) rounds to 6e-17).
	for i, s := range signs {
		want := 1.0
		if len(s) != 9 || slices.ContainsFunc(s, func(x float64) bool { return x != want }) {
			t.Errorf("model %d: signs %v, want 9 x %g", i, s, want)
		}
	}
}
