package runs

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
)

// tmpMarker names temporary files; they are removed on resume.
const tmpMarker = ".tmp-"

// writeFileAtomic writes data to path through a temporary file in the same
// directory, synced and renamed, so readers and crashes never see a
// partial file.
func writeFileAtomic(path string, data []byte) error {
	return writeAtomic(path, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
}

// WriteFile writes data to path atomically: through a temporary file in the
// same directory, synced and renamed into place. Commands use it for every
// table they write outside a run directory.
func WriteFile(path string, data []byte) error { return writeFileAtomic(path, data) }

// writeAtomic streams what fill writes into a temporary file in the
// directory of path, syncs it and renames it into place, so large tables
// never sit whole in memory and a crash leaves no partial file.
func writeAtomic(path string, fill func(io.Writer) error) error {
	return writeTemp(path, fill, true)
}

// writeChecked is writeAtomic without the sync, for the per-model files
// (spectra/, models/) that --resume verifies before trusting them (row
// count, and the spectrum's SHA-256 recorded in the models/ file): a
// killed process still leaves no partial file (the rename is atomic), and
// a file emptied or torn by a crash of the whole machine fails the check
// and its model is computed again. Syncing them cost two disk flushes per
// model, up to tens of milliseconds each on a busy disk.
func writeChecked(path string, fill func(io.Writer) error) error {
	return writeTemp(path, fill, false)
}

func writeTemp(path string, fill func(io.Writer) error, sync bool) error {
	p, err := writePending(path, fill, sync)
	if err != nil {
		return err
	}
	return p.commit()
}

// pendingFile is a file written (and synced, if asked) under a temporary
// name and not yet renamed into place: a caller that writes two files can
// sync them at once and still rename them in order.
type pendingFile struct{ tmp, path string }

// writePending writes what fill writes into a temporary file in the
// directory of path; commit renames it to path.
func writePending(path string, fill func(io.Writer) error, sync bool) (*pendingFile, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, base+tmpMarker+"*")
	if err != nil {
		return nil, err
	}
	tmp := f.Name()
	err = fill(f)
	if err == nil && sync {
		err = f.Sync()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp, 0o644)
	}
	if err != nil {
		os.Remove(tmp)
		return nil, fmt.Errorf("writing %s: %w", path, err)
	}
	return &pendingFile{tmp, path}, nil
}

// commit renames the file into place.
func (p *pendingFile) commit() error {
	if err := os.Rename(p.tmp, p.path); err != nil {
		os.Remove(p.tmp)
		return fmt.Errorf("writing %s: %w", p.path, err)
	}
	return nil
}

// discard removes the file.
func (p *pendingFile) discard() { os.Remove(p.tmp) }

// removeTemps deletes temporary files left by an interrupted session.
func removeTemps(dirs ...string) {
	for _, d := range dirs {
		ents, err := os.ReadDir(d)
		if err != nil {
			continue
		}
		for _, e := range ents {
			if strings.Contains(e.Name(), tmpMarker) {
				os.Remove(filepath.Join(d, e.Name()))
			}
		}
	}
}
