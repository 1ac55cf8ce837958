package runs

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

// bench64 is a 64-model J=1-0 study (4 field strengths x 4 angles x 4
// position angles) of moderate cost per model.
const bench64 = `species = "sio-v1-j1-0"
[field]
strength = ["1 G", "3 G", "10 G", "30 G"]
theta = ["20 deg", "45 deg", "70 deg", "90 deg"]
chi = ["0 deg", "30 deg", "60 deg", "90 deg"]
[line]
channels = 128
[column]
saturation = 1e3
checkpoints_per_decade = 4
[output]
plots = false
`

// BenchmarkStudy runs the 64-model study with the real transfer at one and
// two workers, tables written, no figures. Parallel efficiency is
// t(workers=1) / (2 t(workers=2)); the target is >= 85 % on two cores.
func BenchmarkStudy(b *testing.B) {
	st := study(b, bench64)
	if len(st.Models) != 64 {
		b.Fatalf("%d models", len(st.Models))
	}
	for _, w := range []int{1, 2} {
		b.Run("workers="+strconv.Itoa(w), func(b *testing.B) {
			root := b.TempDir()
			for i := 0; i < b.N; i++ {
				dir := filepath.Join(root, strconv.Itoa(i))
				if _, err := Execute(context.Background(), st, dir, Options{Workers: w}); err != nil {
					b.Fatal(err)
				}
				b.StopTimer()
				os.RemoveAll(dir)
				b.StartTimer()
			}
			b.ReportMetric(float64(b.Elapsed().Seconds())/float64(b.N)/64*1e3, "ms/model")
		})
	}
}

// BenchmarkFigures draws the figures of the 64-model study (study figures
// only: more than MaxModelFigures models) on one and two workers. The
// speed-up is t(workers=1) / t(workers=2); the target is >= 1.8 on two
// idle cores.
func BenchmarkFigures(b *testing.B) {
	dir := b.TempDir()
	if _, err := Execute(context.Background(), study(b, bench64), dir, Options{}); err != nil {
		b.Fatal(err)
	}
	for _, w := range []int{1, 2} {
		b.Run("workers="+strconv.Itoa(w), func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				if _, err := Plot(dir, PlotOptions{Formats: []string{"png", "svg"}, Workers: w}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
