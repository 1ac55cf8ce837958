package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"

	"maserpol/config"
	"maserpol/config/units"
	"maserpol/runs/figures"
)

// Limits of command-line values, the same as those of a config file, so
// that a flag is refused before any model runs rather than failing (or
// running for hours) later.
const (
	// maxFieldG is the largest |B| in gauss (config field.strength).
	maxFieldG = 1e4
	// maxWorkers bounds --workers; more goroutines than this only cost memory.
	maxWorkers = 4096
	// maxPlotPoints is the most channels drawn per curve: a figure 3.5 in
	// wide cannot show more, and drawing a million points takes minutes.
	maxPlotPoints = 4096
	// maxObservedChannels bounds an observed spectrum for compare: the
	// channel limit of a model (line.channels); every model is interpolated
	// onto every channel at every checkpoint and shift tried.
	maxObservedChannels = 1 << 16
)

// checkWorkers refuses a negative or absurd --workers and turns 0 into one
// per CPU core.
func checkWorkers(name string, n *int) error {
	if *n < 0 || *n > maxWorkers {
		return usagef("--%s %d: allowed 0 .. %d (0 = one per CPU core)", name, *n, maxWorkers)
	}
	if *n == 0 {
		*n = runtime.NumCPU()
	}
	return nil
}

// checkField refuses a field strength beyond the config limit.
func checkField(name, text string, b float64) error {
	if math.Abs(b) > maxFieldG {
		return usagef("--%s %q: |B| = %s is beyond the limit (allowed: 0 < |B| <= %g G, as field.strength in a config)", name, text, units.Format(math.Abs(b), units.Field, "G"), maxFieldG)
	}
	return nil
}

// checkSaturation refuses a saturation beyond what a column reaches.
func checkSaturation(name string, hi float64) error {
	if hi > config.MaxSaturation {
		return usagef("--%s: R/Gamma up to %.3g cannot be reached by the model column (allowed: at most %g, as column.saturation in a config)", name, hi, float64(config.MaxSaturation))
	}
	return nil
}

// checkOutput checks, before any model runs, that a file can be written
// at path: its directory exists and is writable, and path is not a
// directory. With figure true the extension must be a figure format.
func checkOutput(name, path string, figure bool) error {
	if path == "" {
		return nil
	}
	if figure {
		ext := strings.TrimPrefix(filepath.Ext(path), ".")
		ok := false
		for _, f := range figures.Formats {
			ok = ok || f == ext
		}
		if !ok {
			return usagef("--%s %q: unknown figure format %q (allowed: %s)", name, path, ext, strings.Join(figures.Formats, ", "))
		}
	}
	if fi, err := os.Stat(path); err == nil && fi.IsDir() {
		return usagef("--%s %q: is a directory (allowed: a file path)", name, path)
	}
	dir := filepath.Dir(path)
	fi, err := os.Stat(dir)
	if err != nil || !fi.IsDir() {
		return usagef("--%s %q: directory %s does not exist (allowed: a file in an existing directory)", name, path, dir)
	}
	f, err := os.CreateTemp(dir, ".maserpol-write-test-*")
	if err != nil {
		return usagef("--%s %q: cannot write in %s (%v)", name, path, dir, unwrapPath(err))
	}
	f.Close()
	os.Remove(f.Name())
	return nil
}

// unwrapPath drops the *os.PathError wrapper, whose text repeats the path.
func unwrapPath(err error) error {
	if pe, ok := err.(*os.PathError); ok {
		return pe.Err
	}
	return err
}

// checkUnit refuses a unit that config/units does not know for kind k.
func checkUnit(name, unit string, k units.Kind) error {
	if unit == "" {
		return nil
	}
	if _, err := units.Parse("1 "+unit, k); err != nil {
		return usagef("--%s %q: unknown %s unit (allowed: %s)", name, unit, k, units.Allowed(k))
	}
	return nil
}

// averaged returns x averaged in blocks of k consecutive values.
func averaged(x []float64, k int) []float64 {
	if x == nil || k <= 1 {
		return x
	}
	out := make([]float64, 0, (len(x)+k-1)/k)
	for i := 0; i < len(x); i += k {
		j := min(i+k, len(x))
		s := 0.0
		for _, v := range x[i:j] {
			s += v
		}
		out = append(out, s/float64(j-i))
	}
	return out
}

// fmtCount writes "1 channel" or "n channels".
func fmtCount(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return fmt.Sprintf("%d %ss", n, what)
}
