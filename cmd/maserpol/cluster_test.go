package main

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// The job-array path on a real Slurm: testdata/cluster/array.sbatch (the
// script the README shows) runs testdata/cluster/study.toml in 4 shards;
// the merged tables must equal those of one process byte for byte, also
// when one task is killed by the scheduler and resubmitted with --resume.
// It needs a running Slurm whose node is this machine (the test reads the
// shard directories and freezes a task's process): .ci/slurm-up starts
// one, then
//
//	MASERPOL_SLURM=1 SLURM_CONF=... go test -run Cluster ./cmd/maserpol/ -v

// clusterFiles are the files a user copies into a study directory.
var clusterFiles = []string{"study.toml", "array.sbatch"}

// clusterShards is the array size of array.sbatch.
const clusterShards = 4

// The merge job and the resubmission of a killed task, as the README
// gives them.
const (
	clusterMerge  = "maserpol merge study-run shards/s*"
	clusterResume = "sbatch --array=2 array.sbatch --resume"
)

// The README shows the script and commands that TestCluster runs.
func TestClusterScriptInReadme(t *testing.T) {
	readme := readFile(t, filepath.Join("..", "..", "README.md"))
	script := readFile(t, filepath.Join("..", "..", "testdata", "cluster", "array.sbatch"))
	for _, want := range []string{"```bash\n" + script + "```", "--wrap '" + clusterMerge + "'", "sbatch --dependency=afterok:$jobid", clusterResume} {
		if !strings.Contains(readme, want) {
			t.Errorf("README.md (Running on a cluster) does not show, verbatim:\n%s", want)
		}
	}
}

func TestCluster(t *testing.T) {
	if os.Getenv("MASERPOL_SLURM") != "1" {
		t.Skip("needs a single-node Slurm on this machine: start one with .ci/slurm-up, then set MASERPOL_SLURM=1 (and SLURM_CONF as it prints)")
	}
	for _, c := range []string{"sbatch", "scontrol", "scancel"} {
		if _, err := exec.LookPath(c); err != nil {
			t.Fatalf("MASERPOL_SLURM=1 but %s is not on PATH: %v", c, err)
		}
	}
	if out, err := exec.Command("scontrol", "ping").CombinedOutput(); err != nil || !strings.Contains(string(out), "UP") {
		t.Fatalf("MASERPOL_SLURM=1 but slurmctld does not answer (is SLURM_CONF set?): %v\n%s", err, out)
	}

	// The reference: the whole study in one process.
	refDir := studyDir(t)
	if out, err := inDir(refDir, binary, "run", "study.toml", "--no-plots"); err != nil {
		t.Fatalf("one-process run: %v\n%s", err, out)
	}
	ref := tablesOf(snapshot(t, filepath.Join(refDir, "study-run")))
	if len(ref) != 2+2*16 { // config.toml, summary.ecsv, 16 models x (models/, spectra/)
		t.Fatalf("one-process run wrote %d tables, want 34", len(ref))
	}

	t.Run("array and dependent merge", func(t *testing.T) {
		dir := studyDir(t)
		array := sbatch(t, dir, "array.sbatch")
		// The merge step as the README gives it: a job that waits for
		// every task of the array.
		merge := sbatch(t, dir, "--dependency=afterok:"+array, "--output=merge-%j.out",
			"--wrap", clusterMerge)
		states := waitJobs(t, dir, array, merge)
		for id, s := range states {
			if s != "COMPLETED" {
				t.Errorf("job %s: %s, want COMPLETED", id, s)
			}
		}
		if t.Failed() {
			t.FailNow()
		}
		equalMaps(t, ref, tablesOf(snapshot(t, filepath.Join(dir, "study-run"))), "merged array vs one process")
	})

	t.Run("task killed and resumed", func(t *testing.T) {
		dir := studyDir(t)
		array := sbatch(t, dir, "array.sbatch")
		const victim = 2 // the task clusterResume resubmits
		shard := filepath.Join(dir, "shards", fmt.Sprint("s", victim))
		// Freeze task 2 once it has finished a model, so that the kill
		// lands in the middle of its shard however fast the models are;
		// then cancel it through the scheduler (SIGCONT, SIGTERM, and
		// SIGKILL after KillWait, as on a time limit or preemption).
		pid := findShardProcess(t, dir, victim)
		deadline := time.Now().Add(60 * time.Second)
		for len(finishedModels(shard)) == 0 {
			if time.Now().After(deadline) {
				t.Fatalf("task %d finished no model within 60 s", victim)
			}
			time.Sleep(2 * time.Millisecond)
		}
		if err := syscall.Kill(pid, syscall.SIGSTOP); err != nil {
			t.Fatalf("freeze task %d (pid %d): %v", victim, pid, err)
		}
		if out, err := inDir(dir, "scancel", fmt.Sprintf("%s_%d", array, victim)); err != nil {
			t.Fatalf("scancel: %v\n%s", err, out)
		}
		states := waitJobs(t, dir, array)
		for id, s := range states {
			want := "COMPLETED"
			if id == fmt.Sprintf("%s_%d", array, victim) {
				want = "CANCELLED"
			}
			if s != want {
				t.Errorf("job %s: %s, want %s", id, s, want)
			}
		}
		if t.Failed() {
			t.FailNow()
		}
		before := finishedModels(shard)
		perShard := 16 / clusterShards
		if len(before) == 0 || len(before) >= perShard {
			t.Fatalf("the killed task left %d of %d models finished; the kill did not land mid-shard", len(before), perShard)
		}
		t.Logf("task %d cancelled with %d of %d models finished", victim, len(before), perShard)
		kept := map[string]string{}
		for _, f := range before {
			spec := filepath.Join(shard, "spectra", filepath.Base(f))
			kept[f], kept[spec] = readFile(t, f), readFile(t, spec)
		}

		// A merge of the incomplete shards fails and names the models that
		// the killed task did not finish (shard 2 holds m0001, m0005, ...).
		out, err := inDir(dir, binary, "merge", "partial", "shards/s1", "shards/s2", "shards/s3", "shards/s4")
		if code := exitCode(err); code != exitFailure {
			t.Errorf("merge of incomplete shards: exit %d, want %d\n%s", code, exitFailure, out)
		}
		for i := victim - 1; i < 16; i += clusterShards {
			name := fmt.Sprintf("m%04d", i)
			if _, err := os.Stat(filepath.Join(shard, "models", name+".ecsv")); err != nil && !strings.Contains(out, name) {
				t.Errorf("merge of incomplete shards does not name the unfinished model %s:\n%s", name, out)
			}
		}

		// Resubmit the killed task with --resume, as the README says.
		resumed := sbatch(t, dir, strings.Fields(clusterResume)[1:]...)
		for id, s := range waitJobs(t, dir, resumed) {
			if s != "COMPLETED" {
				t.Fatalf("resumed job %s: %s, want COMPLETED", id, s)
			}
		}
		log := readFile(t, filepath.Join(dir, fmt.Sprintf("slurm-%s_%d.out", resumed, victim)))
		m := regexp.MustCompile(`(\d+) computed now, (\d+) finished before, 0 failed, 0 pending`).FindStringSubmatch(log)
		if m == nil {
			t.Fatalf("resumed task: no run report in its output:\n%s", log)
		}
		now, _ := strconv.Atoi(m[1])
		prev, _ := strconv.Atoi(m[2])
		if prev != len(before) || now != perShard-len(before) {
			t.Errorf("resumed task: %d computed now, %d finished before; want %d and %d", now, prev, perShard-len(before), len(before))
		}
		t.Logf("resubmitted task %d (job %s): %d computed now, %d finished before", victim, resumed, now, prev)
		for f, data := range kept {
			if readFile(t, f) != data {
				t.Errorf("%s changed on resume", f)
			}
		}

		merged := filepath.Join(dir, "study-run")
		if out, err := inDir(dir, binary, "merge", "study-run", "shards/s1", "shards/s2", "shards/s3", "shards/s4"); err != nil {
			t.Fatalf("merge: %v\n%s", err, out)
		}
		equalMaps(t, ref, tablesOf(snapshot(t, merged)), "merged killed-and-resumed array vs one process")
	})
}

// studyDir makes a study directory with the files of testdata/cluster.
func studyDir(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	for _, f := range clusterFiles {
		data, err := os.ReadFile(filepath.Join("..", "..", "testdata", "cluster", f))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, f), data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// inDir runs name in dir with the test's maserpol first on PATH, so that
// jobs submitted from here run it; it returns stdout and stderr together.
func inDir(dir, name string, args ...string) (string, error) {
	cmd := exec.Command(name, args...)
	cmd.Dir = dir
	cmd.Env = append(os.Environ(), "PATH="+filepath.Dir(binary)+string(os.PathListSeparator)+os.Getenv("PATH"))
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	return out.String(), err
}

func exitCode(err error) int {
	if err == nil {
		return 0
	}
	if ee, ok := err.(*exec.ExitError); ok {
		return ee.ExitCode()
	}
	return -1
}

// sbatch submits a job from dir and returns its id; the job is cancelled
// when the test ends, in case it is still queued or running.
func sbatch(t *testing.T, dir string, args ...string) string {
	t.Helper()
	out, err := inDir(dir, "sbatch", append([]string{"--parsable"}, args...)...)
	if err != nil {
		t.Fatalf("sbatch %s: %v\n%s", strings.Join(args, " "), err, out)
	}
	id, _, _ := strings.Cut(strings.TrimSpace(out), ";")
	if _, err := strconv.Atoi(id); err != nil {
		t.Fatalf("sbatch %s: no job id in %q", strings.Join(args, " "), out)
	}
	t.Cleanup(func() { exec.Command("scancel", id).Run() })
	return id
}

// waitJobs polls scontrol (no accounting database needed) until every
// task of the given jobs has ended, and returns the final state of each,
// keyed "JOB" or "JOB_TASK". On failure or timeout it shows the job logs
// in dir.
func waitJobs(t *testing.T, dir string, ids ...string) map[string]string {
	t.Helper()
	deadline := time.Now().Add(90 * time.Second)
	for {
		states := map[string]string{}
		done := true
		for _, id := range ids {
			out, err := exec.Command("scontrol", "show", "job", "-o", id).CombinedOutput()
			if err != nil {
				t.Fatalf("scontrol show job %s: %v\n%s", id, err, out)
			}
			for _, line := range strings.Split(strings.TrimSpace(string(out)), "\n") {
				f := fields(line)
				key := id
				if task := f["ArrayTaskId"]; task != "" {
					key = id + "_" + task
				}
				states[key] = f["JobState"]
				switch f["JobState"] {
				case "PENDING", "RUNNING", "CONFIGURING", "COMPLETING", "SUSPENDED", "REQUEUED", "RESIZING", "":
					done = false
					if f["Reason"] == "DependencyNeverSatisfied" {
						t.Fatalf("job %s can never start (a job it depends on failed)\n%s", key, jobLogs(dir))
					}
				}
			}
		}
		if done {
			for k, s := range states {
				if s != "COMPLETED" && s != "CANCELLED" {
					t.Errorf("job %s ended %s\n%s", k, s, jobLogs(dir))
				}
			}
			return states
		}
		if time.Now().After(deadline) {
			t.Fatalf("jobs %v not finished after 90 s: %v\n%s", ids, states, jobLogs(dir))
		}
		time.Sleep(250 * time.Millisecond)
	}
}

// fields splits a line of scontrol -o into its Key=Value pairs.
func fields(line string) map[string]string {
	f := map[string]string{}
	for _, kv := range strings.Fields(line) {
		if k, v, ok := strings.Cut(kv, "="); ok {
			f[k] = v
		}
	}
	return f
}

// jobLogs returns the Slurm output files in dir, for failure messages.
func jobLogs(dir string) string {
	var b strings.Builder
	logs, _ := filepath.Glob(filepath.Join(dir, "*.out"))
	for _, l := range logs {
		data, _ := os.ReadFile(l)
		fmt.Fprintf(&b, "---- %s\n%s", filepath.Base(l), data)
	}
	return b.String()
}

// findShardProcess waits for the maserpol process of array task k running
// in dir and returns its pid. The Slurm node is this machine, so the task
// is a process here: the one running our binary with --shard k/N and its
// working directory in dir.
func findShardProcess(t *testing.T, dir string, k int) int {
	t.Helper()
	want := fmt.Sprintf("%d/%d", k, clusterShards)
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		procs, _ := filepath.Glob("/proc/[0-9]*")
		for _, p := range procs {
			if exe, _ := os.Readlink(p + "/exe"); exe != binary {
				continue
			}
			if cwd, _ := os.Readlink(p + "/cwd"); cwd != dir {
				continue
			}
			cmdline, _ := os.ReadFile(p + "/cmdline")
			args := strings.Split(string(cmdline), "\x00")
			for i := range args[:len(args)-1] {
				if args[i] == "--shard" && args[i+1] == want {
					pid, _ := strconv.Atoi(filepath.Base(p))
					return pid
				}
			}
		}
		time.Sleep(time.Millisecond)
	}
	t.Fatalf("no maserpol process of task %d in %s after 60 s\n%s", k, dir, jobLogs(dir))
	return 0
}

// finishedModels lists the per-model tables of a run directory; the
// runner writes one when a model has finished.
func finishedModels(dir string) []string {
	files, _ := filepath.Glob(filepath.Join(dir, "models", "m*.ecsv"))
	return files
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(data)
}
