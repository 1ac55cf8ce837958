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
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, base+tmpMarker+"*")
	if err != nil {
		return err
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
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

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
