package main

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"maserpol/runs/interpret"
)

func runCmd(f func(context.Context, []string, io.Writer, io.Writer) int, args ...string) (int, string, string) {
	var o, e bytes.Buffer
	c := f(context.Background(), args, &o, &e)
	return c, o.String(), e.String()
}

func TestDiagnoseCommand(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "v.ecsv")
	code, out, errs := runCmd(cmdDiagnose, "sio-v1-j1-0", "--ml", "0.40", "--ml-err", "0.02", "--evpa-rel", "88 deg",
		"--saturation", "100:1000", "--quick", "--workers", "2", "--table", csv, "--plot", filepath.Join(dir, "d.png"))
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, out, errs)
	}
	for _, want := range []string{"perpendicular branch", "other than the field", "anisotropic pumping", "cannot rule out", "R/(g Omega)"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	if b, err := os.ReadFile(csv); err != nil || !strings.Contains(string(b), "reproduces") {
		t.Errorf("csv: %v %q", err, b)
	}
	if _, err := os.Stat(filepath.Join(dir, "d.png")); err != nil {
		t.Error(err)
	}
	// Bad input: exit 2 with the allowed range named.
	for _, args := range [][]string{
		{"sio-v1-j1-0", "--ml", "1.4", "--ml-err", "0.02", "--saturation", "10"},
		{"sio-v1-j1-0", "--ml", "0.4", "--ml-err", "0.02"},
		{"sio-v1-j1-0", "--ml", "0.4", "--ml-err", "0.02", "--saturation", "100:10"},
		{"no-such-species", "--ml", "0.4", "--ml-err", "0.02", "--saturation", "10"},
	} {
		if code, _, e := runCmd(cmdDiagnose, args...); code != 2 || e == "" {
			t.Errorf("%q: exit %d (%s), want 2", args, code, e)
		}
	}
}

func TestZeemanFactorCommand(t *testing.T) {
	code, out, errs := runCmd(cmdZeemanFactor, "sio-v1-j1-0", "--theta", "0,60 deg", "--saturation", "10", "--workers", "2")
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, out, errs)
	}
	if !strings.Contains(out, "m/s per G") || !strings.Contains(out, "factor/linear") {
		t.Errorf("output:\n%s", out)
	}
	if code, _, _ := runCmd(cmdZeemanFactor, "sio-v1-j1-0", "--component", "7"); code != 2 {
		t.Errorf("bad component: exit %d, want 2", code)
	}
	// theta = 90 deg alone: B cos(theta) = 0, the factor is undefined.
	if code, out, e := runCmd(cmdZeemanFactor, "sio-v1-j1-0", "--theta", "90 deg"); code != 2 || out != "" || !strings.Contains(e, "cos(theta) = 0") {
		t.Errorf("theta 90 deg: exit %d, stdout %q, stderr %q; want 2, nothing, the reason", code, out, e)
	}
}

// The validity of a zeeman-factor row is stated for the user's field (R/gOmega
// scales as 1/B), and poor fits are not presented as factors.
func TestZeemanFactorValidity(t *testing.T) {
	code, out, errs := runCmd(cmdZeemanFactor, "sio-v1-j1-0", "--theta", "85 deg", "--saturation", "10", "--workers", "2")
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, out, errs)
	}
	for _, want := range []string{"R/(g Omega) at B0", "scales as 1/B", "valid for |B| >="} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	for _, line := range strings.Split(out, "\n") {
		f := strings.Fields(line)
		if len(f) < 9 || f[0] != "85" {
			continue
		}
		// theta, R/Gamma, R/gOmega, factor, ratio, P_V, "linearity %", "residual %"
		var res float64
		if _, err := fmt.Sscanf(f[8], "%g", &res); err != nil {
			t.Fatalf("row %q: %v", line, err)
		}
		if res > 10 && !strings.Contains(line, "POOR FIT") {
			t.Errorf("row with residual %g %% not flagged: %q", res, line)
		}
	}
}

func TestDiagnosePercentHint(t *testing.T) {
	code, _, e := runCmd(cmdDiagnose, "sio-v1-j1-0", "--ml", "30", "--ml-err", "0.02", "--saturation", "10")
	if code != 2 || !strings.Contains(e, `"30 %"`) {
		t.Errorf("exit %d, stderr %q; want 2 suggesting \"30 %%\"", code, e)
	}
}

// The compare table has a validity column, and its summary counts the
// rows outside R/gOmega <= 0.1 truthfully.
func TestPrintRankingValidity(t *testing.T) {
	obs := &interpret.Observed{File: "obs.csv", Velocity: []float64{-1000, 0, 1000}, Unit: "K"}
	obs.Use[0] = true
	obs.ErrFrom[0] = "invented"
	mk := func(name string, rg, scale float64, bound bool) interpret.Ranked {
		m := &interpret.RunModel{Name: name, Spectra: []interpret.ModelSpectrum{{Checkpoint: 3}}, RoverGOmega: []float64{rg}}
		return interpret.Ranked{Model: m, Best: interpret.Fit{Checkpoint: 3, Scale: scale, ShiftAtBound: bound, N: 3, NUsed: 1}}
	}
	var b strings.Builder
	printRanking(&b, obs, []interpret.Ranked{mk("m0", 0.01, 2, false), mk("m1", 0.5, 1, true), mk("m2", 0.05, 0, false)}, 3)
	out := b.String()
	for _, want := range []string{"valid", "1 of 3 ranked rows shown are outside", "(bound)", "in 1 of the 3 rows shown it is 0"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	if strings.Contains(out, "rows above are outside") {
		t.Errorf("output keeps the unconditional validity claim:\n%s", out)
	}
}

func TestCompareCommandBadInput(t *testing.T) {
	dir := t.TempDir()
	obs := filepath.Join(dir, "o.csv")
	os.WriteFile(obs, []byte("velocity [km/s],I [K]\n1,2\n"), 0o644)
	code, _, e := runCmd(cmdCompare, dir, obs)
	if code != 2 || !strings.Contains(e, "o.csv") {
		t.Errorf("exit %d, stderr %q; want 2 naming the file", code, e)
	}
}
