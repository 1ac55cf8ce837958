package main

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func runCmd(f func(context.Context, []string, io.Writer, io.Writer) int, args ...string) (int, string, string) {
	var o, e bytes.Buffer
	c := f(context.Background(), args, &o, &e)
	return c, o.String(), e.String()
}

func TestDiagnoseCommand(t *testing.T) {
	dir := t.TempDir()
	csv := filepath.Join(dir, "v.csv")
	code, out, errs := runCmd(cmdDiagnose, "sio-v1-j1-0", "--ml", "0.40", "--ml-err", "0.02", "--evpa-rel", "88 deg",
		"--saturation", "100:1000", "--quick", "--workers", "2", "--csv", csv, "--plot", filepath.Join(dir, "d.png"))
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
