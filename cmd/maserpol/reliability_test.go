package main

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"maserpol/runs"
)

// startBinary starts the built command as a subprocess.
func startBinary(t *testing.T, args ...string) (*exec.Cmd, *bytes.Buffer) {
	t.Helper()
	cmd := exec.Command(binary, args...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	return cmd, &stderr
}

// TestKillResumeAtRandomMoments kills "run" (SIGKILL or SIGINT) and
// "merge" at random moments, including the first milliseconds, and checks
// that the directory always continues (run --resume, or the same merge
// again) to tables identical byte for byte with an uninterrupted run. A
// handful of trials keeps CI fast; the seed is fixed so that a failure
// can be repeated.
func TestKillResumeAtRandomMoments(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "slower.toml", slower)
	ref := filepath.Join(tmp, "ref")
	if code, _, e := maserpol(t, "run", cfg, "--out", ref); code != 0 {
		t.Fatalf("reference run: exit %d\n%s", code, e)
	}
	want := tablesOf(snapshot(t, ref))
	rng := rand.New(rand.NewPCG(12, 1))
	delays := []time.Duration{0, 3 * time.Millisecond, 15 * time.Millisecond,
		time.Duration(rng.IntN(300)) * time.Millisecond}
	for i, delay := range delays {
		sig := []syscall.Signal{syscall.SIGKILL, syscall.SIGINT}[i%2]
		d := filepath.Join(tmp, fmt.Sprintf("run%d", i))
		cmd, _ := startBinary(t, "run", cfg, "--out", d, "--workers", "1")
		time.Sleep(delay)
		cmd.Process.Signal(sig)
		cmd.Wait()
		if code, out, e := maserpol(t, "run", cfg, "--out", d, "--resume"); code != 0 {
			t.Fatalf("trial %d (%v after %v): resume: exit %d\n%s\n%s", i, sig, delay, code, out, e)
		}
		equalMaps(t, want, tablesOf(snapshot(t, d)), fmt.Sprintf("trial %d (%v after %v) resumed vs uninterrupted", i, sig, delay))
		man, err := runs.ReadManifest(d)
		if err != nil || man.Status != runs.StudyComplete {
			t.Errorf("trial %d: manifest %v, status %v", i, err, man)
		}
		ran := 0
		for _, s := range man.Sessions {
			ran += s.Ran
		}
		if ran != 6 {
			t.Errorf("trial %d: the sessions count %d models, want 6: %+v", i, ran, man.Sessions)
		}
	}

	// Merge, killed at random moments, finished by repeating it (or by
	// run --resume in the destination).
	var shards []string
	for _, k := range []string{"1", "2", "3"} {
		s := filepath.Join(tmp, "s"+k)
		if code, _, e := maserpol(t, "run", cfg, "--shard", k+"/3", "--out", s); code != 0 {
			t.Fatalf("shard %s: exit %d\n%s", k, code, e)
		}
		shards = append(shards, s)
	}
	for i, delay := range []time.Duration{0, 2 * time.Millisecond, time.Duration(5+rng.IntN(10)) * time.Millisecond} {
		dst := filepath.Join(tmp, fmt.Sprintf("merged%d", i))
		cmd, _ := startBinary(t, append([]string{"merge", dst, "--no-plots"}, shards...)...)
		time.Sleep(delay)
		cmd.Process.Signal(syscall.SIGKILL)
		cmd.Wait()
		args := append([]string{"merge", dst, "--no-plots"}, shards...)
		if i == 2 {
			args = []string{"run", filepath.Join(dst, "config.toml"), "--resume", "--out", dst}
			if _, err := os.Stat(dst); err != nil {
				args = append([]string{"merge", dst, "--no-plots"}, shards...)
			}
		}
		if code, out, e := maserpol(t, args...); code != 0 {
			t.Fatalf("merge trial %d (killed after %v): %v: exit %d\n%s\n%s", i, delay, args, code, out, e)
		}
		equalMaps(t, want, tablesOf(snapshot(t, dst)), fmt.Sprintf("merge trial %d (killed after %v)", i, delay))
	}
}

// TestInterruptWhileDrawing sends SIGINT once the tables of a complete
// run are written and figures are being drawn: the run is complete, the
// message says so and suggests "maserpol plot", which then works.
func TestInterruptWhileDrawing(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "plots.toml", strings.Replace(small, "plots = false", "plots = true", 1))
	d := filepath.Join(tmp, "run")
	cmd, stderr := startBinary(t, "run", cfg, "--out", d)
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if _, err := os.Stat(filepath.Join(d, "summary.csv")); err == nil {
			break
		}
		time.Sleep(time.Millisecond)
	}
	cmd.Process.Signal(syscall.SIGINT)
	err := cmd.Wait()
	man, merr := runs.ReadManifest(d)
	if merr != nil || man.Status != runs.StudyComplete {
		t.Fatalf("manifest after SIGINT while drawing: %v %+v", merr, man)
	}
	e := stderr.String()
	if err == nil {
		t.Skip("drawing finished before the signal arrived")
	}
	if strings.Contains(e, "--resume") || !strings.Contains(e, "the run itself is complete") || !strings.Contains(e, "maserpol plot "+d) {
		t.Errorf("message after SIGINT while drawing:\n%s", e)
	}
	if code, _, e := maserpol(t, "plot", d); code != 0 {
		t.Errorf("plot after the interruption: exit %d\n%s", code, e)
	}
}

// TestConcurrentProcesses runs a study in a subprocess and starts a
// second session on the same directory while it runs (a requeued cluster
// job): the second is refused, naming the first's PID and host, and the
// first finishes its study alone.
func TestConcurrentProcesses(t *testing.T) {
	tmp := t.TempDir()
	cfg := writeConfig(t, tmp, "slower.toml", slower)
	d := filepath.Join(tmp, "run")
	cmd, stderr := startBinary(t, "run", cfg, "--out", d, "--workers", "1")
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if _, err := os.Stat(filepath.Join(d, "manifest.json")); err == nil {
			break
		}
		time.Sleep(time.Millisecond)
	}
	host, _ := os.Hostname()
	for _, extra := range [][]string{{"--resume"}, nil} {
		code, _, e := maserpol(t, append([]string{"run", cfg, "--out", d}, extra...)...)
		if cmd.ProcessState != nil {
			break
		}
		who := fmt.Sprintf("process %d on host %s", cmd.Process.Pid, host)
		if code != 1 || !strings.Contains(e, who) {
			if _, err := os.Stat(filepath.Join(d, "summary.csv")); err == nil {
				t.Skip("the first run finished before the second started")
			}
			t.Errorf("second run %v while the first runs: exit %d, want 1 naming %q\n%s", extra, code, who, e)
		}
	}
	if err := cmd.Wait(); err != nil {
		t.Fatalf("first run: %v\n%s", err, stderr)
	}
	man, _ := runs.ReadManifest(d)
	if man == nil || man.Status != runs.StudyComplete || len(man.Sessions) != 1 || man.Sessions[0].Ran != 6 {
		t.Errorf("manifest after the concurrent attempt: %+v", man)
	}
}
