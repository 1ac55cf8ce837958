package main

import (
	"context"
	"io"
	"path/filepath"
	"testing"
)

// BenchmarkDemo times the whole built-in demonstration through the command,
// figures included. Target: under a minute on the 2-core reference machine
// (it takes a few seconds).
func BenchmarkDemo(b *testing.B) {
	for i := 0; i < b.N; i++ {
		out := filepath.Join(b.TempDir(), "demo")
		if code := run(context.Background(), []string{"demo", "--out", out}, io.Discard, io.Discard); code != 0 {
			b.Fatalf("demo exited %d", code)
		}
	}
}

// BenchmarkDiagnoseQuick times "diagnose --quick" for the SiO J=1-0 preset
// at a saturated measurement: the cost of one verdict.
func BenchmarkDiagnoseQuick(b *testing.B) {
	args := []string{"diagnose", "sio-v1-j1-0", "--ml", "0.4", "--ml-err", "0.03",
		"--evpa-rel", "90 deg", "--saturation", "100:1000", "--quick"}
	for i := 0; i < b.N; i++ {
		if code := run(context.Background(), args, io.Discard, io.Discard); code != 0 {
			b.Fatalf("diagnose exited %d", code)
		}
	}
}
