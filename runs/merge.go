package runs

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"time"
)

// Merge joins run directories of the same config (typically the shards of
// a study) into dst, which must not exist or be empty. A model finished in
// any source is copied byte for byte; one finished in two sources must
// have identical files. The tables of dst equal those of an unsharded run;
// manifest.json differs only in times and sessions. Merge does not draw
// figures (see Plot).
func Merge(dst string, srcs ...string) (*Manifest, error) {
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
	if fi, err := os.Stat(dst); err == nil {
		if !fi.IsDir() {
			return nil, inputErrorf("merge: %s exists and is not a directory", dst)
		}
		if ents, _ := os.ReadDir(dst); len(ents) > 0 {
			return nil, inputErrorf("merge: destination %s exists and is not empty", dst)
		}
	}
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
	for _, m := range mans {
		if m.Started < out.Started {
			out.Started = m.Started
		}
		out.Sessions = append(out.Sessions, m.Sessions...)
	}
	sort.SliceStable(out.Sessions, func(i, j int) bool { return out.Sessions[i].Started < out.Sessions[j].Started })

	for _, sub := range []string{"models", "spectra"} {
		if err := os.MkdirAll(filepath.Join(dst, sub), 0o755); err != nil {
			return nil, err
		}
	}
	if err := writeFileAtomic(filepath.Join(dst, "config.toml"), cfg); err != nil {
		return nil, err
	}
	for i := range out.Models {
		ms := &out.Models[i]
		ms.Status, ms.Error = StatusPending, ""
		var from string
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
						return nil, fmt.Errorf("merge: model %s is finished in both %s and %s with different %s tables", ms.Name, from, s, f)
					}
				}
			case StatusFailed:
				if ms.Status == StatusPending {
					ms.Status, ms.Error = StatusFailed, msg
				}
			}
		}
		if from == "" {
			continue
		}
		for _, f := range []string{"spectra", "models"} { // spectrum first, as in Execute
			data, err := os.ReadFile(filepath.Join(from, f, ms.Name+".ecsv"))
			if err != nil {
				return nil, err
			}
			if err := writeFileAtomic(filepath.Join(dst, f, ms.Name+".ecsv"), data); err != nil {
				return nil, err
			}
		}
		ms.Status, ms.Error = StatusDone, ""
	}
	out.Sessions = append(out.Sessions, Session{Kind: "merge", Started: stamp(now), Finished: stamp(time.Now())})
	out.update()
	if out.Status != StudyIncomplete {
		out.Finished = stamp(time.Now())
	}
	if _, err := writeSummary(dst, &out, nil); err != nil {
		return nil, err
	}
	if err := out.write(dst); err != nil {
		return nil, err
	}
	return &out, nil
}
