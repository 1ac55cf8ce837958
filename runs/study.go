package runs

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"

	"maserpol/config"
	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

// InputError is a problem with what was asked for, not with the models:
// an existing run directory without --resume, a resume with a changed
// config, a bad shard. The command exits with status 2 on it.
type InputError struct{ Msg string }

func (e *InputError) Error() string { return e.Msg }

func inputErrorf(format string, a ...any) error { return &InputError{fmt.Sprintf(format, a...)} }

// ModelFunc computes one model; transfer.Run is the default.
type ModelFunc func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error)

// Options control how a study is executed. None of them changes the
// results.
type Options struct {
	Workers  int       // default runtime.NumCPU()
	Resume   bool      // continue the run in an existing directory
	Shard    Shard     // run only this shard; zero = all models
	Progress io.Writer // progress bar (terminal) or lines; nil = silent
	Model    ModelFunc // nil = transfer.Run
	NoPlots  bool      // do not draw figures even if the config asks for them
	Titles   bool      // figures with titles (see PlotOptions)
}

// Report tells what a session did.
type Report struct {
	Dir               string
	Models            int // models in the study
	InShard           int // models in this shard
	Ran               int // models computed in this session
	Skipped           int // finished in an earlier session
	Failed, Pending   int // after this session, in this shard
	Failures          []string
	Warnings          []Warning // per-model warnings, including validity, in model order
	Figures           []string
	Notes             []string // about figures skipped
	Summary, Manifest string   // paths
	// Validity counts the checkpoints of the finished models (in this
	// directory) inside the validity of the model that gave them.
	Validity ValidityStats
}

// ValidityStats counts checkpoints inside the validity of their population
// model (rates: R/(g Omega) <= ValidLimit; density matrix: flat-spectrum
// measure <= transfer.FlatLimit) and those given by the density matrix.
type ValidityStats struct {
	Checkpoints, Valid int
	Density            int     // checkpoints given by the density matrix
	MaxRoverGOmega     float64 // largest R/(g Omega) over all checkpoints
}

// PlotError is a failure to draw figures after the tables were written:
// the results are complete (manifest.json says so); "maserpol plot"
// redraws.
type PlotError struct{ Err error }

func (e *PlotError) Error() string { return "drawing figures: " + e.Err.Error() }
func (e *PlotError) Unwrap() error { return e.Err }

// manifestEvery is the least interval between manifest rewrites during a
// session.
const manifestEvery = 2 * time.Second

// Warning is a warning about one model.
type Warning struct {
	Model string
	Index int
	Msg   string
}

// Execute runs the models of st in dir (see the package documentation).
// It returns ctx.Err() when cancelled, after recording the finished
// models; the directory can then be resumed.
func Execute(ctx context.Context, st *config.Study, dir string, opt Options) (*Report, error) {
	if opt.Workers <= 0 {
		opt.Workers = runtime.NumCPU()
	}
	if opt.Model == nil {
		opt.Model = transfer.Run
	}
	if opt.Shard.N > 1 && (opt.Shard.K < 1 || opt.Shard.K > opt.Shard.N) {
		return nil, inputErrorf("bad shard %d/%d", opt.Shard.K, opt.Shard.N)
	}
	if dir == "" {
		return nil, inputErrorf("no run directory given (set output.dir in the config or use --out)")
	}
	// One process per directory, for the whole session.
	lock, err := LockDir(dir, "run")
	if err != nil {
		return nil, err
	}
	defer lock.Unlock()
	l := newLayout(st)
	now := time.Now()
	rep := &Report{Dir: dir, Models: len(st.Models), Summary: filepath.Join(dir, SummaryName), Manifest: filepath.Join(dir, "manifest.json")}
	if lock.Stale != "" {
		rep.Notes = append(rep.Notes, "took over the lock left by "+lock.Stale+", which no longer runs")
	}
	session := Session{Kind: "run", Started: stamp(now), Workers: opt.Workers, Shard: opt.Shard.String()}

	// A write error stops the study: models still running are cancelled
	// and stay pending, finished ones are kept.
	runCtx, stopRun := context.WithCancel(ctx)
	defer stopRun()
	var (
		man  *Manifest
		todo []int
		// ready is closed once the directory can take model files;
		// dirErr, set before, tells the workers that it never will.
		ready  = make(chan struct{})
		dirErr error
	)
	if _, err := os.Stat(dir); errors.Is(err, fs.ErrNotExist) {
		// A new directory: every model of the shard is to run. The
		// directory is made at once, and the models start while its
		// models/ and spectra/, config.toml and manifest.json are made,
		// written and synced (several milliseconds, tens on a busy disk);
		// no model file is written before them. A kill before the
		// manifest leaves what startedHere accepts, so the directory is
		// continued like an empty one.
		if err := os.MkdirAll(filepath.Dir(dir), 0o755); err != nil {
			return nil, err
		}
		if err := os.Mkdir(dir, 0o755); err != nil {
			return nil, err
		}
		for i := range st.Models {
			if opt.Shard.Holds(st.Models[i].Index) {
				rep.InShard++
				todo = append(todo, i)
			}
		}
		go func() {
			defer close(ready)
			removeTempDirs(dir) // left by a killed process (createDir)
			for _, sub := range []string{"models", "spectra"} {
				if dirErr == nil {
					if dirErr = os.Mkdir(filepath.Join(dir, sub), 0o755); dirErr != nil {
						dirErr = fmt.Errorf("creating %s: %w", dir, dirErr)
					}
				}
			}
			if dirErr == nil {
				man = newManifest(st, l, opt.Shard, now)
				man.Sessions = []Session{session}
				dirErr = man.fill(st)(dir)
			}
			if dirErr != nil {
				stopRun()
				os.RemoveAll(dir) // made here and holding no result: as if never started
			}
		}()
	} else {
		var err error
		if man, todo, err = prepareExisting(st, dir, l, opt, now, rep); err != nil {
			return nil, err
		}
		if opt.Resume && len(man.Sessions) > 0 {
			session.Kind = "resume"
		}
		man.Sessions = append(man.Sessions, session)
		man.update()
		if err := man.write(dir); err != nil {
			return nil, err
		}
		close(ready)
	}

	type result struct {
		i        int
		err      error
		canceled bool
		warnings []string
		secs     float64
	}
	jobs := make(chan int)
	// Buffered so that workers never wait for the collector.
	results := make(chan result, len(todo))
	var wg sync.WaitGroup
	for w := 0; w < min(opt.Workers, max(len(todo), 1)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				if runCtx.Err() != nil {
					results <- result{i: i, canceled: true}
					continue
				}
				t0 := time.Now()
				warn, err := runOne(runCtx, st, l, dir, &st.Models[i], opt.Model, ready, &dirErr)
				r := result{i: i, err: err, warnings: warn, secs: time.Since(t0).Seconds()}
				var we *writeError
				if errors.Is(err, errNoDir) {
					r.canceled = true
				} else if errors.As(err, &we) {
					stopRun() // at once, before another model starts
				} else if err != nil && runCtx.Err() != nil {
					r.canceled = true
				}
				results <- r
			}
		}()
	}
	go func() {
		// Hand out models until done or stopped; models never handed out
		// stay pending.
		defer close(jobs)
		for _, i := range todo {
			if runCtx.Err() != nil {
				return
			}
			select {
			case jobs <- i:
			case <-runCtx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()
	<-ready
	if dirErr != nil {
		for range results {
		}
		return nil, dirErr
	}
	sess := &man.Sessions[len(man.Sessions)-1]
	prog := newProgress(opt.Progress, len(todo), rep.Skipped, rep.InShard)
	var writeErr error
	lastWrite := time.Now()
	for r := range results {
		ms := &man.Models[r.i]
		name := st.Models[r.i].Name
		var we *writeError
		switch {
		case r.canceled:
			ms.Status, ms.Error = StatusPending, ""
		case errors.As(r.err, &we):
			// Nothing of this model is on disk (or only its spectrum,
			// which a resume overwrites): it stays pending.
			ms.Status, ms.Error = StatusPending, ""
			if writeErr == nil {
				writeErr = we.err
				stopRun()
			}
		case r.err != nil:
			ms.Status, ms.Error = StatusFailed, r.err.Error()
			rep.Failures = append(rep.Failures, name+": "+r.err.Error())
			sess.Ran++
		default:
			ms.Status, ms.Error = StatusDone, ""
			rep.Ran++
			sess.Ran++
			for _, w := range r.warnings {
				rep.Warnings = append(rep.Warnings, Warning{name, r.i, w})
			}
		}
		if !r.canceled && we == nil {
			prog.done(name, r.err, r.secs)
		}
		// The manifest is informative (models/ is the record), so it is
		// rewritten at most every manifestEvery, not after every model.
		if time.Since(lastWrite) >= manifestEvery && writeErr == nil {
			man.update()
			if err := man.write(dir); err != nil {
				writeErr = err
				stopRun()
			}
			lastWrite = time.Now()
		}
	}
	prog.finish()
	sort.SliceStable(rep.Warnings, func(a, b int) bool { return rep.Warnings[a].Index < rep.Warnings[b].Index })
	sort.Strings(rep.Failures)

	// Count what is left, and rebuild the summary from the models/ files.
	for i := range st.Models {
		if !opt.Shard.Holds(st.Models[i].Index) {
			continue
		}
		switch man.Models[i].Status {
		case StatusFailed:
			rep.Failed++
		case StatusPending:
			rep.Pending++
		}
	}
	// The summary is rebuilt from the models/ files while the final
	// manifest is written: both are synced at the same time (one wait for
	// the disk instead of two) and renamed in that order, so the manifest
	// never calls a study complete whose summary is not on disk. The
	// manifest is first written as if the summary succeeds, and written
	// again if it did not.
	type summaryResult struct {
		vs   ValidityStats
		file *pendingFile
		err  error
	}
	sumDone := make(chan summaryResult, 1)
	go func(s *summary) {
		var r summaryResult
		r.vs, r.file, r.err = s.write()
		sumDone <- r
	}(newSummary(dir, man, l.cols))
	end := stamp(time.Now())
	sess.Finished = end
	// A signal that arrives once every model of the session is finished
	// interrupts nothing but the figures.
	interrupted := ctx.Err() != nil && rep.Pending > 0
	// Record the models' status before drawing: figures are derived from
	// the tables, and a failure to draw must not hide finished models.
	settle := func() {
		man.update()
		man.Finished = ""
		switch {
		case writeErr != nil:
			man.Status = StudyInterrupted
			sess.Stopped = "write error: " + writeErr.Error()
		case interrupted:
			man.Status = StudyInterrupted
			sess.Stopped = "interrupted"
		case man.Status != StudyIncomplete:
			man.Finished = end
		}
	}
	settle()
	manFile, manErr := man.pending(dir)
	sr := <-sumDone
	rep.Validity = sr.vs
	if sr.err == nil && sr.file != nil {
		sr.err = sr.file.commit()
	}
	if sr.err == nil {
		os.Remove(filepath.Join(dir, legacySummaryName)) // superseded by SummaryName
	} else if writeErr == nil {
		writeErr = sr.err
		if manFile != nil {
			manFile.discard()
		}
		settle()
		manFile, manErr = man.pending(dir)
	}
	if manErr == nil {
		manErr = manFile.commit()
	}
	if manErr != nil && writeErr == nil {
		writeErr = manErr
	}
	if writeErr != nil {
		return rep, writeErr
	}
	if interrupted {
		return rep, ctx.Err()
	}
	if st.Output.Plots && !opt.NoPlots && opt.Shard.All() {
		// The tables are complete here: an interruption while drawing
		// leaves a complete run with some figures missing (PlotError).
		figs, err := PlotContext(ctx, dir, PlotOptions{Formats: st.Output.Formats, Titles: opt.Titles, Workers: opt.Workers, Progress: opt.Progress, Note: func(n string) { rep.Notes = append(rep.Notes, n) }})
		rep.Figures = figs
		if err != nil {
			return rep, &PlotError{err}
		}
	}
	return rep, nil
}

// errNoDir is the result of a model computed for a run directory that
// could not be made; the model stays pending.
var errNoDir = errors.New("no run directory")

// writeError marks a failure to write results (disk full, permissions),
// which stops the study rather than counting as a failed model.
type writeError struct{ err error }

func (e *writeError) Error() string { return e.err.Error() }
func (e *writeError) Unwrap() error { return e.err }

// runOne computes one model and writes its spectrum and then its models/
// file. A failed model gets a models/ file with status failed.
//
// The model is computed before ready is closed if need be; its files are
// written after, and not at all if *dirErr is then set (errNoDir).
func runOne(ctx context.Context, st *config.Study, l layout, dir string, m *config.Model, run ModelFunc, ready <-chan struct{}, dirErr *error) (warnings []string, err error) {
	var tr *transfer.Trajectory
	func() {
		defer func() {
			if p := recover(); p != nil {
				err = fmt.Errorf("model computation panicked: %v", p)
			}
		}()
		tr, err = run(ctx, m.Params)
	}()
	if err == nil && tr == nil {
		err = errors.New("model computation returned no result")
	}
	if err == nil && len(tr.Checkpoints) == 0 {
		err = errors.New("model computation returned no checkpoints")
	}
	if err != nil && ctx.Err() != nil {
		return nil, err // cancelled: leave no record, the model stays pending
	}
	if err == nil {
		tr.Warnings = append(tr.Warnings, checkGrid(ctx, m.Params, tr)...)
	}
	<-ready
	if *dirErr != nil {
		return nil, errNoDir
	}
	var sum string
	if err == nil {
		h := sha256.New()
		if e := writeChecked(filepath.Join(dir, "spectra", m.Name+".ecsv"), func(w io.Writer) error {
			h.Reset() // the checksum is of what ends up in the file
			return writeSpectrum(io.MultiWriter(w, h), st, m, tr)
		}); e != nil {
			var ce *contentError
			if !errors.As(e, &ce) {
				return nil, &writeError{e}
			}
			err = ce.err // bad model output: the model failed
		}
		sum = hex.EncodeToString(h.Sum(nil))
	}
	if e := writeChecked(filepath.Join(dir, "models", m.Name+".ecsv"), func(w io.Writer) error {
		return writeModelTable(w, st, l, m, tr, sum, err)
	}); e != nil {
		return nil, &writeError{e}
	}
	if err != nil {
		return nil, err
	}
	return modelWarnings(tr), nil
}

// modelWarnings are the warnings of a model: those of the transfer
// solution, plus its validity warning when the trajectory came from a
// model function that does not add it (Options.Model in tests).
func modelWarnings(tr *transfer.Trajectory) []string {
	out := append([]string(nil), tr.Warnings...)
	if w := transfer.ValidityWarning(tr); w != "" && !slices.Contains(out, w) {
		out = append(out, w)
	}
	return out
}

// statusDamaged marks a models/ file, or the spectrum it vouches for,
// that fails its check (truncated, edited, wrong checksum).
const statusDamaged = "damaged"

// finished reads the status recorded in models/<name>.ecsv. A model is
// done only if that file parses, has as many rows as it says, and the
// spectrum's SHA-256 matches the one it records; otherwise it reports
// statusDamaged with the reason.
func finished(dir, name string) (status, msg string) {
	mf := filepath.Join(dir, "models", name+".ecsv")
	if _, err := os.Stat(mf); err != nil {
		return StatusPending, ""
	}
	t, err := ecsv.ReadFile(mf)
	if err != nil {
		return statusDamaged, fmt.Sprintf("%s does not read back (%v)", mf, err)
	}
	s, _ := t.MetaValue("status")
	switch s {
	case StatusDone:
		if n, ok := t.MetaValue("checkpoints"); ok && n != strconv.Itoa(len(t.Rows)) {
			return statusDamaged, fmt.Sprintf("%s has %d rows, it records %s", mf, len(t.Rows), n)
		}
		sf := filepath.Join(dir, "spectra", name+".ecsv")
		data, err := os.ReadFile(sf)
		if err != nil {
			return StatusPending, ""
		}
		if want, ok := t.MetaValue("spectrum_sha256"); ok {
			sum := sha256.Sum256(data)
			if hex.EncodeToString(sum[:]) != want {
				return statusDamaged, fmt.Sprintf("%s does not match the checksum in %s", sf, mf)
			}
		} else if _, err := ecsv.Read(bytes.NewReader(data), sf); err != nil {
			return statusDamaged, fmt.Sprintf("%s does not read back (%v)", sf, err)
		}
		return StatusDone, ""
	case StatusFailed:
		e, _ := t.MetaValue("error")
		return StatusFailed, e
	}
	return statusDamaged, fmt.Sprintf("%s records no status", mf)
}

// prepareExisting prepares a directory that exists (prepareDir) and finds
// the models of the shard that are to run; those finished in earlier
// sessions are counted in rep.
func prepareExisting(st *config.Study, dir string, l layout, opt Options, now time.Time, rep *Report) (*Manifest, []int, error) {
	man, err := prepareDir(st, dir, l, opt, now)
	if err != nil {
		return nil, nil, err
	}
	// The models/ files are the record of what is finished; a file that
	// fails its check is recomputed.
	var todo []int
	for i := range st.Models {
		m := &st.Models[i]
		ms := &man.Models[i]
		if !opt.Shard.Holds(m.Index) {
			if ms.Status != StatusDone {
				ms.Status, ms.Error = StatusPending, ""
			}
			continue
		}
		rep.InShard++
		status, msg := finished(dir, m.Name)
		switch status {
		case StatusDone:
			ms.Status, ms.Error = StatusDone, ""
			rep.Skipped++
			continue
		case StatusFailed:
			ms.Status, ms.Error = StatusFailed, msg
		case statusDamaged:
			ms.Status, ms.Error = StatusPending, ""
			rep.Notes = append(rep.Notes, msg+"; computing the model again")
		default:
			ms.Status, ms.Error = StatusPending, ""
		}
		todo = append(todo, i)
	}
	return man, todo, nil
}

// prepareDir checks an existing run directory to resume, or fills an
// empty one (or one a killed start left, see startedHere). It never
// modifies an existing directory it refuses. A directory that is gone by
// now is made complete (config.toml, manifest.json, models/, spectra/)
// under a temporary name and renamed into place. Execute makes new
// directories itself, beside the first models. The caller holds the
// directory's lock.
func prepareDir(st *config.Study, dir string, l layout, opt Options, now time.Time) (*Manifest, error) {
	if dir == "" {
		return nil, inputErrorf("no run directory given (set output.dir in the config or use --out)")
	}
	removeTempDirs(dir)
	fi, err := os.Stat(dir)
	exists := err == nil
	if exists && !fi.IsDir() {
		return nil, inputErrorf("%s exists and is not a directory", dir)
	}
	if exists {
		old, merr := ReadManifest(dir)
		switch {
		case merr == nil:
			if !opt.Resume {
				return nil, inputErrorf("%s already holds a run (manifest.json, status %s); use --resume to continue it, or --out to write elsewhere", dir, old.Status)
			}
			if old.ConfigHash != st.Hash {
				return nil, inputErrorf("cannot resume %s: the config changed since the run started (config hash %.12s... in manifest.json, %.12s... now); resuming would mix results of two configs. Restore the config (the run's own copy is %s) or start a new run with --out", dir, old.ConfigHash, st.Hash, filepath.Join(dir, "config.toml"))
			}
			if old.Shard != opt.Shard.String() {
				return nil, inputErrorf("cannot resume %s: it holds shard %q, not %q; resume with the same --shard", dir, old.Shard, opt.Shard.String())
			}
			fresh := newManifest(st, l, opt.Shard, now)
			if len(old.Models) != len(fresh.Models) {
				return nil, inputErrorf("cannot resume %s: manifest.json lists %d models, the config expands to %d", dir, len(old.Models), len(fresh.Models))
			}
			fresh.Started, fresh.Sessions = old.Started, old.Sessions
			countKilledSession(dir, old, fresh)
			for _, sub := range []string{"models", "spectra"} {
				if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
					return nil, err
				}
			}
			removeTemps(dir, filepath.Join(dir, "models"), filepath.Join(dir, "spectra"), filepath.Join(dir, "plots"))
			return fresh, nil
		case !errors.Is(merr, os.ErrNotExist):
			return nil, inputErrorf("%s: %v", dir, merr)
		}
		if !startedHere(dir, st.Resolved) {
			return nil, inputErrorf("%s exists, is not empty and holds no run (no manifest.json); choose another --out", dir)
		}
	}
	man := newManifest(st, l, opt.Shard, now)
	fill := man.fill(st)
	if exists {
		// An existing empty directory (perhaps the working directory) is
		// filled in place: replacing it could pull it from under a
		// process that stands in it.
		for _, sub := range []string{"models", "spectra"} {
			if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
				return nil, err
			}
		}
		if err := fill(dir); err != nil {
			return nil, err
		}
		return man, nil
	}
	if err := createDir(dir, fill); err != nil {
		return nil, err
	}
	return man, nil
}

// fill returns the function that writes a new run directory's files
// into d: config.toml, then the manifest, which marks a run directory.
// Both are written and synced at the same time (one wait for the disk
// instead of two) and renamed in that order.
func (m *Manifest) fill(st *config.Study) func(d string) error {
	return func(d string) error {
		var cfg *pendingFile
		var cfgErr error
		done := make(chan struct{})
		go func() {
			defer close(done)
			cfg, cfgErr = writePending(filepath.Join(d, "config.toml"), func(w io.Writer) error {
				_, err := w.Write(st.Resolved)
				return err
			}, true)
		}()
		man, err := m.pending(d)
		<-done
		if err == nil && cfgErr == nil {
			if err = cfg.commit(); err == nil {
				return man.commit()
			}
		}
		if cfg != nil {
			cfg.discard()
		}
		if man != nil {
			man.discard()
		}
		if cfgErr != nil {
			return cfgErr
		}
		return err
	}
}

// startedHere reports whether dir is empty, or holds only what a start of
// this same run leaves before its manifest (filling an existing
// directory): config.toml equal to resolved, empty models/ and spectra/,
// temporary files.
func startedHere(dir string, resolved []byte) bool {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return false
	}
	for _, e := range ents {
		n := e.Name()
		switch {
		case strings.Contains(n, tmpMarker):
		case n == "config.toml":
			data, err := os.ReadFile(filepath.Join(dir, n))
			if err != nil || !bytes.Equal(data, resolved) {
				return false
			}
		case (n == "models" || n == "spectra") && e.IsDir():
			sub, _ := os.ReadDir(filepath.Join(dir, n))
			for _, f := range sub {
				if !strings.Contains(f.Name(), tmpMarker) {
					return false
				}
			}
		default:
			return false
		}
	}
	return true
}

// tmpDirMarker names directories under construction, beside their
// destination: ".NAME.tmp-123".
const tmpDirMarker = ".tmp-"

// createDir builds a directory under a temporary name beside dir, with
// models/ and spectra/ and whatever fill writes, and renames it to dir (an
// empty dir is replaced).
func createDir(dir string, fill func(tmp string) error) error {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return err
	}
	parent, base := filepath.Split(abs)
	if err := os.MkdirAll(parent, 0o755); err != nil {
		return err
	}
	tmp, err := os.MkdirTemp(parent, "."+base+tmpDirMarker)
	if err != nil {
		return err
	}
	err = os.Chmod(tmp, 0o755)
	for _, sub := range []string{"models", "spectra"} {
		if err == nil {
			err = os.Mkdir(filepath.Join(tmp, sub), 0o755)
		}
	}
	if err == nil {
		err = fill(tmp)
	}
	if err == nil {
		if fi, serr := os.Stat(dir); serr == nil && fi.IsDir() {
			os.Remove(dir) // empty (checked by the caller); rename needs it gone on some systems
		}
		err = os.Rename(tmp, dir)
	}
	if err != nil {
		os.RemoveAll(tmp)
		return fmt.Errorf("creating %s: %w", dir, err)
	}
	return nil
}

// removeTempDirs removes directories left under construction by a killed
// process (the caller holds the lock, so none is in use).
func removeTempDirs(dir string) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return
	}
	parent, base := filepath.Split(abs)
	ents, _ := os.ReadDir(parent)
	for _, e := range ents {
		if e.IsDir() && strings.HasPrefix(e.Name(), "."+base+tmpDirMarker) {
			os.RemoveAll(filepath.Join(parent, e.Name()))
		}
	}
}

// countKilledSession adds to the last recorded session the models it
// finished after its last manifest update: a session killed outright
// (SIGKILL, node failure) could not record them, but its models/ files
// did.
func countKilledSession(dir string, old, fresh *Manifest) {
	if len(fresh.Sessions) == 0 {
		return
	}
	last := &fresh.Sessions[len(fresh.Sessions)-1]
	if last.Finished != "" {
		return
	}
	for _, ms := range old.Models {
		if ms.Status != StatusPending {
			continue
		}
		if st, _ := finished(dir, ms.Name); st == StatusDone || st == StatusFailed {
			last.Ran++
		}
	}
	last.Stopped = "killed"
}

// summaryStats checks one model table against the summary layout and adds
// its checkpoints to the validity counts.
func summaryStats(vs *ValidityStats, t *ecsv.Table, ncols int) error {
	if len(t.Columns) != ncols {
		return fmt.Errorf("%s: %d columns, summary has %d", t.File, len(t.Columns), ncols)
	}
	r, err := t.Floats("r_over_gomega")
	if err != nil {
		return err
	}
	ok, err := t.Bools("valid")
	if err != nil {
		return err
	}
	pop, err := t.Strings("population")
	if err != nil {
		return err
	}
	for i := range r {
		vs.Checkpoints++
		if ok[i] {
			vs.Valid++
		}
		if pop[i] == transfer.Density.String() {
			vs.Density++
		}
		// NaN (no field) counts as unbounded.
		if math.IsNaN(r[i]) || r[i] > vs.MaxRoverGOmega {
			vs.MaxRoverGOmega = r[i]
		}
	}
	return nil
}

// writeSummary concatenates the rows of the finished models in index
// order. It needs only the directory and its manifest, so Merge builds the
// same bytes as Execute; cols is the layout to use when no model is done.
func writeSummary(dir string, man *Manifest, cols []ecsv.Column) (ValidityStats, error) {
	vs, p, err := newSummary(dir, man, cols).write()
	if err == nil && p != nil {
		err = p.commit()
	}
	if err == nil {
		os.Remove(filepath.Join(dir, legacySummaryName)) // superseded by SummaryName
	}
	return vs, err
}

// summary is what the summary table is built from, taken from the
// manifest so that the table can be written while the manifest changes.
type summary struct {
	dir  string
	meta []ecsv.Meta
	cols []ecsv.Column
	done []string // models/ files of the finished models, in index order
}

func newSummary(dir string, man *Manifest, cols []ecsv.Column) *summary {
	meta := []ecsv.Meta{
		{Key: "program", Value: "maserpol " + Version},
		{Key: "config_hash", Value: man.ConfigHash},
		{Key: "validity", Value: validityNote},
		{Key: "models", Value: strconv.Itoa(len(man.Models))},
	}
	if len(man.VariedColumns) > 0 {
		meta = append(meta, ecsv.Meta{Key: "varied_columns", Value: strings.Join(man.VariedColumns, ", ")})
	}
	done := make([]string, 0, len(man.Models))
	for _, ms := range man.Models {
		if ms.Status == StatusDone {
			done = append(done, filepath.Join(dir, "models", ms.Name+".ecsv"))
		}
	}
	return &summary{dir: dir, meta: meta, cols: cols, done: done}
}

// write writes the summary, synced, under a temporary name (nil when no
// model is done and there is no layout to write an empty table with).
func (s *summary) write() (ValidityStats, *pendingFile, error) {
	var vs ValidityStats
	cols := s.cols
	if cols == nil {
		if len(s.done) == 0 {
			return vs, nil, nil
		}
		t, err := ecsv.ReadFile(s.done[0])
		if err != nil {
			return vs, nil, err
		}
		cols = t.Columns
	}
	// The model tables are read one at a time and their rows streamed into
	// the summary, so memory does not grow with the number of models.
	p, err := writePending(filepath.Join(s.dir, SummaryName), func(out io.Writer) error {
		w := ecsv.NewWriterSize(out, ecsv.BufferSize, cols, s.meta)
		for _, path := range s.done {
			t, err := ecsv.ReadFile(path)
			if err != nil {
				return err
			}
			if err := summaryStats(&vs, t, len(cols)); err != nil {
				return err
			}
			for _, r := range t.Rows {
				if err := w.WriteCells(r); err != nil {
					return err
				}
			}
		}
		return w.Flush()
	}, true)
	return vs, p, err
}
