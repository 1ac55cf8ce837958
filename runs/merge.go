package runs

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"time"
)

// Merge joins run directories of the same config (typically the shards of
// a study) into dst. A model finished in any source is copied byte for
// byte; one finished in two sources must have identical files. The tables
// of dst equal those of an unsharded run; manifest.json differs only in
// times and sessions. Merge does not draw figures (see Plot).
//
// dst may be new, empty, or a run directory of the same config: an earlier
// merge (a partial one, or one that was interrupted), or a run. Its
// finished models are kept, so a missing shard is merged in later with
// "merge DST SHARD", and an interrupted merge is finished by repeating
// it. A new dst is created with config.toml and manifest.json first
// (under a temporary name, then renamed), so it is a resumable run
// directory at every moment.
func Merge(dst string, srcs ...string) (*Manifest, error) {
	return MergeContext(context.Background(), dst, srcs...)
}

// MergeContext is Merge that stops between models when ctx is cancelled,
// recording in dst's manifest what it holds, and returns ctx.Err().
func MergeContext(ctx context.Context, dst string, srcs ...string) (*Manifest, error) {
	if len(srcs) == 0 {
		return nil, inputErrorf("merge: no source directories")
	}
	seen := map[string]string{}
	for i, d := range append([]string{dst}, srcs...) {
		if i > 0 {
			if fi, err := os.Stat(d); err != nil || !fi.IsDir() {
				return nil, inputErrorf("merge: source %s is not a run directory", d)
			}
		}
		lp, err := LockPath(d)
		if err != nil {
			return nil, inputErrorf("merge: %v", err)
		}
		if prev, dup := seen[lp]; dup {
			return nil, inputErrorf("merge: %s and %s are the same directory", prev, d)
		}
		seen[lp] = d
	}
	// Hold the destination and every source: no run may write them while
	// they are merged.
	for _, d := range append([]string{dst}, srcs...) {
		lk, err := LockDir(d, "merge")
		if err != nil {
			return nil, err
		}
		defer lk.Unlock()
	}
	removeTempDirs(dst)

	mans := make([]*Manifest, len(srcs))
	var cfg []byte
	for i, s := range srcs {
		m, err := ReadManifest(s)
		if err != nil {
			return nil, inputErrorf("merge: %s is not a run directory: %v", s, err)
		}
		c, err := os.ReadFile(filepath.Join(s, "config.toml"))
		if err != nil {
			return nil, inputErrorf("merge: %v", err)
		}
		if i == 0 {
			cfg = c
		} else {
			if m.ConfigHash != mans[0].ConfigHash || !bytes.Equal(c, cfg) {
				return nil, inputErrorf("merge: %s and %s were run from different configs (hash %.12s... vs %.12s...)", srcs[0], s, mans[0].ConfigHash, m.ConfigHash)
			}
			if len(m.Models) != len(mans[0].Models) {
				return nil, inputErrorf("merge: %s lists %d models, %s lists %d", s, len(m.Models), srcs[0], len(mans[0].Models))
			}
		}
		mans[i] = m
	}
	now := time.Now()
	out := *mans[0]
	out.Shard = ""
	out.Finished = ""
	out.Sessions = nil
	out.Models = append([]ModelStatus(nil), mans[0].Models...)
	for i := range out.Models {
		out.Models[i].Status, out.Models[i].Error = StatusPending, ""
	}

	// The destination: new, or a run of the same config whose models are
	// kept.
	existing, err := mergeTarget(dst, cfg, mans[0])
	if err != nil {
		return nil, err
	}
	if existing != nil {
		out.Sessions = append(out.Sessions, existing.Sessions...)
		if existing.Started < out.Started {
			out.Started = existing.Started
		}
	}
	for _, m := range mans {
		if m.Started < out.Started {
			out.Started = m.Started
		}
		out.Sessions = append(out.Sessions, m.Sessions...)
	}
	sort.SliceStable(out.Sessions, func(i, j int) bool { return out.Sessions[i].Started < out.Sessions[j].Started })
	out.Sessions = dedupSessions(out.Sessions)
	out.Sessions = append(out.Sessions, Session{Kind: "merge", Started: stamp(now)})
	sess := &out.Sessions[len(out.Sessions)-1]
	out.update()
	if existing == nil {
		if err := createDir(dst, func(tmp string) error {
			if err := writeFileAtomic(filepath.Join(tmp, "config.toml"), cfg); err != nil {
				return err
			}
			return out.write(tmp)
		}); err != nil {
			return nil, err
		}
	} else {
		for _, sub := range []string{"models", "spectra"} {
			if err := os.MkdirAll(filepath.Join(dst, sub), 0o755); err != nil {
				return nil, err
			}
		}
		removeTemps(dst, filepath.Join(dst, "models"), filepath.Join(dst, "spectra"), filepath.Join(dst, "plots"))
	}

	var stopErr error
	for i := range out.Models {
		if err := ctx.Err(); err != nil {
			stopErr = err
			break
		}
		ms := &out.Models[i]
		have, msg := finished(dst, ms.Name)
		if have == StatusFailed {
			ms.Status, ms.Error = StatusFailed, msg
		}
		from := ""
		if have == StatusDone {
			from = dst
		}
		for _, s := range srcs {
			status, msg := finished(s, ms.Name)
			switch status {
			case StatusDone:
				if from == "" {
					from = s
					continue
				}
				for _, f := range []string{"models", "spectra"} {
					a, _ := os.ReadFile(filepath.Join(from, f, ms.Name+".ecsv"))
					b, _ := os.ReadFile(filepath.Join(s, f, ms.Name+".ecsv"))
					if !bytes.Equal(a, b) {
						stopErr = fmt.Errorf("merge: model %s is finished in both %s and %s with different %s tables", ms.Name, from, s, f)
					}
				}
			case StatusFailed:
				if ms.Status == StatusPending {
					ms.Status, ms.Error = StatusFailed, msg
				}
			}
		}
		if stopErr != nil {
			break
		}
		if from == "" {
			continue
		}
		if from != dst {
			for _, f := range []string{"spectra", "models"} { // spectrum first, as in Execute
				data, err := os.ReadFile(filepath.Join(from, f, ms.Name+".ecsv"))
				if err == nil {
					err = writeFileAtomic(filepath.Join(dst, f, ms.Name+".ecsv"), data)
				}
				if err != nil {
					stopErr = err
					break
				}
			}
			if stopErr != nil {
				break
			}
			sess.Ran++
		}
		ms.Status, ms.Error = StatusDone, ""
	}
	// Models not reached keep what dst holds for them.
	if stopErr != nil {
		for i := range out.Models {
			ms := &out.Models[i]
			if ms.Status != StatusPending {
				continue
			}
			if st, msg := finished(dst, ms.Name); st == StatusDone || st == StatusFailed {
				ms.Status, ms.Error = st, msg
			}
		}
	}
	out.update()
	sess.Finished = stamp(time.Now())
	if stopErr == nil {
		if _, err := writeSummary(dst, &out, nil); err != nil {
			stopErr = err
		}
	}
	if stopErr != nil {
		out.Status = StudyInterrupted
		sess.Stopped = stopErr.Error()
		if errors.Is(stopErr, context.Canceled) {
			sess.Stopped = "interrupted"
		}
	} else if out.Status != StudyIncomplete {
		out.Finished = sess.Finished
	}
	if err := out.write(dst); err != nil && stopErr == nil {
		stopErr = err
	}
	if stopErr != nil {
		return &out, stopErr
	}
	return &out, nil
}

// mergeTarget checks the destination of a merge: nil for a new or empty
// one, its manifest for a run directory of the same config; anything else
// is refused untouched.
func mergeTarget(dst string, cfg []byte, src *Manifest) (*Manifest, error) {
	fi, err := os.Stat(dst)
	if err != nil {
		return nil, nil
	}
	if !fi.IsDir() {
		return nil, inputErrorf("merge: %s exists and is not a directory", dst)
	}
	ents, _ := os.ReadDir(dst)
	if len(ents) == 0 {
		return nil, nil
	}
	m, err := ReadManifest(dst)
	if err != nil {
		return nil, inputErrorf("merge: destination %s exists, is not empty and holds no run (%v); choose another destination", dst, err)
	}
	c, err := os.ReadFile(filepath.Join(dst, "config.toml"))
	if err != nil || m.ConfigHash != src.ConfigHash || !bytes.Equal(c, cfg) {
		return nil, inputErrorf("merge: destination %s holds a run of a different config (hash %.12s..., the sources %.12s...); choose another destination", dst, m.ConfigHash, src.ConfigHash)
	}
	if m.Shard != "" {
		return nil, inputErrorf("merge: destination %s holds shard %s; merge into a new directory", dst, m.Shard)
	}
	if len(m.Models) != len(src.Models) {
		return nil, inputErrorf("merge: destination %s lists %d models, the sources %d", dst, len(m.Models), len(src.Models))
	}
	return m, nil
}

// dedupSessions drops repeated sessions: merging a shard into a
// destination that already holds it lists its sessions once.
func dedupSessions(ss []Session) []Session {
	var out []Session
	for _, s := range ss {
		if len(out) > 0 && out[len(out)-1] == s {
			continue
		}
		out = append(out, s)
	}
	return out
}
