package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"maserpol/runs"
)

// A column stopped by gain = 5 ends far below saturation (at theta = 90
// deg, with V of round-off); its figures once panicked and exited 2 with
// the manifest left "incomplete".
func TestShortColumnRun(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "g.toml", "species = \"sio-v1-j1-0\"\n[field]\nstrength = \"5 G\"\n[line]\nchannels = 64\n[column]\ngain = 5.0\n[output]\nformats = [\"svg\"]\n")
	d := filepath.Join(tmp, "g")
	code, out, e := maserpol(t, "run", cfg, "--out", d)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s\n%s", code, out, e)
	}
	man, err := runs.ReadManifest(d)
	if err != nil {
		t.Fatal(err)
	}
	if man.Status != runs.StudyComplete || man.Models[0].Status != runs.StatusDone {
		t.Errorf("manifest: study %s, model %s", man.Status, man.Models[0].Status)
	}
	if _, err := os.Stat(filepath.Join(d, "plots", "saturation.svg")); err != nil {
		t.Error(err)
	}
	if !strings.Contains(out, "validity: ") || !strings.Contains(out, "checkpoints valid (") || !strings.Contains(out, "max R/gOmega = ") {
		t.Errorf("no validity line:\n%s", out)
	}
	if !strings.Contains(e, "running 1 model\n") {
		t.Errorf("progress wording:\n%s", e)
	}
}

func TestPanicIsInternalError(t *testing.T) {
	var e bytes.Buffer
	code := guard(&e, func() int { panic("boom") })
	if code != exitFailure || !strings.Contains(e.String(), "internal error: boom") {
		t.Errorf("exit %d\n%s", code, e.String())
	}
}

// plot --format pdf,eps must keep the PNG and SVG files.
func TestPlotOtherFormatsKeepsFigures(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", strings.Replace(small, "plots = false", "plots = true\nformats = [\"png\", \"svg\"]", 1))
	d := filepath.Join(tmp, "run")
	if code, _, e := maserpol(t, "run", cfg, "--out", d); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	if code, _, e := maserpol(t, "plot", d, "--format", "pdf,eps"); code != 0 {
		t.Fatalf("plot: exit %d\n%s", code, e)
	}
	for _, f := range []string{"theta.png", "theta.svg", "theta.pdf", "theta.eps", "m0000_spectra.png", "m0000_spectra.eps"} {
		if _, err := os.Stat(filepath.Join(d, "plots", f)); err != nil {
			t.Error(err)
		}
	}
}

func TestPartialMergeFails(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", small)
	s1 := filepath.Join(tmp, "s1")
	if code, _, e := maserpol(t, "run", cfg, "--shard", "1/2", "--out", s1); code != 0 {
		t.Fatalf("shard: exit %d\n%s", code, e)
	}
	dst := filepath.Join(tmp, "merged")
	code, _, e := maserpol(t, "merge", dst, s1)
	if code != exitFailure || !strings.Contains(e, "m0001, m0003, m0005") || !strings.Contains(e, "--resume --out "+dst) {
		t.Errorf("partial merge: exit %d, want 1 naming the missing models and how to finish\n%s", code, e)
	}
	// Both hints work. Resuming in the merged directory, with the
	// directory's own config.toml as the hint says, finishes the study.
	hint := "maserpol run " + filepath.Join(dst, "config.toml") + " --resume --out " + dst
	if !strings.Contains(e, hint) {
		t.Errorf("partial merge hint %q missing:\n%s", hint, e)
	}
	if code, out, e := maserpol(t, "run", filepath.Join(dst, "config.toml"), "--resume", "--out", dst); code != 0 || !strings.Contains(out, "3 computed now, 3 finished before") {
		t.Errorf("resume of a partial merge: exit %d\n%s\n%s", code, out, e)
	}
	// Merging the missing shard into the same destination finishes it.
	dst2 := filepath.Join(tmp, "merged2")
	maserpol(t, "merge", dst2, s1)
	s2 := filepath.Join(tmp, "s2")
	if code, _, e := maserpol(t, "run", cfg, "--shard", "2/2", "--out", s2); code != 0 {
		t.Fatalf("shard 2: exit %d\n%s", code, e)
	}
	if code, out, e := maserpol(t, "merge", dst2, s2); code != 0 || !strings.Contains(out, "6 done, 0 failed, 0 pending") {
		t.Errorf("merging the missing shard into the partial merge: exit %d\n%s\n%s", code, out, e)
	}
	equalMaps(t, tablesOf(snapshot(t, dst)), tablesOf(snapshot(t, dst2)), "merge completed by a shard vs by resume")
}

func TestHelpUsesDoubleDash(t *testing.T) {
	_, _, e := maserpol(t, "run", "-h")
	if !strings.Contains(e, "  --workers int") || strings.Contains(e, "  -workers") || !strings.Contains(e, "0 = one per CPU core") {
		t.Errorf("run -h:\n%s", e)
	}
}

func TestLevelsFieldUnit(t *testing.T) {
	code, out, _ := maserpol(t, "levels", "sio-v1-j1-0", "--field", "0:0.3:4 G")
	if code != 0 || !strings.Contains(out, "Field B = 0.1 G\n") || !strings.Contains(out, "Field B = 0.3 G\n") {
		t.Errorf("levels in G:\n%s", out)
	}
	code, out, _ = maserpol(t, "levels", "sio-v1-j1-0", "--field", "250 mG")
	if code != 0 || !strings.Contains(out, "Field B = 250 mG\n") {
		t.Errorf("levels in mG:\n%s", out)
	}
}
