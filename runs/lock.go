package runs

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"
)

// A run directory (and a merge destination or source) is locked for the
// life of the process that works on it, so that two processes never write
// the same directory: two runs, a run and a requeued "run --resume" of the
// same cluster job, or a merge while a shard still runs.
//
// The lock is an exclusive advisory lock (flock) on a lock file beside the
// directory, ".NAME.lock" in its parent: beside rather than inside, so that
// a directory that does not exist yet (and is created by renaming a
// temporary directory into place) can be locked first. The file records the
// holder's PID, host and start time for the message of a refused process.
// The kernel releases the lock when its holder dies, however it dies, so a
// lock file left by a killed process is stale and is simply taken over.

// LockError is a directory locked by another live process.
type LockError struct {
	Dir, File string
	Holder    LockHolder
}

// LockHolder is what a lock file records about its holder.
type LockHolder struct {
	PID     int
	Host    string
	Started string
	Command string
}

func (e *LockError) Error() string {
	h := e.Holder
	who := "another process"
	if h.PID > 0 {
		who = fmt.Sprintf("process %d on host %s", h.PID, orUnknown(h.Host))
		if h.Command != "" {
			who += " (maserpol " + h.Command + ")"
		}
		if h.Started != "" {
			who += ", since " + h.Started
		}
	}
	return fmt.Sprintf("%s is in use by %s; wait for it to finish, or stop it (a killed process releases the lock at once). Lock file: %s", e.Dir, who, e.File)
}

func orUnknown(s string) string {
	if s == "" {
		return "(unknown)"
	}
	return s
}

// Lock is a held directory lock.
type Lock struct {
	f    *os.File
	path string
	// Stale describes the holder of a lock file left by a process that
	// died without removing it (empty when there was none).
	Stale string
}

// LockPath returns the lock file of a directory.
func LockPath(dir string) (string, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return "", err
	}
	parent, base := filepath.Split(abs)
	if base == "" {
		return "", fmt.Errorf("cannot lock %s: not a directory below another", dir)
	}
	return filepath.Join(parent, "."+base+".lock"), nil
}

// LockDir takes the lock of dir for command (run, merge, plot), creating
// the parent directory if needed. It fails at once with a *LockError when
// a live process holds it.
func LockDir(dir, command string) (*Lock, error) {
	path, err := LockPath(dir)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return nil, err
	}
	for attempt := 0; ; attempt++ {
		f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
		if err != nil {
			return nil, fmt.Errorf("locking %s: %w", dir, err)
		}
		if err := flock(f); err != nil {
			holder := readHolder(f)
			f.Close()
			if errors.Is(err, errLocked) {
				return nil, &LockError{Dir: dir, File: path, Holder: holder}
			}
			return nil, fmt.Errorf("locking %s: %w", dir, err)
		}
		// The holder before us may have removed the file between our open
		// and our lock: then we hold a lock on a file nobody else sees.
		if same, err := sameFile(f, path); err != nil || !same {
			f.Close()
			if attempt < 10 {
				continue
			}
			return nil, fmt.Errorf("locking %s: the lock file keeps changing", dir)
		}
		l := &Lock{f: f, path: path}
		if old := readHolder(f); old.PID > 0 {
			l.Stale = fmt.Sprintf("process %d on host %s", old.PID, orUnknown(old.Host))
		}
		host, _ := os.Hostname()
		rec := fmt.Sprintf("pid %d\nhost %s\nstarted %s\ncommand %s\n", os.Getpid(), host, stamp(time.Now()), command)
		// The record only names the holder in messages; the flock is the
		// lock, and a crash of the machine releases it, so it is not
		// synced to disk.
		if err := f.Truncate(0); err == nil {
			f.WriteAt([]byte(rec), 0)
		}
		return l, nil
	}
}

// Unlock removes the lock file and releases the lock.
func (l *Lock) Unlock() error {
	if l == nil || l.f == nil {
		return nil
	}
	// Remove while holding the lock: a process that opened the file and
	// waits sees that it changed (sameFile) and starts over.
	err := os.Remove(l.path)
	if cerr := l.f.Close(); err == nil {
		err = cerr
	}
	l.f = nil
	return err
}

func readHolder(f *os.File) LockHolder {
	var h LockHolder
	buf := make([]byte, 4096)
	n, _ := f.ReadAt(buf, 0)
	for _, line := range strings.Split(string(buf[:n]), "\n") {
		k, v, _ := strings.Cut(line, " ")
		switch k {
		case "pid":
			h.PID, _ = strconv.Atoi(v)
		case "host":
			h.Host = v
		case "started":
			h.Started = v
		case "command":
			h.Command = v
		}
	}
	return h
}

func sameFile(f *os.File, path string) (bool, error) {
	a, err := f.Stat()
	if err != nil {
		return false, err
	}
	b, err := os.Stat(path)
	if err != nil {
		return false, nil
	}
	return os.SameFile(a, b), nil
}
