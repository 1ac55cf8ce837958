package main

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"maserpol/runs/ecsv"
)

// The speed study of issue 13: two J=1-0 models, 128 channels, to
// R/Gamma = 1e4, populations only; testdata/speed/reference.py is an
// independent NumPy/SciPy solver of the same model, written from
// physics.md sections 3-6 and the documented grid of package transfer.
var (
	speedDir   = filepath.Join("..", "..", "testdata", "speed")
	speedStudy = filepath.Join(speedDir, "study.toml")
	speedRef   = filepath.Join(speedDir, "reference.py")
)

// speedRefArgs are the reference's solver settings in the benchmark: the
// loosest decade of rtol at which it is as accurate as the program at its
// default tolerance (measured against the rtol 1e-10 values: q_b 3.3e-5 and
// P_V 6.3e-4 relative, against the program's 2.2e-4 and 5.1e-4).
var speedRefArgs = []string{"--rtol", "1e-4", "--atol", "1e-7"}

type speedRow struct{ sat, gain, tb, ml, qb, pv, vi float64 }

// readSpeedRef reads values.csv of reference.py: model, checkpoint -> row.
func readSpeedRef(t testing.TB, path string) map[string]speedRow {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var lines []string
	for _, l := range strings.Split(string(data), "\n") {
		if !strings.HasPrefix(l, "#") && l != "" {
			lines = append(lines, l)
		}
	}
	recs, err := csv.NewReader(strings.NewReader(strings.Join(lines, "\n"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, n := range recs[0] {
		col[n] = i
	}
	out := map[string]speedRow{}
	for _, r := range recs[1:] {
		f := func(n string) float64 {
			x, err := strconv.ParseFloat(r[col[n]], 64)
			if err != nil {
				t.Fatalf("%s: %v", path, err)
			}
			return x
		}
		out[r[col["model"]]+"/"+r[col["checkpoint"]]] = speedRow{f("saturation"), f("gain"), f("TbdOmega_Ksr"), f("ml"), f("qb"), f("pv"), f("vi_peak")}
	}
	return out
}

// readSpeedSummary reads the same columns from a run's summary.ecsv.
func readSpeedSummary(t testing.TB, path string) map[string]speedRow {
	t.Helper()
	tab, err := ecsv.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	models, err := tab.Strings("model")
	if err != nil {
		t.Fatal(err)
	}
	cols := map[string][]float64{}
	for _, n := range []string{"checkpoint", "saturation", "gain", "TbdOmega_Ksr", "ml", "qb", "pv", "vi_peak"} {
		if cols[n], err = tab.Floats(n); err != nil {
			t.Fatal(err)
		}
	}
	out := map[string]speedRow{}
	for i, m := range models {
		out[fmt.Sprintf("%s/%d", m, int(cols["checkpoint"][i]))] = speedRow{cols["saturation"][i], cols["gain"][i],
			cols["TbdOmega_Ksr"][i], cols["ml"][i], cols["qb"][i], cols["pv"][i], cols["vi_peak"][i]}
	}
	return out
}

// TestSpeedStudyAgainstSciPy compares the speed study's summary with the
// independent SciPy reference (testdata/speed/values.csv, DOP853 at rtol
// 1e-10: converged to about 1e-8 in every column, measured by a rtol
// ladder). Both solve the same discretized equations (same grid, kernel,
// seed and saturation probe), so what remains is the program's
// integration error:
//   - at column.tolerance = 1e-6 the model itself is checked: q_b, m_l and
//     |V/I| at the peak within 5e-5, P_V, T_b dOmega within 1e-4 relative,
//     the gain within 2e-4 relative (measured 6.4e-6, 1.5e-5, 7.5e-6,
//     4.6e-5; the bounds allow about ten steps' worth of 1e-6 local error
//     plus rounding of the printed values);
//   - at the default tolerance (2e-4 per step in ln I and in the fractional
//     polarizations, the run the speed benchmark times) the bounds are a
//     few times that step tolerance: q_b, m_l within 6e-4, |V/I| within
//     6e-5 (V/I is 3 % of I here), P_V and T_b dOmega within 2e-3
//     relative, the gain within 4e-3 (in the saturated, linear-growth
//     regime a relative error e in ln I moves the path by e s; measured
//     2.2e-4, 6e-6, 5.1e-4, 2.6e-4, 1.3e-3).
//
// |V/I| at the peak is compared without its sign: with an even number of
// channels the two central channels carry almost the same I and V/I of
// opposite signs, and which one is the peak is decided by rounding.
func TestSpeedStudyAgainstSciPy(t *testing.T) {
	want := readSpeedRef(t, filepath.Join(speedDir, "values.csv"))
	study, err := os.ReadFile(speedStudy)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name                      string
		tolerance                 string // column.tolerance added to the study, "" = default
		frac, vi, pv, tb, gainRel float64
	}{
		{"tolerance 1e-6", "1e-6", 5e-5, 5e-5, 1e-4, 1e-4, 2e-4},
		{"default tolerance", "", 6e-4, 6e-5, 2e-3, 2e-3, 4e-3},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			text := string(study)
			if c.tolerance != "" {
				text = strings.Replace(text, "[column]\n", "[column]\ntolerance = "+c.tolerance+"\n", 1)
			}
			cfg := writeConfig(t, dir, "study.toml", text)
			out := filepath.Join(dir, "run")
			if code, _, errs := maserpol(t, "run", cfg, "--no-plots", "--out", out); code != 0 {
				t.Fatalf("run: exit %d: %s", code, errs)
			}
			got := readSpeedSummary(t, filepath.Join(out, "summary.ecsv"))
			if len(got) != len(want) {
				t.Fatalf("%d checkpoints, reference %d", len(got), len(want))
			}
			for k, w := range want {
				g, ok := got[k]
				if !ok {
					t.Fatalf("checkpoint %s missing from the summary", k)
				}
				check := func(what string, g, w, tol float64, rel bool) {
					d := math.Abs(g - w)
					if rel {
						d /= math.Abs(w)
					}
					if !(d <= tol) {
						t.Errorf("%s %s = %.8g, SciPy reference %.8g (difference %.2g > %.2g)", k, what, g, w, d, tol)
					}
				}
				check("saturation", g.sat, w.sat, 1e-5, true) // checkpoints located to 1e-6
				check("gain", g.gain, w.gain, c.gainRel, true)
				check("TbdOmega_Ksr", g.tb, w.tb, c.tb, true)
				check("ml", g.ml, w.ml, c.frac, false)
				check("qb", g.qb, w.qb, c.frac, false)
				check("pv", g.pv, w.pv, c.pv, true)
				check("|vi_peak|", math.Abs(g.vi), math.Abs(w.vi), c.vi, false)
			}
		})
	}
}

// scipyPython returns /usr/bin/python3 if it has NumPy and SciPy, or "".
func scipyPython() string {
	const py = "/usr/bin/python3"
	if exec.Command(py, "-c", "import numpy, scipy.integrate, scipy.optimize, tomllib").Run() != nil {
		return ""
	}
	return py
}

// BenchmarkSpeedAgainstSciPy times, side by side in one run, the whole
// command "maserpol run study.toml --no-plots" on the speed study (process
// start, species, both models on the default workers, tables and manifest;
// the binary built once by TestMain) and the SciPy reference solving the
// same two models as a process (interpreter start and imports included),
// alternating which goes first. Metrics: wall and CPU milliseconds of each
// per study and their ratios scipy/go (target: >= 30, issue 13). Skips
// without /usr/bin/python3 with SciPy.
func BenchmarkSpeedAgainstSciPy(b *testing.B) {
	py := scipyPython()
	if py == "" {
		b.Skip("needs /usr/bin/python3 with numpy and scipy (Debian python3-scipy)")
	}
	dir := b.TempDir()
	var goWall, pyWall, goCPU, pyCPU time.Duration
	// timed runs cmd and adds its wall and CPU time.
	timed := func(what string, cmd *exec.Cmd, wall, cpu *time.Duration) {
		var e bytes.Buffer
		cmd.Stderr = &e
		t0 := time.Now()
		if err := cmd.Run(); err != nil {
			b.Fatalf("%s: %v\n%s", what, err, e.String())
		}
		*wall += time.Since(t0)
		*cpu += cmd.ProcessState.UserTime() + cmd.ProcessState.SystemTime()
	}
	runGo := func(i int) {
		timed("maserpol run", exec.Command(binary, "run", speedStudy, "--no-plots", "--out", filepath.Join(dir, fmt.Sprintf("go%d", i))), &goWall, &goCPU)
	}
	runPy := func() {
		timed("reference.py", exec.Command(py, append([]string{speedRef}, speedRefArgs...)...), &pyWall, &pyCPU)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if i%2 == 0 {
			runGo(i)
			runPy()
		} else {
			runPy()
			runGo(i)
		}
	}
	n := float64(b.N)
	ms := func(d time.Duration) float64 { return d.Seconds() * 1e3 / n }
	b.ReportMetric(ms(goWall), "go-ms/study")
	b.ReportMetric(ms(pyWall), "scipy-ms/study")
	b.ReportMetric(ms(goCPU), "go-cpu-ms/study")
	b.ReportMetric(ms(pyCPU), "scipy-cpu-ms/study")
	b.ReportMetric(pyWall.Seconds()/goWall.Seconds(), "scipy/go")
	b.ReportMetric(pyCPU.Seconds()/goCPU.Seconds(), "scipy/go-cpu")
}
