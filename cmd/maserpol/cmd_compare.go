package main

import (
	"context"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"maserpol/config/units"
	"maserpol/runs/figures"
	"maserpol/runs/interpret"
)

const (
	compareArgs    = "RUNDIR OBSERVED [--stokes IQUV] [--velocity-unit U] [--intensity-unit U] [--max-shift V] [--top N] [--table FILE] [--plot FILE]"
	compareSummary = "fit every model of a run directory to an observed spectrum and rank them by chi-square"
)

// cmdCompare is "maserpol compare".
func cmdCompare(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := newFlags("compare", compareArgs, compareSummary, stderr)
	stokes := fs.String("stokes", "IQUV", "Stokes parameters to fit (I is required)")
	vunit := fs.String("velocity-unit", "", "velocity unit when the file gives none (e.g. km/s)")
	iunit := fs.String("intensity-unit", "", "intensity unit when the file gives none (K, mK; other units are kept and the scale is per K)")
	maxShift := fs.String("max-shift", "", "largest velocity shift of the models in km/s (or with a unit), e.g. 30 (default: unbounded)")
	top := fs.Int("top", 3, "number of best models to print and plot (--table writes all)")
	tablePath := fs.String("table", "", "write the full ranking to this file: .ecsv (with units) or .csv (plain)")
	plotPath := fs.String("plot", "", "plot the best models over the data (format from the extension: png, svg, pdf, eps)")
	titles := fs.Bool("titles", false, "put a title above the figure (journal figures have none)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 2 {
		fs.Usage()
		return exitInput
	}
	if *top < 1 {
		return report(stderr, usagef("--top %d: allowed >= 1", *top))
	}
	if err := checkUnit("velocity-unit", *vunit, units.Velocity); err != nil {
		return report(stderr, err)
	}
	if *tablePath != "" {
		if _, err := checkTablePath("table", *tablePath); err != nil {
			return report(stderr, err)
		}
	}
	if err := checkOutput("table", *tablePath, false); err != nil {
		return report(stderr, err)
	}
	if err := checkOutput("plot", *plotPath, true); err != nil {
		return report(stderr, err)
	}
	var opt interpret.FitOptions
	if *maxShift != "" {
		if opt.MaxShift, err = units.ParsePlain(*maxShift, units.Velocity, "km/s"); err != nil || !(opt.MaxShift > 0) {
			return report(stderr, usagef("--max-shift %q: need a velocity > 0 (allowed units: %s)", *maxShift, units.Allowed(units.Velocity)))
		}
	}
	obs, err := interpret.ReadObserved(pos[1], interpret.ReadOptions{VelocityUnit: *vunit, IntensityUnit: *iunit, Stokes: *stokes})
	if err != nil {
		return report(stderr, usagef("%v", err))
	}
	if n := len(obs.Velocity); n > maxObservedChannels {
		return report(stderr, usagef("%s: %d channels; at most %d can be compared (the channel limit of a model): average channels or cut the velocity range to the line", pos[1], n, maxObservedChannels))
	}
	models, warn, err := interpret.ReadRunDir(pos[0])
	if err != nil {
		return report(stderr, usagef("%v", err))
	}
	for _, w := range warn {
		fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
	}
	if err := ctx.Err(); err != nil {
		return report(stderr, err)
	}
	rk := interpret.Rank(obs, models, opt)
	printRanking(stdout, obs, rk, *top)
	printIntervals(stdout, models, interpret.FitSurface(obs, models, opt))
	for _, r := range rk[:min(*top, len(rk))] {
		if !validAt(r) {
			fmt.Fprintf(stderr, "maserpol: warning: %s at R/Gamma %.3g (R/(g Omega) = %.3g) lies outside the validity of its population model (column valid of the run's summary)\n", r.Model.Name, r.Best.Saturation, rgAt(r))
		}
	}
	if n := atBound(rk); n > 0 {
		fmt.Fprintf(stderr, "maserpol: warning: the best shift of %d of %d models sits at --max-shift %s: the optimum may lie beyond it; widen --max-shift or check the velocity frame\n", n, len(rk), *maxShift)
	}
	if *tablePath != "" {
		if err := writeRanking(*tablePath, obs, rk); err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", *tablePath)
	}
	if *plotPath != "" {
		shown := obs
		if k := (len(obs.Velocity) + maxPlotPoints - 1) / maxPlotPoints; k > 1 {
			// A figure cannot show more points than it has pixels: draw
			// block averages (errors shrink by sqrt(k)).
			shown = reduced(obs, k)
			fmt.Fprintf(stderr, "maserpol: note: the figure shows %s averaged per point (%d channels)\n", fmtCount(k, "channel"), len(obs.Velocity))
		}
		title := ""
		if *titles {
			title = "best models over " + figures.Escape(obs.File)
		}
		paths, err := saveFigure(interpret.CompareFigure(shown, rk[:min(*top, len(rk))], title), *plotPath)
		if err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", strings.Join(paths, ", "))
	}
	return exitOK
}

// atBound counts the models whose best shift is stopped by --max-shift.
func atBound(rk []interpret.Ranked) int {
	n := 0
	for _, r := range rk {
		if r.Best.ShiftAtBound {
			n++
		}
	}
	return n
}

// validText is the validity cell of a ranked row.
func validText(r interpret.Ranked) string {
	if validAt(r) {
		return "yes"
	}
	return "NO"
}

// validAt is the run's validity of the best checkpoint of r.
func validAt(r interpret.Ranked) bool {
	for i, s := range r.Model.Spectra {
		if s.Checkpoint == r.Best.Checkpoint && i < len(r.Model.Valid) {
			return r.Model.Valid[i]
		}
	}
	return rgAt(r) <= interpret.ValidLimit
}

func rgAt(r interpret.Ranked) float64 {
	for i, s := range r.Model.Spectra {
		if s.Checkpoint == r.Best.Checkpoint {
			return r.Model.RoverGOmega[i]
		}
	}
	return 0
}

func paramText(m *interpret.RunModel) string {
	var s []string
	for _, p := range m.Params {
		s = append(s, p.Name+"="+strconv.FormatFloat(p.Value, 'g', 4, 64))
	}
	return strings.Join(s, " ")
}

func scaleUnit(o *interpret.Observed) string {
	switch o.Unit {
	case "K":
		return "K/K"
	case "":
		return "(file unit)/K"
	}
	return o.Unit + "/K"
}

func printRanking(w io.Writer, obs *interpret.Observed, rk []interpret.Ranked, top int) {
	fmt.Fprintf(w, "Models against %s (%d channels, %.4g..%.4g km/s)\n", obs.File, obs.Channels(), obs.Velocity[0]/1e3, obs.Velocity[obs.Channels()-1]/1e3)
	for k, s := range interpret.StokesNames {
		if obs.Use[k] {
			fmt.Fprintf(w, "  errors of %s: %s\n", s, obs.ErrFrom[k])
		}
	}
	fmt.Fprintf(w, "  free per model: velocity shift, scale (on I, also applied to Q, U, V), checkpoint; rank by chi2/(N - 3)\n\n")
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	hdr := "rank\tmodel\tparameters\tcheckpoint\tR/Gamma\tR/(g Omega)\tvalid\tshift (km/s)\tscale (" + scaleUnit(obs) + ")"
	for k, s := range interpret.StokesNames {
		if obs.Use[k] {
			hdr += "\tchi2_" + s + "/N"
		}
	}
	fmt.Fprintln(tw, hdr+"\treduced chi2")
	shown, outside, bound, zero := 0, 0, 0, 0
	for i, r := range rk {
		if i >= top {
			fmt.Fprintf(tw, "...\t(%d more models; --table for all)\n", len(rk)-i)
			break
		}
		shown++
		if !validAt(r) {
			outside++
		}
		shift := fmt.Sprintf("%.4f", r.Best.Shift/1e3)
		switch {
		case r.Best.Scale == 0:
			shift = "-"
			zero++
		case r.Best.ShiftAtBound:
			shift += " (bound)"
			bound++
		}
		line := fmt.Sprintf("%d\t%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s", i+1, r.Model.Name, paramText(r.Model), r.Best.Checkpoint, g3(r.Best.Saturation), g3(rgAt(r)), validText(r), shift, g3(r.Best.Scale))
		for k := range interpret.StokesNames {
			if obs.Use[k] {
				line += "\t" + g3(r.Best.RedChi2Of(k))
			}
		}
		fmt.Fprintln(tw, line+"\t"+g3(r.Best.RedChi2))
	}
	tw.Flush()
	fmt.Fprintf(w, "\nValidity: column valid is the run's own (rate equations: R/(g Omega) <= 0.1; density matrix: flat-spectrum measure <= 0.01); %d of %d ranked rows shown are outside it.\n", outside, shown)
	if bound > 0 {
		fmt.Fprintf(w, "Shift: in %d of the %d rows shown the best shift is at the --max-shift bound (marked): the optimum may lie beyond it.\n", bound, shown)
	}
	if zero > 0 {
		fmt.Fprintf(w, "Scale: held >= 0 (a maser line is in emission); in %d of the %d rows shown it is 0: no emission of the model fits within the allowed shifts (shift undetermined, \"-\").\n", zero, shown)
	}
	fmt.Fprintf(w, "A good chi-square does not exclude other models outside the run's grid, nor mechanisms the model lacks (maserpol diagnose).\n")
}

// reduced returns obs averaged in blocks of k channels, for drawing.
func reduced(obs *interpret.Observed, k int) *interpret.Observed {
	r := *obs
	r.Velocity = averaged(obs.Velocity, k)
	for i := range r.Stokes {
		r.Stokes[i] = averaged(obs.Stokes[i], k)
		if e := averaged(obs.Err[i], k); e != nil {
			for j := range e {
				e[j] /= math.Sqrt(float64(k))
			}
			r.Err[i] = e
		}
	}
	return &r
}
