package runs

import (
	"context"
	"errors"
	"fmt"
	"io"
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
	// directory) inside the populations-only regime.
	Validity ValidityStats
}

// ValidityStats counts checkpoints inside the populations-only regime,
// R/(g Omega) <= ValidLimit.
type ValidityStats struct {
	Checkpoints, Valid int
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
	man, err := prepareDir(st, dir, l, opt, now)
	if err != nil {
		return nil, err
	}
	rep := &Report{Dir: dir, Models: len(st.Models), Summary: filepath.Join(dir, "summary.csv"), Manifest: filepath.Join(dir, "manifest.json")}
	if lock.Stale != "" {
		rep.Notes = append(rep.Notes, "took over the lock left by "+lock.Stale+", which no longer runs")
	}

	// The models/ files are the record of what is finished.
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
		if status, msg := finished(dir, m.Name); status == StatusDone {
			ms.Status, ms.Error = StatusDone, ""
			rep.Skipped++
			continue
		} else if status == StatusFailed {
			ms.Status, ms.Error = StatusFailed, msg
		}
		todo = append(todo, i)
	}
	kind := "run"
	if opt.Resume && len(man.Sessions) > 0 {
		kind = "resume"
	}
	man.Sessions = append(man.Sessions, Session{Kind: kind, Started: stamp(now), Workers: opt.Workers, Shard: opt.Shard.String()})
	sess := &man.Sessions[len(man.Sessions)-1]
	man.update()
	if err := man.write(dir); err != nil {
		return nil, err
	}

	prog := newProgress(opt.Progress, len(todo), rep.Skipped, rep.InShard)
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
				t0 := time.Now()
				warn, err := runOne(ctx, st, l, dir, &st.Models[i], opt.Model)
				r := result{i: i, err: err, warnings: warn, secs: time.Since(t0).Seconds()}
				if err != nil && ctx.Err() != nil {
					var we *writeError
					r.canceled = !errors.As(err, &we)
				}
				results <- r
			}
		}()
	}
	go func() {
		// Hand out models until done or cancelled; models never handed out
		// stay pending.
		defer close(jobs)
		for _, i := range todo {
			if ctx.Err() != nil {
				return
			}
			select {
			case jobs <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()
	var writeErr error
	lastWrite := time.Now()
	for r := range results {
		ms := &man.Models[r.i]
		name := st.Models[r.i].Name
		switch {
		case r.canceled:
			ms.Status, ms.Error = StatusPending, ""
		case r.err != nil:
			var we *writeError
			if errors.As(r.err, &we) && writeErr == nil {
				writeErr = we.err
			}
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
		if !r.canceled {
			prog.done(name, r.err, r.secs)
		}
		// The manifest is informative (models/ is the record), so it is
		// rewritten at most every manifestEvery, not after every model.
		if time.Since(lastWrite) >= manifestEvery {
			man.update()
			if err := man.write(dir); err != nil && writeErr == nil {
				writeErr = err
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
	vs, err := writeSummary(dir, man, l.cols)
	if err != nil && writeErr == nil {
		writeErr = err
	}
	rep.Validity = vs
	// Record the models' status before drawing: figures are derived from
	// the tables, and a failure to draw must not hide finished models.
	man.update()
	end := stamp(time.Now())
	sess.Finished = end
	if ctx.Err() != nil {
		man.Status = StudyInterrupted
	} else if man.Status != StudyIncomplete {
		man.Finished = end
	}
	if err := man.write(dir); err != nil && writeErr == nil {
		writeErr = err
	}
	if ctx.Err() == nil && writeErr == nil && st.Output.Plots && !opt.NoPlots && opt.Shard.All() {
		figs, err := Plot(dir, st.Output.Formats, func(n string) { rep.Notes = append(rep.Notes, n) })
		rep.Figures = figs
		if err != nil {
			writeErr = &PlotError{err}
		}
	}
	if writeErr != nil {
		return rep, writeErr
	}
	if ctx.Err() != nil {
		return rep, ctx.Err()
	}
	return rep, nil
}

// writeError marks a failure to write results (disk full, permissions),
// which stops the study rather than counting as a failed model.
type writeError struct{ err error }

func (e *writeError) Error() string { return e.err.Error() }
func (e *writeError) Unwrap() error { return e.err }

// runOne computes one model and writes its spectrum and then its models/
// file. A failed model gets a models/ file with status failed.
func runOne(ctx context.Context, st *config.Study, l layout, dir string, m *config.Model, run ModelFunc) (warnings []string, err error) {
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
		if e := writeAtomic(filepath.Join(dir, "spectra", m.Name+".ecsv"), func(w io.Writer) error {
			return writeSpectrum(w, st, m, tr)
		}); e != nil {
			var ce *contentError
			if !errors.As(e, &ce) {
				return nil, &writeError{e}
			}
			err = ce.err // bad model output: the model failed
		}
	}
	if e := writeAtomic(filepath.Join(dir, "models", m.Name+".ecsv"), func(w io.Writer) error {
		return writeModelTable(w, st, l, m, tr, err)
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

// finished reads the status recorded in models/<name>.ecsv: done only if
// the spectrum is there too.
func finished(dir, name string) (status, msg string) {
	t, err := ecsv.ReadFile(filepath.Join(dir, "models", name+".ecsv"))
	if err != nil {
		return StatusPending, ""
	}
	s, _ := t.MetaValue("status")
	switch s {
	case StatusDone:
		if _, err := os.Stat(filepath.Join(dir, "spectra", name+".ecsv")); err != nil {
			return StatusPending, ""
		}
		return StatusDone, ""
	case StatusFailed:
		e, _ := t.MetaValue("error")
		return StatusFailed, e
	}
	return StatusPending, ""
}

// prepareDir creates a fresh run directory or checks one to resume. It
// never modifies an existing directory it refuses.
func prepareDir(st *config.Study, dir string, l layout, opt Options, now time.Time) (*Manifest, error) {
	if dir == "" {
		return nil, inputErrorf("no run directory given (set output.dir in the config or use --out)")
	}
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
				return nil, inputErrorf("cannot resume %s: the config changed since the run started (config hash %.12s... in manifest.json, %.12s... now); resuming would mix results of two configs. Restore the config or start a new run with --out", dir, old.ConfigHash, st.Hash)
			}
			if old.Shard != opt.Shard.String() {
				return nil, inputErrorf("cannot resume %s: it holds shard %q, not %q; resume with the same --shard", dir, old.Shard, opt.Shard.String())
			}
			fresh := newManifest(st, l, opt.Shard, now)
			if len(old.Models) != len(fresh.Models) {
				return nil, inputErrorf("cannot resume %s: manifest.json lists %d models, the config expands to %d", dir, len(old.Models), len(fresh.Models))
			}
			fresh.Started, fresh.Sessions = old.Started, old.Sessions
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
		ents, _ := os.ReadDir(dir)
		if len(ents) > 0 {
			return nil, inputErrorf("%s exists, is not empty and holds no run (no manifest.json); choose another --out", dir)
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	for _, sub := range []string{"models", "spectra"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return nil, err
		}
	}
	if err := writeFileAtomic(filepath.Join(dir, "config.toml"), st.Resolved); err != nil {
		return nil, err
	}
	return newManifest(st, l, opt.Shard, now), nil
}

// writeSummary concatenates the rows of the finished models in index
// order. It needs only the directory and its manifest, so Merge builds the
// same bytes as Execute; cols is the layout to use when no model is done.
func writeSummary(dir string, man *Manifest, cols []ecsv.Column) (ValidityStats, error) {
	var vs ValidityStats
	meta := []ecsv.Meta{
		{Key: "program", Value: "maserpol " + Version},
		{Key: "config_hash", Value: man.ConfigHash},
		{Key: "validity", Value: validityNote},
		{Key: "models", Value: strconv.Itoa(len(man.Models))},
	}
	if len(man.VariedColumns) > 0 {
		meta = append(meta, ecsv.Meta{Key: "varied_columns", Value: strings.Join(man.VariedColumns, ", ")})
	}
	var tabs []*ecsv.Table
	for _, ms := range man.Models {
		if ms.Status != StatusDone {
			continue
		}
		t, err := ecsv.ReadFile(filepath.Join(dir, "models", ms.Name+".ecsv"))
		if err != nil {
			return vs, err
		}
		if cols == nil {
			cols = t.Columns
		}
		if len(t.Columns) != len(cols) {
			return vs, fmt.Errorf("%s: %d columns, summary has %d", t.File, len(t.Columns), len(cols))
		}
		r, err := t.Floats("r_over_gomega")
		if err != nil {
			return vs, err
		}
		ok, err := t.Bools("valid")
		if err != nil {
			return vs, err
		}
		for i := range r {
			vs.Checkpoints++
			if ok[i] {
				vs.Valid++
			}
			// NaN (no field) counts as unbounded.
			if math.IsNaN(r[i]) || r[i] > vs.MaxRoverGOmega {
				vs.MaxRoverGOmega = r[i]
			}
		}
		tabs = append(tabs, t)
	}
	if cols == nil {
		return vs, nil
	}
	return vs, writeAtomic(filepath.Join(dir, "summary.csv"), func(out io.Writer) error {
		w := ecsv.NewWriter(out, cols, meta)
		for _, t := range tabs {
			for _, r := range t.Rows {
				if err := w.WriteCells(r); err != nil {
					return err
				}
			}
		}
		return w.Flush()
	})
}
