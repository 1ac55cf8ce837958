package main

import (
	"bytes"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs"
)

// The unverified-species warning is printed once per command: the study
// prints it, and the per-model copies that transfer records are skipped.
func TestUnverifiedWarningOnce(t *testing.T) {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	w := sp.UnverifiedWarning()
	for _, want := range []string{"rotational g-factor", "rest frequency", "dipole moment"} {
		if !strings.Contains(w, want) {
			t.Errorf("warning %q does not name %q", w, want)
		}
	}
	var b bytes.Buffer
	printWarnings(&b, []runs.Warning{{Model: "m0000", Index: 0, Msg: w}, {Model: "m0001", Index: 1, Msg: w}, {Model: "m0001", Index: 1, Msg: "other"}}, []string{w})
	if strings.Contains(b.String(), "rotational") || !strings.Contains(b.String(), "m0001: other") {
		t.Errorf("printWarnings:\n%s", b.String())
	}
	oh, err := species.Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	if w := oh.UnverifiedWarning(); w != "" {
		t.Errorf("OH preset is sourced, got warning %q", w)
	}
}

// zeeman-factor --component each: every HCN component pumped alone is an
// isolated line, so its unsaturated factor is the thin-line linear-Zeeman
// value V = cos(theta) dv_Z dI/dv (standard weak-field relation; physics.md
// section 7) within 3 % (the fit's channel and integration error).
func TestZeemanFactorEach(t *testing.T) {
	dir := t.TempDir()
	csvPath := dir + "/each.csv"
	code, out, errs := runCmd(cmdZeemanFactor, "hcn-like-j1-0", "--component", "each", "--theta", "30 deg", "--saturation", "0.3", "--table", csvPath, "--plot", dir+"/each.png")
	if code != exitOK {
		t.Fatalf("exit %d\n%s\n%s", code, out, errs)
	}
	data, err := os.ReadFile(csvPath)
	if err != nil {
		t.Fatal(err)
	}
	seen := map[string]bool{}
	for _, line := range strings.Split(string(data), "\n") {
		f := strings.Split(line, ",")
		if len(f) < 12 || f[0] == "component" || strings.HasPrefix(line, "#") {
			continue
		}
		seen[f[1]] = true
		factor, _ := strconv.ParseFloat(f[9], 64)
		linear, _ := strconv.ParseFloat(f[10], 64)
		sat, _ := strconv.ParseFloat(f[6], 64)
		if sat < 0.01 && math.Abs(factor/linear-1) > 0.03 {
			t.Errorf("component %s at R/Gamma %g: factor %g, linear %g", f[1], sat, factor, linear)
		}
	}
	for _, l := range []string{"1-1", "2-1", "0-1"} {
		if !seen[l] {
			t.Errorf("component %s missing from the CSV", l)
		}
	}
	if _, err := os.Stat(dir + "/each.png"); err != nil {
		t.Errorf("figure: %v", err)
	}
	if n := strings.Count(errs, "not checked against a source"); n != 1 {
		t.Errorf("unverified warning printed %d times, want once:\n%s", n, errs)
	}
}

// levels --format components writes a species file that parses back to
// the same components (offsets to the printed 1 Hz, strengths 1e-8).
func TestLevelsComponentsFormat(t *testing.T) {
	for _, name := range []string{"hcn-like-j1-0", "synthetic-j6-5"} {
		code, out, errs := runCmd(cmdLevels, name, "--format", "components")
		if code != exitOK {
			t.Fatalf("%s: exit %d: %s", name, code, errs)
		}
		tab, err := species.Parse([]byte(out), name+" table")
		if err != nil {
			t.Fatalf("%s: %v\n%s", name, err, out)
		}
		ham, _ := species.Preset(name)
		all, _ := levels.Components(ham)
		var ch []levels.Component // the written table leaves out strengths below 1e-6
		for _, c := range all {
			if c.Strength >= 1e-6 {
				ch = append(ch, c)
			}
		}
		ct, err := levels.Components(tab)
		if err != nil {
			t.Fatal(err)
		}
		if len(ct) != len(ch) {
			t.Fatalf("%s: %d components, want %d", name, len(ct), len(ch))
		}
		for i := range ch {
			// Strengths renormalize by the left-out ones (< 1e-6 in all).
			if math.Abs(ch[i].Offset-ct[i].Offset) > 1 || math.Abs(ch[i].Strength-ct[i].Strength) > 3e-6*ch[i].Strength+2e-8 {
				t.Errorf("%s: component %d: %+v vs %+v", name, i, ct[i], ch[i])
			}
		}
	}
}
