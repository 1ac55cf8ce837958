package runs

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"testing"

	"maserpol/transfer"
)

// TestConcurrentRuns starts two sessions on one directory at once, in
// every combination that a busy cluster produces (two fresh runs, a run
// and a requeued --resume, a merge into a directory being run): exactly
// one works on it, the other is refused with the holder's PID and host,
// and every model is computed once.
func TestConcurrentRuns(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 2})
	host, _ := os.Hostname()
	for _, second := range []string{"run", "resume", "merge"} {
		d := filepath.Join(t.TempDir(), "run")
		var calls atomic.Int32
		started := make(chan struct{})
		release := make(chan struct{})
		var once sync.Once
		blocking := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
			calls.Add(1)
			once.Do(func() { close(started) })
			<-release
			return synthetic(ctx, p)
		}
		done := make(chan error)
		go func() {
			_, err := Execute(context.Background(), st, d, Options{Workers: 2, Model: blocking})
			done <- err
		}()
		<-started
		var err error
		switch second {
		case "run":
			_, err = Execute(context.Background(), st, d, Options{Workers: 2, Model: blocking})
		case "resume":
			_, err = Execute(context.Background(), st, d, Options{Workers: 2, Resume: true, Model: blocking})
		case "merge":
			_, err = Merge(d, ref)
		}
		var le *LockError
		if !errors.As(err, &le) {
			t.Fatalf("second %s while a run holds the directory: %v, want a *LockError", second, err)
		}
		want := fmt.Sprintf("process %d on host %s", os.Getpid(), host)
		if !strings.Contains(err.Error(), want) {
			t.Errorf("second %s: message %q does not name %q", second, err, want)
		}
		close(release)
		if err := <-done; err != nil {
			t.Fatalf("first run: %v", err)
		}
		if n := calls.Load(); n != int32(len(st.Models)) {
			t.Errorf("second %s: %d model computations, want %d", second, n, len(st.Models))
		}
		sameTables(t, tables(t, ref), tables(t, d), "run that held the lock")
		if lp, _ := LockPath(d); fileExists(lp) {
			t.Errorf("lock file %s left after the run", lp)
		}
	}
}

// TestStaleLock: a lock file left by a process that died (the kernel
// released its lock) is taken over, and the report says so.
func TestStaleLock(t *testing.T) {
	d := filepath.Join(t.TempDir(), "run")
	lp, err := LockPath(d)
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(lp, []byte("pid 999999\nhost elsewhere\nstarted 2026-01-01T00:00:00Z\ncommand run\n"), 0o644)
	rep := execute(t, study(t, cfg2x3), d, Options{})
	found := false
	for _, n := range rep.Notes {
		found = found || strings.Contains(n, "process 999999 on host elsewhere")
	}
	if !found {
		t.Errorf("notes %q do not mention the stale lock", rep.Notes)
	}
}

// TestLockExcludes checks the lock itself: a second LockDir fails while
// the first is held and succeeds after Unlock.
func TestLockExcludes(t *testing.T) {
	d := filepath.Join(t.TempDir(), "x")
	a, err := LockDir(d, "test")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := LockDir(d, "test"); err == nil {
		t.Fatal("second lock granted while the first is held")
	}
	if err := a.Unlock(); err != nil {
		t.Fatal(err)
	}
	b, err := LockDir(d, "test")
	if err != nil {
		t.Fatalf("lock after unlock: %v", err)
	}
	b.Unlock()
}

// TestWriteErrorStopsStudy makes the spectra directory unwritable after
// two models (as a full disk would): the study stops instead of computing
// and discarding the rest, the manifest says exactly which models are on
// disk and that the session stopped on a write error, and a resume after
// the cause is removed completes tables identical to an uninterrupted run.
func TestWriteErrorStopsStudy(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 1})
	d := filepath.Join(t.TempDir(), "run")
	var calls atomic.Int32
	spectra := filepath.Join(d, "spectra")
	breaking := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		if calls.Add(1) == 3 {
			// Replace the directory by a file: every write into it fails,
			// even for root.
			os.Rename(spectra, spectra+".away")
			os.WriteFile(spectra, nil, 0o644)
		}
		return synthetic(ctx, p)
	}
	rep, err := Execute(context.Background(), st, d, Options{Workers: 1, Model: breaking})
	if err == nil {
		t.Fatal("a study that cannot write its results reported success")
	}
	if n := calls.Load(); n != 3 {
		t.Errorf("%d models computed; the study should stop at the first write error (3)", n)
	}
	if rep == nil || rep.Ran != 2 || rep.Pending != 4 {
		t.Fatalf("report after the write error: %+v", rep)
	}
	man, merr := ReadManifest(d)
	if merr != nil {
		t.Fatal(merr)
	}
	done := 0
	for _, m := range man.Models {
		if m.Status == StatusDone {
			done++
			if !fileExists(filepath.Join(d, "models", m.Name+".ecsv")) {
				t.Errorf("manifest says %s is done; its models/ file is missing", m.Name)
			}
		}
	}
	last := man.Sessions[len(man.Sessions)-1]
	if done != 2 || man.Status != StudyInterrupted || !strings.HasPrefix(last.Stopped, "write error") {
		t.Errorf("manifest: %d done, status %s, session %+v", done, man.Status, last)
	}
	os.Remove(spectra)
	os.Rename(spectra+".away", spectra)
	execute(t, st, d, Options{Workers: 2, Resume: true})
	sameTables(t, tables(t, ref), tables(t, d), "resumed after a write error")
}

// TestResumeVerifiesSpectra truncates and edits finished spectra: resume
// notices both (checksum recorded in the models/ file), recomputes those
// models and ends with tables identical to an uninterrupted run.
func TestResumeVerifiesSpectra(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{Workers: 1})
	d := t.TempDir()
	execute(t, st, d, Options{Workers: 1})
	f1 := filepath.Join(d, "spectra", "m0001.ecsv")
	data, _ := os.ReadFile(f1)
	os.WriteFile(f1, data[:len(data)/2], 0o644)
	f4 := filepath.Join(d, "spectra", "m0004.ecsv")
	data, _ = os.ReadFile(f4)
	os.WriteFile(f4, bytes.Replace(data, []byte("1"), []byte("2"), 1), 0o644)
	var calls atomic.Int32
	counting := func(c context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		calls.Add(1)
		return synthetic(c, p)
	}
	rep := execute(t, st, d, Options{Resume: true, Model: counting})
	if calls.Load() != 2 || len(rep.Notes) != 2 {
		t.Errorf("resume recomputed %d models (want the 2 damaged ones); notes %q", calls.Load(), rep.Notes)
	}
	sameTables(t, tables(t, ref), tables(t, d), "resumed after damage")
}

// TestSummaryWriteErrorNotComplete: when summary.csv cannot be written
// the manifest must not call the study complete, and a resume once the
// cause is gone writes it.
func TestSummaryWriteErrorNotComplete(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{})
	d := filepath.Join(t.TempDir(), "run")
	blocking := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		// A directory where summary.csv should go: the rename onto it fails.
		os.MkdirAll(filepath.Join(d, SummaryName, "x"), 0o755)
		return synthetic(ctx, p)
	}
	if _, err := Execute(context.Background(), st, d, Options{Model: blocking}); err == nil {
		t.Fatal("a study whose summary could not be written reported success")
	}
	man, err := ReadManifest(d)
	if err != nil {
		t.Fatal(err)
	}
	if man.Status == StudyComplete || man.Finished != "" {
		t.Errorf("manifest says %s (finished %q) without summary.csv", man.Status, man.Finished)
	}
	os.RemoveAll(filepath.Join(d, SummaryName))
	execute(t, st, d, Options{Resume: true})
	sameTables(t, tables(t, ref), tables(t, d), "after the summary was written on resume")
}

// TestExistingEmptyDirectory: a run into an existing empty directory
// fills it in place, and one killed before its manifest (only config.toml
// and empty subdirectories) is continued by --resume.
func TestExistingEmptyDirectory(t *testing.T) {
	st := study(t, cfg2x3)
	ref := t.TempDir()
	execute(t, st, ref, Options{})
	d := t.TempDir() // exists, empty
	execute(t, st, d, Options{})
	sameTables(t, tables(t, ref), tables(t, d), "run into an existing empty directory")

	p := t.TempDir()
	os.WriteFile(filepath.Join(p, "config.toml"), st.Resolved, 0o644)
	os.Mkdir(filepath.Join(p, "models"), 0o755)
	execute(t, st, p, Options{Resume: true})
	sameTables(t, tables(t, ref), tables(t, p), "resume of a start killed before its manifest")

	other := t.TempDir()
	os.WriteFile(filepath.Join(other, "config.toml"), []byte("# another config\n"), 0o644)
	if _, err := Execute(context.Background(), st, other, Options{Resume: true, Model: synthetic}); err == nil {
		t.Error("a directory holding another config.toml was taken")
	}
}
