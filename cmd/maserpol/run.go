package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"maserpol/config"
	"maserpol/runs"
	"maserpol/transfer"
)

func cmdRun(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("run", stderr)
	workers := fs.Int("workers", 0, "number of models computed at once; 0 = one per CPU core (the default); results do not depend on it")
	resume := fs.Bool("resume", false, "continue an interrupted run in its directory; refuses if the config changed")
	shard := fs.String("shard", "", "run only shard `K/N`: the models with index % N == K-1 (K = 1..N, like a job-array task index)")
	out := fs.String("out", "", "run `directory` (default: output.dir of the config)")
	noPlots := fs.Bool("no-plots", false, "do not draw figures (maserpol plot draws them later)")
	titles := fs.Bool("titles", false, "put a title above each figure (journal figures have none; default off)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fs.Usage()
		return exitInput
	}
	if *workers < 0 {
		return report(stderr, usagef("--workers must be >= 0 (0 = one per CPU core; got %d)", *workers))
	}
	var sh runs.Shard
	if *shard != "" {
		if sh, err = runs.ParseShard(*shard); err != nil {
			return report(stderr, usagef("--shard: %v", err))
		}
	}
	st, err := config.Load(pos[0])
	if err != nil {
		return report(stderr, err)
	}
	dir := st.Output.Dir
	if *out != "" {
		dir = *out
	}
	code, interrupted := runStudy(ctx, st, dir, runs.Options{Workers: *workers, Resume: *resume, Shard: sh, NoPlots: *noPlots, Titles: *titles}, stdout, stderr)
	if interrupted {
		hint := "maserpol run " + pos[0] + " --resume"
		if *out != "" {
			hint += " --out " + *out
		}
		if *shard != "" {
			hint += " --shard " + *shard
		}
		fmt.Fprintf(stderr, "maserpol: interrupted; finished models are kept. Continue with:\n  %s\n", hint)
	}
	return code
}

// runStudy executes a parsed study and reports where everything went. It
// is shared by run and demo. interrupted is true when models were left
// pending by a signal (an interruption while drawing the figures of a
// complete run is not one).
func runStudy(ctx context.Context, st *config.Study, dir string, opt runs.Options, stdout, stderr io.Writer) (code int, interrupted bool) {
	studyWarnings(stderr, st)
	opt.Progress = stderr
	rep, err := runs.Execute(ctx, st, dir, opt)
	if rep != nil {
		printWarnings(stderr, rep.Warnings, st.Warnings)
		for _, f := range rep.Failures {
			fmt.Fprintf(stderr, "maserpol: model failed: %s\n", f)
		}
		for _, n := range rep.Notes {
			fmt.Fprintf(stderr, "maserpol: note: %s\n", n)
		}
		printReport(stdout, rep)
	}
	if err != nil {
		var pe *runs.PlotError
		switch {
		case errors.As(err, &pe) && errors.Is(err, context.Canceled):
			fmt.Fprintf(stderr, "maserpol: interrupted while drawing figures; the run itself is complete (tables and manifest.json). Draw the figures with:\n  maserpol plot %s\n", dir)
			return exitFailure, false
		case errors.As(err, &pe):
			fmt.Fprintf(stderr, "maserpol: %v\nmaserpol: the tables and manifest.json are complete; redraw the figures with: maserpol plot %s\n", err, dir)
			return exitFailure, false
		case errors.Is(err, context.Canceled):
			return exitFailure, true
		}
		var ie *runs.InputError
		if rep != nil && !errors.As(err, &ie) {
			// A write error stopped the study; what finished is kept.
			fmt.Fprintf(stderr, "maserpol: stopped: %v\nmaserpol: finished models are kept in %s; free space or fix the cause, then continue with --resume\n", err, dir)
			return exitFailure, false
		}
		return report(stderr, err), false
	}
	if rep.Failed > 0 {
		fmt.Fprintf(stderr, "maserpol: %d of %s failed (see manifest.json); maserpol run --resume retries them\n", rep.Failed, plural(rep.InShard, "model", "models"))
		return exitFailure, false
	}
	return exitOK, false
}

func printReport(w io.Writer, rep *runs.Report) {
	fmt.Fprintf(w, "run directory: %s\n", rep.Dir)
	fmt.Fprintf(w, "  models: %d in the study", rep.Models)
	if rep.InShard != rep.Models {
		fmt.Fprintf(w, ", %d in this shard", rep.InShard)
	}
	fmt.Fprintf(w, "; %d computed now, %d finished before, %d failed, %d pending\n", rep.Ran, rep.Skipped, rep.Failed, rep.Pending)
	fmt.Fprintf(w, "  summary:  %s (ECSV, one row per model and checkpoint)\n", rep.Summary)
	fmt.Fprintf(w, "  spectra:  %s (ECSV, one table per model)\n", filepath.Join(rep.Dir, "spectra"))
	fmt.Fprintf(w, "  manifest: %s\n", rep.Manifest)
	if v := rep.Validity; v.Checkpoints > 0 {
		fmt.Fprintf(w, "  validity: %s\n", validityLine(v))
	}
	if len(rep.Figures) > 0 {
		fmt.Fprintf(w, "  figures:  %d files in %s (%s)\n", len(rep.Figures), filepath.Join(rep.Dir, "plots"), figureKinds(rep.Figures))
	}
}

// validityLine says how much of a study lies inside the validity of its
// population models.
func validityLine(v runs.ValidityStats) string {
	return fmt.Sprintf("%d of %d checkpoints valid (%d from the density matrix, valid where the flat-spectrum measure <= %g; %d from the rate equations, valid where R/gOmega <= %g; max R/gOmega = %.3g)",
		v.Valid, v.Checkpoints, v.Density, transfer.FlatLimit, v.Checkpoints-v.Density, runs.ValidLimit, v.MaxRoverGOmega)
}

// figureKinds lists the distinct figure names without model prefixes.
func figureKinds(paths []string) string {
	seen := map[string]bool{}
	var kinds []string
	for _, p := range paths {
		b := filepath.Base(p)
		b = strings.TrimSuffix(b, filepath.Ext(b))
		if i := strings.Index(b, "_"); i > 0 && b[0] == 'm' {
			b = "<model>" + b[i:]
		}
		if !seen[b] {
			seen[b] = true
			kinds = append(kinds, b)
		}
	}
	return strings.Join(kinds, ", ")
}

func cmdPlot(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("plot", stderr)
	formats := fs.String("format", "", "comma-separated figure `formats` among png, svg, pdf, eps (default: output.formats of the run's config.toml, else png,svg)")
	titles := fs.Bool("titles", false, "put a title above each figure (journal figures have none; default off)")
	perModel := fs.Bool("models", false, "draw the per-model figures (<model>_spectra, _evolution) for any study (default: for studies of at most 16 models)")
	workers := fs.Int("workers", 0, "number of figures drawn at once; 0 = one per CPU core (the default); the figures do not depend on it")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fs.Usage()
		return exitInput
	}
	if *workers < 0 {
		return report(stderr, usagef("--workers must be >= 0 (0 = one per CPU core; got %d)", *workers))
	}
	dir := pos[0]
	if _, err := os.Stat(runs.SummaryPath(dir)); err != nil {
		return report(stderr, usagef("%s is not a run directory with results (no %s)", dir, runs.SummaryName))
	}
	fm, _, err := figureFormats(*formats, dir)
	if err != nil {
		return report(stderr, err)
	}
	lock, err := runs.LockDir(dir, "plot")
	if err != nil {
		return report(stderr, err)
	}
	defer lock.Unlock()
	figs, err := runs.PlotContext(ctx, dir, runs.PlotOptions{Formats: fm, Titles: *titles, Models: *perModel, Workers: *workers, Progress: stderr, Note: noteTo(stderr)})
	if err != nil {
		return report(stderr, err)
	}
	fmt.Fprintf(stdout, "figures: %d files in %s (%s)\n", len(figs), filepath.Join(dir, "plots"), figureKinds(figs))
	return exitOK
}

func cmdMerge(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("merge", stderr)
	formats := fs.String("format", "", "comma-separated figure `formats` (default: output.formats of the config)")
	noPlots := fs.Bool("no-plots", false, "do not draw figures")
	titles := fs.Bool("titles", false, "put a title above each figure (journal figures have none; default off)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) < 2 {
		fs.Usage()
		return exitInput
	}
	man, err := runs.MergeContext(ctx, pos[0], pos[1:]...)
	if err != nil {
		if man != nil {
			// Stopped part-way: the destination is a valid run directory.
			fmt.Fprintf(stderr, "maserpol: merge stopped: %v\nmaserpol: %s holds what was merged so far; repeat the same merge command to finish:\n  maserpol merge %s\n",
				err, pos[0], strings.Join(pos, " "))
			return exitFailure
		}
		return report(stderr, err)
	}
	done, failed, pending := 0, 0, 0
	for _, m := range man.Models {
		switch m.Status {
		case runs.StatusDone:
			done++
		case runs.StatusFailed:
			failed++
		default:
			pending++
		}
	}
	fmt.Fprintf(stdout, "run directory: %s\n  models: %d done, %d failed, %d pending of %d\n  summary:  %s\n",
		pos[0], done, failed, pending, len(man.Models), runs.SummaryPath(pos[0]))
	if pending > 0 {
		// A partial merge is not a result: say what is missing and how to
		// finish, and draw no figures of half a study.
		var missing []string
		for _, m := range man.Models {
			if m.Status == runs.StatusPending {
				missing = append(missing, m.Name)
			}
		}
		fmt.Fprintf(stderr, "maserpol: merge incomplete: %s in none of the sources (%s); is a shard missing?\n"+
			"maserpol: merge the missing shard into it when it is there:\n  maserpol merge %s SHARD_DIR\n"+
			"maserpol: or compute the missing models in the merged directory:\n  maserpol run %s --resume --out %s\n",
			plural(pending, "model is", "models are"), listNames(missing), pos[0], filepath.Join(pos[0], "config.toml"), pos[0])
		return exitFailure
	}
	fm, plots, err := figureFormats(*formats, pos[0])
	if err != nil {
		return report(stderr, err)
	}
	if plots && !*noPlots && done > 0 {
		lock, err := runs.LockDir(pos[0], "plot")
		if err != nil {
			return report(stderr, err)
		}
		defer lock.Unlock()
		figs, err := runs.Plot(pos[0], runs.PlotOptions{Formats: fm, Titles: *titles, Progress: stderr, Note: noteTo(stderr)})
		if err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stdout, "  figures:  %d files in %s\n", len(figs), filepath.Join(pos[0], "plots"))
	}
	if failed > 0 {
		return exitFailure
	}
	return exitOK
}

// printWarnings prints each distinct warning once with the models it
// concerns, in model order, leaving out those already printed for the
// whole study (such as the species' unverified values, which every model
// repeats).
func printWarnings(w io.Writer, ws []runs.Warning, printed []string) {
	var order []string
	models := map[string][]string{}
	for _, x := range ws {
		if slices.Contains(printed, x.Msg) {
			continue
		}
		if _, ok := models[x.Msg]; !ok {
			order = append(order, x.Msg)
		}
		models[x.Msg] = append(models[x.Msg], x.Model)
	}
	for _, msg := range order {
		ms := models[msg]
		who := strings.Join(ms, ", ")
		if len(ms) > 4 {
			who = fmt.Sprintf("%s, %s ... %s (%d models)", ms[0], ms[1], ms[len(ms)-1], len(ms))
		}
		fmt.Fprintf(w, "maserpol: warning: %s: %s\n", who, msg)
	}
}

// noteTo prints notes about skipped figures.
func noteTo(w io.Writer) func(string) {
	return func(n string) { fmt.Fprintf(w, "maserpol: note: %s\n", n) }
}

// plural writes "1 model is" or "3 models are".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

// listNames lists names, shortened in the middle when long.
func listNames(ns []string) string {
	if len(ns) > 8 {
		return fmt.Sprintf("%s ... %s", strings.Join(ns[:4], ", "), strings.Join(ns[len(ns)-2:], ", "))
	}
	return strings.Join(ns, ", ")
}
