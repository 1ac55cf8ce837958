package runs

import (
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

func fileExists(p string) bool { _, err := os.Stat(p); return err == nil }
