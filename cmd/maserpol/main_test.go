package main

import (
	"bytes"
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"maserpol/runs/ecsv"
)

// binary is the maserpol command built for the subprocess tests.
var binary string

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "maserpol-cmd-test")
	if err != nil {
		panic(err)
	}
	binary = filepath.Join(dir, "maserpol")
	out, err := exec.Command("go", "build", "-o", binary, ".").CombinedOutput()
	if err != nil {
		os.Stderr.Write(out)
		panic(err)
	}
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// maserpol runs the command in-process.
func maserpol(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var o, e bytes.Buffer
	code = run(context.Background(), args, &o, &e)
	return code, o.String(), e.String()
}

// small is a fast study: SiO J=1-0 (no hyperfine structure), 64
// channels, low saturation; 2 field strengths x 3 angles.
const small = `name = "small"
species = "sio-v1-j1-0"
[field]
strength = ["3 G", "10 G"]
theta = ["30 deg", "60 deg", "90 deg"]
chi = "15 deg"
[line]
channels = 64
[column]
saturation = 3.0
checkpoints_per_decade = 2
first_checkpoint = 0.01
[output]
plots = false
`

// slower is small with more channels and a longer column (about 50 ms a
// model), so that a subprocess can be killed in the middle of the study.
var slower = strings.NewReplacer("channels = 64", "channels = 128", "saturation = 3.0", "saturation = 1e4\ntolerance = 1e-5").Replace(small)

func writeConfig(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// snapshot reads every file under dir.
func snapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	filepath.Walk(dir, func(p string, fi os.FileInfo, err error) error {
		if err == nil && !fi.IsDir() {
			data, _ := os.ReadFile(p)
			rel, _ := filepath.Rel(dir, p)
			out[rel] = string(data)
		}
		return nil
	})
	return out
}

// tablesOf keeps the tables of a run snapshot (manifest.json has times).
func tablesOf(s map[string]string) map[string]string {
	out := map[string]string{}
	for k, v := range s {
		if k != "manifest.json" && !strings.HasPrefix(k, "plots") {
			out[k] = v
		}
	}
	return out
}

func equalMaps(t *testing.T, a, b map[string]string, what string) {
	t.Helper()
	if len(a) != len(b) {
		t.Errorf("%s: %d files vs %d", what, len(a), len(b))
	}
	for k, v := range a {
		if w, ok := b[k]; !ok {
			t.Errorf("%s: %s missing", what, k)
		} else if w != v {
			t.Errorf("%s: %s differs", what, k)
		}
	}
}

func TestStudyEqualsSingleRuns(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", small)
	all := filepath.Join(tmp, "all")
	if code, _, e := maserpol(t, "run", cfg, "--out", all, "--workers", "2"); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	sum, err := ecsv.ReadFile(filepath.Join(all, "summary.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	names, _ := sum.Strings("model")
	if len(names) == 0 || names[len(names)-1] != "m0005" {
		t.Fatalf("summary models %v", names)
	}
	k := 0
	for _, b := range []string{"3 G", "10 G"} {
		for _, th := range []string{"30 deg", "60 deg", "90 deg"} {
			one := strings.Replace(strings.Replace(small, `["3 G", "10 G"]`, `"`+b+`"`, 1), `["30 deg", "60 deg", "90 deg"]`, `"`+th+`"`, 1)
			c := writeConfig(t, tmp, "one.toml", one)
			d := filepath.Join(tmp, "one", b+th)
			if code, _, e := maserpol(t, "run", c, "--out", d, "--workers", "1"); code != 0 {
				t.Fatalf("single run: exit %d\n%s", code, e)
			}
			// Same spectra, byte for byte; the study's model index differs.
			want, _ := os.ReadFile(filepath.Join(all, "spectra", "m000"+string(rune('0'+k))+".ecsv"))
			got, _ := os.ReadFile(filepath.Join(d, "spectra", "m0000.ecsv"))
			if body(want) != body(got) || len(want) == 0 {
				t.Errorf("B = %s, theta = %s: spectrum differs from model m000%d of the study", b, th, k)
			}
			k++
		}
	}
}

// body strips the ECSV header (which names the model and config hash).
func body(data []byte) string {
	var keep []string
	for _, l := range strings.Split(string(data), "\n") {
		if !strings.HasPrefix(l, "#") {
			keep = append(keep, l)
		}
	}
	return strings.Join(keep, "\n")
}

func TestResumeAfterKill(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "slower.toml", slower)
	ref := filepath.Join(tmp, "ref")
	if code, _, e := maserpol(t, "run", cfg, "--out", ref); code != 0 {
		t.Fatalf("reference run: exit %d\n%s", code, e)
	}
	d := filepath.Join(tmp, "killed")
	cmd := exec.Command(binary, "run", cfg, "--out", d, "--workers", "1")
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// Kill -9 once two models are finished.
	deadline := time.Now().Add(60 * time.Second)
	for {
		files, _ := filepath.Glob(filepath.Join(d, "models", "m*.ecsv"))
		if len(files) >= 2 || time.Now().After(deadline) {
			break
		}
		time.Sleep(2 * time.Millisecond)
	}
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	files, _ := filepath.Glob(filepath.Join(d, "models", "m*.ecsv"))
	if len(files) >= 6 {
		t.Skip("the study finished before it could be killed")
	}
	if code, _, e := maserpol(t, "run", cfg, "--out", d); code != 2 || !strings.Contains(e, "--resume") {
		t.Errorf("rerun without --resume: exit %d, want 2 with a hint\n%s", code, e)
	}
	code, out, e := maserpol(t, "run", cfg, "--out", d, "--resume")
	if code != 0 {
		t.Fatalf("resume: exit %d\n%s", code, e)
	}
	if !strings.Contains(out, "finished before") {
		t.Errorf("resume report: %s", out)
	}
	equalMaps(t, tablesOf(snapshot(t, ref)), tablesOf(snapshot(t, d)), "resumed vs uninterrupted")
	sum, _ := ecsv.ReadFile(filepath.Join(d, "summary.ecsv"))
	names, _ := sum.Strings("model")
	ck, _ := sum.Floats("checkpoint")
	seen := map[string]bool{}
	for i := range names {
		key := names[i] + "/" + strings.Repeat("x", int(ck[i]))
		if seen[key] {
			t.Errorf("duplicate summary row %s checkpoint %g", names[i], ck[i])
		}
		seen[key] = true
	}
}

func TestShardMerge(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", small)
	ref := filepath.Join(tmp, "ref")
	if code, _, e := maserpol(t, "run", cfg, "--out", ref); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	var shards []string
	for _, k := range []string{"1", "2", "3"} {
		d := filepath.Join(tmp, "s"+k)
		if code, _, e := maserpol(t, "run", cfg, "--shard", k+"/3", "--out", d); code != 0 {
			t.Fatalf("shard %s: exit %d\n%s", k, code, e)
		}
		shards = append(shards, d)
	}
	dst := filepath.Join(tmp, "merged")
	if code, _, e := maserpol(t, append([]string{"merge", dst}, shards...)...); code != 0 {
		t.Fatalf("merge: exit %d\n%s", code, e)
	}
	equalMaps(t, tablesOf(snapshot(t, ref)), tablesOf(snapshot(t, dst)), "merged vs unsharded")
	if code, _, _ := maserpol(t, "run", cfg, "--shard", "4/3"); code != 2 {
		t.Errorf("--shard 4/3: exit %d, want 2", code)
	}
}

func TestBadInputLeavesRunIntact(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", small)
	d := filepath.Join(tmp, "run")
	if code, _, e := maserpol(t, "run", cfg, "--out", d); code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	before := snapshot(t, d)
	cases := []struct{ name, text, want string }{
		{"malformed", strings.Replace(small, `chi = "15 deg"`, `chi = "15 deg`, 1), "bad.toml"},
		{"unknown key", strings.Replace(small, `chi = "15 deg"`, "chi = \"15 deg\"\nphi = \"3 deg\"", 1), "phi"},
		{"bad unit", strings.Replace(small, `chi = "15 deg"`, `chi = "15 parsec"`, 1), "field.chi"},
		{"out of range", strings.Replace(small, `channels = 64`, `channels = 8`, 1), "line.channels"},
		{"changed config", strings.Replace(small, `chi = "15 deg"`, `chi = "16 deg"`, 1), "config changed"},
	}
	for _, c := range cases {
		bad := writeConfig(t, tmp, "bad.toml", c.text)
		for _, extra := range [][]string{nil, {"--resume"}} {
			args := append([]string{"run", bad, "--out", d}, extra...)
			code, _, e := maserpol(t, args...)
			if code != 2 {
				t.Errorf("%s %v: exit %d, want 2\n%s", c.name, extra, code, e)
			}
			want := c.want
			if c.name == "changed config" && extra == nil {
				want = "already holds a run"
			}
			if !strings.Contains(e, want) {
				t.Errorf("%s %v: message does not name %q:\n%s", c.name, extra, want, e)
			}
		}
		equalMaps(t, before, snapshot(t, d), "run directory after "+c.name)
	}
	if code, _, _ := maserpol(t, "run", filepath.Join(tmp, "missing.toml")); code != 2 {
		t.Errorf("missing config: exit %d", code)
	}
	if code, _, _ := maserpol(t, "run", cfg, "--workers", "x"); code != 2 {
		t.Errorf("bad flag: exit %d", code)
	}
}

func TestPlotRedraws(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "small.toml", strings.Replace(small, "plots = false", "plots = true\nformats = [\"svg\"]", 1))
	d := filepath.Join(tmp, "run")
	code, out, e := maserpol(t, "run", cfg, "--out", d)
	if code != 0 {
		t.Fatalf("run: exit %d\n%s", code, e)
	}
	figs, _ := filepath.Glob(filepath.Join(d, "plots", "*.svg"))
	want := []string{"m0000_spectra.svg", "m0005_evolution.svg", "saturation.svg", "theta.svg"}
	for _, w := range want {
		if _, err := os.Stat(filepath.Join(d, "plots", w)); err != nil {
			t.Errorf("missing figure %s (have %d; %s)", w, len(figs), out)
		}
	}
	os.RemoveAll(filepath.Join(d, "plots"))
	if code, _, e := maserpol(t, "plot", d, "--format", "png"); code != 0 {
		t.Fatalf("plot: exit %d\n%s", code, e)
	}
	if _, err := os.Stat(filepath.Join(d, "plots", "theta.png")); err != nil {
		t.Error("plot did not redraw theta.png")
	}
	if code, _, _ := maserpol(t, "plot", tmp); code != 2 {
		t.Errorf("plot of a non-run directory: exit %d, want 2", code)
	}
}

func TestLevels(t *testing.T) {
	code, out, e := maserpol(t, "levels", "hcn-like-j1-0", "--field", "0:20:3 G", "--format", "csv")
	if code != 0 {
		t.Fatalf("exit %d\n%s", code, e)
	}
	tab, err := ecsv.Read(strings.NewReader(out), "levels.csv")
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []string{"field_mG", "level", "F", "M", "energy_khz", "Fu", "Fl", "q", "offset_khz", "strength", "split_hz_per_G", "split_kms_per_G", "linear_up_to_G"} {
		if tab.Index(c) < 0 {
			t.Errorf("levels CSV lacks column %s", c)
		}
	}
	kinds, _ := tab.Strings("kind")
	fields, _ := tab.Strings("field_mG")
	n := map[string]int{}
	for i, k := range kinds {
		n[k]++
		if k == "state" && fields[i] == "20000" {
			n["state20"]++
		}
	}
	// J=1 with I=1: 9 upper states, J=0: 3 lower states; three F components.
	if n["component"] != 3 || n["state20"] != 12 || n["line"] == 0 {
		t.Errorf("row counts %v", n)
	}
	code, out, _ = maserpol(t, "levels", "hcn-like-j1-0", "--field", "10 G")
	if code != 0 || !strings.Contains(out, "offset (kHz)") || !strings.Contains(out, "Field B = 10 G") {
		t.Errorf("table output (exit %d):\n%s", code, out)
	}
	png := filepath.Join(t.TempDir(), "zeeman.png")
	if code, _, e := maserpol(t, "levels", "sio-v1-j1-0", "--plot", png, "--field", "0:30:4 G"); code != 0 {
		t.Fatalf("levels --plot: exit %d\n%s", code, e)
	}
	if _, err := os.Stat(png); err != nil {
		t.Error(err)
	}
	for _, bad := range [][]string{
		{"levels", "no-such-species"},
		{"levels", "sio-v1-j1-0", "--field", "0:10 mG"},
		{"levels", "sio-v1-j1-0", "--field", "0:10:3 parsec"},
		{"levels", "sio-v1-j1-0", "--format", "xml"},
	} {
		if code, _, _ := maserpol(t, bad...); code != 2 {
			t.Errorf("%v: exit %d, want 2", bad, code)
		}
	}
}

func TestInitRefusesOverwrite(t *testing.T) {
	p := filepath.Join(t.TempDir(), "new.toml")
	if code, _, e := maserpol(t, "init", p, "--species", "h2o-22"); code != 0 {
		t.Fatalf("init: exit %d\n%s", code, e)
	}
	first, _ := os.ReadFile(p)
	if !strings.Contains(string(first), "h2o-22") {
		t.Error("starter does not name the species")
	}
	if code, _, _ := maserpol(t, "init", p); code != 2 {
		t.Errorf("init over an existing file: exit %d, want 2", code)
	}
	again, _ := os.ReadFile(p)
	if string(again) != string(first) {
		t.Error("init modified an existing file")
	}
	if code, _, _ := maserpol(t, "init", "--species", "nope", filepath.Join(t.TempDir(), "x.toml")); code != 2 {
		t.Errorf("init with an unknown species: exit %d", code)
	}
}

func TestHelpAndVersion(t *testing.T) {
	for _, c := range commands() {
		if code, _, e := maserpol(t, c.name, "-h"); code != 0 || !strings.Contains(e, "Usage: maserpol "+c.name) {
			t.Errorf("%s -h: exit %d\n%s", c.name, code, e)
		}
	}
	if code, out, _ := maserpol(t, "version"); code != 0 || !strings.Contains(out, "maserpol 0.") {
		t.Errorf("version: %d %q", code, out)
	}
	if code, _, _ := maserpol(t, "frobnicate"); code != 2 {
		t.Errorf("unknown command: exit %d", code)
	}
}

func TestDemo(t *testing.T) {
	out := filepath.Join(t.TempDir(), "demo")
	code, stdout, e := maserpol(t, "demo", "--out", out)
	if code != 0 {
		t.Fatalf("demo: exit %d\n%s\n%s", code, stdout, e)
	}
	// The README points at this figure (the 3 G SiO models).
	if _, err := os.Stat(filepath.Join(out, "irc-vela-7-sio", "plots", "saturation_B3G.png")); err != nil {
		t.Error(err)
	}
	for _, name := range []string{"irc-vela-7-sio", "hydra-w4-water"} {
		d := filepath.Join(out, name)
		sum, err := ecsv.ReadFile(filepath.Join(d, "summary.ecsv"))
		if err != nil {
			t.Fatal(err)
		}
		if len(sum.Rows) == 0 {
			t.Errorf("%s: empty summary", name)
		}
		ml, err := sum.Floats("ml")
		if err != nil {
			t.Fatal(err)
		}
		// The demo shows the model where it holds: most checkpoints lie
		// inside R/gOmega <= 0.1.
		valid, err := sum.Bools("valid")
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, v := range valid {
			if v {
				n++
			}
		}
		if n < len(valid)*9/10 {
			t.Errorf("%s: only %d of %d checkpoints valid", name, n, len(valid))
		}
		for _, x := range ml {
			if x < 0 || x > 1 {
				t.Errorf("%s: m_l = %g outside [0, 1]", name, x)
			}
		}
		sp, _ := filepath.Glob(filepath.Join(d, "spectra", "*.ecsv"))
		for _, f := range sp {
			if _, err := ecsv.ReadFile(f); err != nil {
				t.Error(err)
			}
		}
		if !strings.Contains(stdout, d) {
			t.Errorf("demo output does not say where it wrote %s", name)
		}
		if strings.Count(stdout, "validity: ") != 2 {
			t.Errorf("demo output lacks a validity line per study:\n%s", stdout)
		}
		// The copied config runs as a normal config.
		if _, err := os.Stat(filepath.Join(out, name+".toml")); err != nil {
			t.Error(err)
		}
	}
}
