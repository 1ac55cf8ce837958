package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"runtime"
	"strconv"
	"strings"
	"text/tabwriter"

	"maserpol/config/units"
	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs/interpret"
	"maserpol/transfer"
)

const (
	zfactorArgs    = "SPECIES [--component blend|each|N|Fu-Fl|F1u,Fu-F1l,Fl] [--plot FILE] [--theta LIST] [--doppler V] [--saturation MAX] [--table FILE]"
	zfactorSummary = "compute the factor that turns Stokes V into B cos(theta), against the linear-Zeeman estimate"
)

// cmdZeemanFactor is "maserpol zeeman-factor".
func cmdZeemanFactor(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := newFlags("zeeman-factor", zfactorArgs, zfactorSummary, stderr)
	comp := fs.String("component", "blend", "hyperfine component: \"blend\" (whole line), \"each\" (every main component pumped alone, compared), an index as listed by maserpol levels, F labels \"2-1\", or F1 and F of both levels \"13/2,7-15/2,8\"")
	thetas := fs.String("theta", "0,30,50,70,85 deg", "field angles to the line of sight, comma-separated with one unit (none: deg)")
	doppler := fs.String("doppler", "1 km/s", "1/e half-width of the velocity distribution, in km/s or with a unit")
	fwhm := fs.String("fwhm", "", "FWHM of the velocity distribution, in km/s or with a unit (overrides --doppler)")
	satMax := fs.Float64("saturation", 100, "highest saturation R/Gamma (dimensionless); checkpoints from 1e-3 up")
	gamma := fs.String("gamma", defaultGamma(), "decay rate Gamma of the maser levels, in s^-1 or with a unit; the default is that of run")
	b0 := fs.String("b0", "", "small model field in G (or with a unit), e.g. 2 (default: splitting = 1e-2 Doppler widths, inside the linear Zeeman range)")
	workers := fs.Int("workers", runtime.NumCPU(), "models run in parallel")
	tablePath := fs.String("table", "", "write the table to this file: .ecsv (with units) or .csv (plain)")
	plotPath := fs.String("plot", "", "with --component each: draw the components' I and V into `FILE` (.png, .svg, .pdf, .eps; none: PNG and SVG)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fs.Usage()
		return exitInput
	}
	if err := checkWorkers("workers", workers); err != nil {
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
	if !(*satMax > 1e-3) {
		return report(stderr, usagef("--saturation %g: allowed > 1e-3 (R/Gamma)", *satMax))
	}
	if err := checkSaturation("saturation", *satMax); err != nil {
		return report(stderr, err)
	}
	sp, err := species.Resolve(pos[0])
	if err != nil {
		return report(stderr, err)
	}
	base := transfer.Params{Species: sp, Saturation: *satMax, FirstCheckpoint: 1e-3, CheckpointsPerDecade: 2}
	vd, g, err := lineWidthAndGamma(*doppler, *fwhm, *gamma)
	if err != nil {
		return report(stderr, err)
	}
	base.Doppler = vd
	base.GammaUpper, base.GammaLower = g, g
	spec := interpret.FactorSpec{Base: base, Component: interpret.Blend}
	if *b0 != "" {
		if spec.B0, err = units.ParsePlain(*b0, units.Field, "G"); err != nil || !(spec.B0 > 0) {
			return report(stderr, usagef("--b0 %q: need a field > 0 (allowed units: %s)", *b0, units.Allowed(units.Field)))
		}
		if err := checkField("b0", *b0, spec.B0); err != nil {
			return report(stderr, err)
		}
	}
	th, err := parseAngleList(*thetas)
	if err != nil {
		return report(stderr, err)
	}
	if allPerpendicular(th) {
		return report(stderr, usagef("--theta %q: %v", *thetas, interpret.ErrNoAngles))
	}
	spec.Thetas = th
	if *comp == "each" {
		return zfactorEach(ctx, spec, *workers, *tablePath, *plotPath, stdout, stderr)
	}
	if *plotPath != "" {
		return report(stderr, usagef("--plot: only with --component each"))
	}
	if spec.Component, err = pickComponent(sp, *comp); err != nil {
		return report(stderr, err)
	}
	f, err := interpret.ZeemanFactors(ctx, spec, *workers, transfer.Run)
	if errors.Is(err, interpret.ErrNoAngles) {
		return report(stderr, usagef("--theta %q: %v", *thetas, err))
	}
	if err != nil {
		return report(stderr, err)
	}
	printFactors(stdout, f)
	for _, w := range f.Warnings {
		fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
	}
	if *tablePath != "" {
		if err := writeFactors(*tablePath, f); err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", *tablePath)
	}
	return exitOK
}

// allPerpendicular reports whether every angle is 90 deg (cos theta = 0 to
// the precision ZeemanFactors uses).
func allPerpendicular(th []float64) bool {
	for _, x := range th {
		if math.Abs(math.Cos(x)) >= 1e-6 {
			return false
		}
	}
	return true
}

func parseAngleList(s string) ([]float64, error) {
	parts := strings.Split(s, ",")
	last := strings.TrimSpace(parts[len(parts)-1])
	unit := strings.TrimSpace(last[numberPrefix(last):])
	var out []float64
	for _, p := range parts {
		p = strings.TrimSpace(p)
		if numberPrefix(p) == len(p) {
			p += " " + unit
		}
		x, err := units.ParsePlain(p, units.Angle, "deg")
		if err != nil {
			return nil, usagef("--theta: %v", err)
		}
		if x < 0 || x > math.Pi {
			return nil, usagef("--theta %q: allowed 0 to 180 deg", p)
		}
		out = append(out, x)
	}
	return out, nil
}

// pickComponent resolves --component: "blend", or a component as
// levels.SelectComponent reads it (an index into levels.Components, "Fu-Fl",
// or "F1u,Fu-F1l,Fl"); an ambiguous label is refused with its candidates.
func pickComponent(sp *levels.Species, s string) (int, error) {
	if s == "" || s == "blend" {
		return interpret.Blend, nil
	}
	cs, err := levels.Components(sp)
	if err != nil {
		return 0, err
	}
	i, err := levels.SelectComponent(cs, s)
	if err != nil {
		return 0, usagef("--component %q: %v (or blend)", s, err)
	}
	return i, nil
}

func compName(f *interpret.Factors) string {
	if f.Component == interpret.Blend {
		return "blend of all components"
	}
	return fmt.Sprintf("component %d, F=%s", f.Component, levels.ComponentLabels(f.Components)[f.Component])
}

func printFactors(w io.Writer, f *interpret.Factors) {
	fmt.Fprintf(w, "Zeeman factor for %s, %s\n", f.Species.Name, compName(f))
	fmt.Fprintf(w, "  model field B0 = %s G (and 2 B0 for the linearity check); fit V = A dI/dv + C I over %.4g..%.4g km/s\n", g3(f.B0), f.Window[0]/1e3, f.Window[1]/1e3)
	fmt.Fprintf(w, "  convention: V = cos(theta) dv_Z dI/dv, dv_Z = sigma+ shift against pi (half the sigma+/sigma- separation), IAU V, radio velocity\n")
	fmt.Fprintf(w, "  use: B cos(theta) = A_observed / factor; single-component linear-Zeeman factor = %s m/s per G\n", g3(f.Linear))
	fmt.Fprintf(w, "  validity: R/(g Omega) is that of the model field B0 and scales as 1/B; a row holds for your field when\n")
	fmt.Fprintf(w, "    |B| >= the \"valid for |B| >=\" value (R/(g Omega) <= 0.1) and |B| <= %s G (splitting < 0.1 Doppler widths, linear Zeeman shifts)\n\n", g3(f.BMax))
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "theta (deg)\tR/Gamma\tR/(g Omega) at B0\tfactor (m/s per G)\tfactor/linear\tP_V per B cos(theta) (1/G)\tlinearity\tfit residual\tvalid for |B| >=")
	poor := 0
	for _, r := range f.Rows {
		valid := gaussText(r.BValidMin)
		if r.BValidMin > f.BMax {
			valid += " (above the linear range: none)"
		}
		if !r.GoodFit {
			valid = "POOR FIT: residual > " + pct(interpret.MaxResidual) + ", V not dI/dv-shaped"
			poor++
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", g3(r.Theta*180/math.Pi), g3(r.Saturation), g3(r.RoverGOmega), g3(r.Factor), strconv.FormatFloat(r.Ratio, 'f', 3, 64), g3(r.PVPerG), pct(r.Linearity), pct(r.Residual), valid)
	}
	tw.Flush()
	if poor > 0 {
		fmt.Fprintf(w, "\n%d of %d rows are poor fits (V departs from A dI/dv + C I by more than %s rms): their factor does not convert V into B cos(theta).\n", poor, len(f.Rows), pct(interpret.MaxResidual))
	}
}

// gaussText writes a field (gauss) in G or mG with its unit.
func gaussText(b float64) string {
	if math.Abs(b) < 1 {
		return g3(b*1e3) + " mG"
	}
	return g3(b) + " G"
}
