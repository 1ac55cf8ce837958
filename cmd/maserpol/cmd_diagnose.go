package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"text/tabwriter"

	"maserpol/config/units"
	"maserpol/levels/species"
	"maserpol/runs"
	"maserpol/runs/figures"
	"maserpol/runs/interpret"
	"maserpol/transfer"
)

const (
	diagnoseArgs    = "SPECIES --ml FRACTION --ml-err FRACTION (--tb T --domega SR | --saturation LO:HI) [flags]"
	diagnoseSummary = "test whether a measured polarization could come from something other than the field"
)

// cmdDiagnose is "maserpol diagnose".
func cmdDiagnose(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := newFlags("diagnose", diagnoseArgs, diagnoseSummary, stderr)
	ml := fs.String("ml", "", "measured fractional linear polarization at the line peak (0..1, or with %, e.g. \"40 %\") [required]")
	mlErr := fs.String("ml-err", "", "1-sigma error of --ml (fraction or %) [required]")
	pv := fs.String("pv", "", "measured circular polarization P_V = (V_max - V_min)/I_peak (fraction or %); compared only with --field")
	pvErr := fs.String("pv-err", "", "1-sigma error of --pv")
	evpa := fs.String("evpa-rel", "", "EVPA minus the position angle of the projected field in deg (or with a unit), e.g. 85; selects the parallel or perpendicular branch (unset: orientation not tested)")
	fwhm := fs.String("fwhm", "", "FWHM of the intrinsic (thermal+turbulent) velocity distribution in km/s (or with a unit), e.g. 1.7 (overrides --doppler)")
	doppler := fs.String("doppler", "1 km/s", "1/e half-width of the velocity distribution in km/s or with a unit (FWHM = 1.665 x this)")
	tb := fs.String("tb", "", "brightness temperature of the feature in K (or with a unit), e.g. 3e9 or \"1e9:5e9 K\"")
	domega := fs.String("domega", "", "beaming solid angle dOmega in sr (or with a unit), e.g. 1e-2 or \"1e-3:1e-2 sr\"")
	sat := fs.String("saturation", "", "saturation R/Gamma (dimensionless), one value or LO:HI; instead of --tb/--domega")
	field := fs.String("field", "", "field strength of the field cases in G (or with a unit), e.g. 5 or \"500 mG\" (default: R/(g Omega) = 0.01 at the top of the saturation range)")
	gamma := fs.String("gamma", defaultGamma(), "decay rate Gamma of the maser levels (upper and lower), in s^-1 or with a unit; the default is that of run")
	nsigma := fs.Float64("nsigma", 2, "a model is consistent when within this many errors")
	quick := fs.Bool("quick", false, "small grid (15 models) for previews and tests")
	workers := fs.Int("workers", runtime.NumCPU(), "models run in parallel")
	tablePath := fs.String("table", "", "write the verdict table to this file: .ecsv (with units) or .csv (plain)")
	details := fs.String("details", "", "write one row per model to this file: .ecsv (with units) or .csv (plain)")
	plotPath := fs.String("plot", "", "write the figure of m_l against saturation (format from the extension: png, svg, pdf, eps)")
	titles := fs.Bool("titles", false, "put a title above the figure (journal figures have none)")
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
	for _, t := range []struct{ flag, path string }{{"table", *tablePath}, {"details", *details}} {
		if t.path != "" {
			if _, err := checkTablePath(t.flag, t.path); err != nil {
				return report(stderr, err)
			}
		}
	}
	for _, o := range []struct {
		name, path string
		figure     bool
	}{{"table", *tablePath, false}, {"details", *details, false}, {"plot", *plotPath, true}} {
		if err := checkOutput(o.name, o.path, o.figure); err != nil {
			return report(stderr, err)
		}
	}
	sp, err := species.Resolve(pos[0])
	if err != nil {
		return report(stderr, err)
	}
	frac := func(name, s string, required bool) (float64, bool, error) {
		if s == "" {
			if required {
				return 0, false, usagef("--%s is required (a fraction 0..1, or e.g. \"40 %%\")", name)
			}
			return 0, false, nil
		}
		x, err := units.Parse(s, units.Dimensionless)
		if err != nil {
			return 0, false, usagef("--%s: %v", name, err)
		}
		if x > 1 && x <= 100 && !strings.Contains(s, "%") {
			// A percentage written without its sign.
			return 0, false, usagef("--%s %s: a fraction is 0..1 (allowed: a fraction 0..1, or a percentage with %%); did you mean \"%s %%\"?", name, s, strings.TrimSpace(s))
		}
		return x, true, nil
	}
	var m interpret.Measurement
	var e error
	if m.Ml, _, e = frac("ml", *ml, true); e != nil {
		return report(stderr, e)
	}
	if m.MlErr, _, e = frac("ml-err", *mlErr, true); e != nil {
		return report(stderr, e)
	}
	if m.PV, m.HasPV, e = frac("pv", *pv, false); e != nil {
		return report(stderr, e)
	}
	if m.HasPV {
		if m.PVErr, _, e = frac("pv-err", *pvErr, true); e != nil {
			return report(stderr, e)
		}
		if *field == "" {
			fmt.Fprintln(stderr, "maserpol: warning: --pv is compared with the models only when --field gives the field strength; ignored")
			m.HasPV = false
		}
	}
	m.NSigma = *nsigma
	if *evpa != "" {
		psi, err := units.ParsePlain(*evpa, units.Angle, "deg")
		if err != nil {
			return report(stderr, usagef("--evpa-rel: %v", err))
		}
		m.Branch = interpret.BranchOf(psi, 5*math.Pi/180)
		if m.Branch == interpret.AnyBranch {
			fmt.Fprintln(stderr, "maserpol: warning: --evpa-rel within 5 deg of 45 deg: parallel and perpendicular cannot be told apart; orientation not tested")
		}
	}
	base := transfer.Params{Species: sp}
	vd, g, err := lineWidthAndGamma(*doppler, *fwhm, *gamma)
	if err != nil {
		return report(stderr, err)
	}
	base.Doppler = vd
	base.GammaUpper, base.GammaLower = g, g
	if *field != "" {
		b, err := units.ParsePlain(*field, units.Field, "G")
		if err != nil || b == 0 {
			return report(stderr, usagef("--field %q: need a non-zero field (allowed units: %s)", *field, units.Allowed(units.Field)))
		}
		if err := checkField("field", *field, b); err != nil {
			return report(stderr, err)
		}
		base.Field = b
	}
	satFrom := ""
	switch {
	case *sat != "" && (*tb != "" || *domega != ""):
		return report(stderr, usagef("give either --saturation or --tb with --domega, not both"))
	case *sat != "":
		if m.SatLo, m.SatHi, e = parseRange(*sat, units.Dimensionless, "", "saturation"); e != nil {
			return report(stderr, e)
		}
		satFrom = "given"
	case *tb != "" && *domega != "":
		t1, t2, err := parseRange(*tb, units.Temperature, "K", "tb")
		if err != nil {
			return report(stderr, err)
		}
		o1, o2, err := parseRange(*domega, units.SolidAngle, "sr", "domega")
		if err != nil {
			return report(stderr, err)
		}
		if !(t1 > 0 && o1 > 0) {
			return report(stderr, usagef("--tb and --domega must be > 0"))
		}
		base.BeamSolid = math.Sqrt(o1 * o2)
		m.SatLo = interpret.SaturationOfTbdOmega(base, t1*o1)
		m.SatHi = interpret.SaturationOfTbdOmega(base, t2*o2)
		satFrom = fmt.Sprintf("from T_b dOmega = %.3g..%.3g K sr, R = A k T_b dOmega/(4 pi h nu), Gamma = %s", t1*o1, t2*o2, units.Format(g, units.Rate, "s^-1"))
	default:
		return report(stderr, usagef("give the saturation: --tb with --domega, or --saturation LO:HI"))
	}
	if err := m.Validate(); err != nil {
		return report(stderr, usagef("%v", err))
	}
	satFlag := "saturation"
	if *sat == "" {
		satFlag = "tb and --domega"
	}
	if err := checkSaturation(satFlag, m.SatHi); err != nil {
		return report(stderr, err)
	}
	grid := interpret.DefaultGrid()
	if *quick {
		grid = interpret.QuickGrid()
	}
	spec := interpret.DiagnoseSpec{Base: base, Measurement: m, Grid: grid}
	fmt.Fprintf(stderr, "maserpol: diagnose: running %d models on %d workers\n", len(interpret.Cases(base, grid, m.Branch, 1)), *workers)
	d, err := interpret.Diagnose(ctx, spec, *workers, transfer.Run, nil)
	if err != nil {
		var pe *transfer.ParamError
		if errors.As(err, &pe) {
			return report(stderr, usagef("%v", err))
		}
		return report(stderr, err)
	}
	printDiagnosis(stdout, d, sp.Name, satFrom)
	for _, w := range d.Warnings {
		fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
	}
	if *tablePath != "" {
		if err := writeDiagnosis(*tablePath, d, sp.Name); err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", *tablePath)
	}
	if *details != "" {
		if err := writeDiagnosisDetails(*details, d, sp.Name); err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", *details)
	}
	if *plotPath != "" {
		title := ""
		if *titles {
			title = figures.Escape(sp.Name) + ": m_l against saturation"
		}
		paths, err := saveFigure(interpret.DiagnosisFigure(d, title), *plotPath)
		if err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", strings.Join(paths, ", "))
	}
	return exitOK
}

func pct(x float64) string { return strconv.FormatFloat(100*x, 'f', 1, 64) + " %" }

func g3(x float64) string { return strconv.FormatFloat(x, 'g', 3, 64) }

func ivText(iv interpret.Interval, f func(float64) string) string {
	if iv.Empty() {
		return "-"
	}
	if iv.Lo == iv.Hi {
		return f(iv.Lo)
	}
	return f(iv.Lo) + " .. " + f(iv.Hi)
}

func printDiagnosis(w io.Writer, d *interpret.Diagnosis, name, satFrom string) {
	m := d.Measurement
	fmt.Fprintf(w, "Diagnosis for %s\n", name)
	fmt.Fprintf(w, "  measured m_l = %s +/- %s (%s branch), consistent within %g sigma\n", pct(m.Ml), pct(m.MlErr), m.Branch, m.NSigma)
	if m.HasPV {
		fmt.Fprintf(w, "  measured P_V = %s +/- %s\n", pct(m.PV), pct(m.PVErr))
	}
	fmt.Fprintf(w, "  saturation R/Gamma = %s .. %s (%s)\n", g3(m.SatLo), g3(m.SatHi), satFrom)
	fmt.Fprintf(w, "  field of the field cases B = %s G; weak-field cases B = %s mG / (R/gOmega at R/Gamma = %s), density matrix\n\n", g3(units.In(d.Field, units.Field, "G")), g3(units.In(d.WeakField, units.Field, "mG")), g3(m.SatLo))
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "mechanism\tparameter\tconsistent within errors\tm_l reached (branch)\tR/(g Omega)\tvalidity\treproduces")
	for _, v := range d.Verdicts {
		valid := "valid"
		switch {
		case v.NModels == 0:
			valid = "-"
		case v.PartlyValid():
			valid = "partly outside validity (up to R/Gamma " + g3(v.ValidUpTo) + ")"
		case !v.Valid:
			valid = "OUTSIDE validity"
		}
		rep := "no"
		switch {
		case v.NModels == 0:
			rep = "not tested"
		case v.Reproduces:
			rep = "yes"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\n", v.Mechanism, v.Parameter, v.Consistent, ivText(v.Reach, pct), ivText(v.RGOmega, g3), valid, rep)
	}
	tw.Flush()
	fmt.Fprintf(w, "\n  the field alone (isotropic pumping) reaches at most m_l = %s on this branch in this saturation range\n", pct(d.FieldMax))
	for _, v := range d.Verdicts {
		if v.Note != "" {
			fmt.Fprintf(w, "  note, %s: %s\n", v.Mechanism, v.Note)
		}
	}
	fmt.Fprintln(w)
	for _, s := range d.Statements {
		fmt.Fprintf(w, "%s\n", s)
	}
	fmt.Fprintln(w, "\nThe model cannot rule out:")
	for _, s := range d.CannotRuleOut {
		fmt.Fprintf(w, "  - %s\n", s)
	}
}

// parseRange reads "x unit" or "lo:hi unit" (the unit after the last part
// applies to both; without one, numbers are in plainUnit as in a config)
// and returns lo, hi in internal units.
func parseRange(s string, k units.Kind, plainUnit, flagName string) (lo, hi float64, err error) {
	parts := strings.Split(s, ":")
	if len(parts) > 2 {
		return 0, 0, usagef("--%s %q: write one value or lo:hi with a unit (allowed units: %s)", flagName, s, units.Allowed(k))
	}
	last := strings.TrimSpace(parts[len(parts)-1])
	unit := ""
	if i := numberPrefix(last); i < len(last) {
		unit = strings.TrimSpace(last[i:])
	}
	vals := make([]float64, len(parts))
	for i, p := range parts {
		p = strings.TrimSpace(p)
		if i < len(parts)-1 && numberPrefix(p) == len(p) && unit != "" {
			p += " " + unit
		}
		v, err := units.ParsePlain(p, k, plainUnit)
		if err != nil {
			return 0, 0, usagef("--%s: %v", flagName, err)
		}
		vals[i] = v
	}
	lo, hi = vals[0], vals[len(vals)-1]
	if hi < lo {
		return 0, 0, usagef("--%s %q: low end above high end (allowed: lo <= hi)", flagName, s)
	}
	return lo, hi, nil
}

// defaultGamma is the decay rate of every command that does not read it
// from a config: transfer.DefaultGamma, the default of run, so that the
// saturation scale R/Gamma means the same in run, diagnose and
// zeeman-factor.
func defaultGamma() string { return strconv.FormatFloat(transfer.DefaultGamma, 'g', -1, 64) + " s^-1" }

// lineWidthAndGamma parses the line-width flags (--doppler, or --fwhm
// when given) and --gamma, each a bare number in km/s and s^-1 or a
// quantity with its unit: the 1/e half-width v_D (m/s) and the decay rate
// (s^-1) of the models a command runs.
func lineWidthAndGamma(doppler, fwhm, gamma string) (vd, g float64, err error) {
	vs, vname := doppler, "doppler"
	if fwhm != "" {
		vs, vname = fwhm, "fwhm"
	}
	w, err := units.ParsePlain(vs, units.Velocity, "km/s")
	if err != nil || !(w > 0) {
		return 0, 0, usagef("--%s %q: need a velocity > 0 (allowed units: %s)", vname, vs, units.Allowed(units.Velocity))
	}
	if vname == "fwhm" {
		w /= 2 * math.Sqrt(math.Ln2)
	}
	g, err = units.ParsePlain(gamma, units.Rate, "s^-1")
	if err != nil || !(g > 0) {
		return 0, 0, usagef("--gamma %q: need a rate > 0 (allowed units: %s)", gamma, units.Allowed(units.Rate))
	}
	return w, g, nil
}

// numberPrefix returns the length of the leading number of s.
func numberPrefix(s string) int {
	i := 0
	for i < len(s) && strings.ContainsRune("+-0123456789.eE", rune(s[i])) {
		// an 'e' not followed by a digit or sign starts a unit
		if (s[i] == 'e' || s[i] == 'E') && (i+1 >= len(s) || !strings.ContainsRune("+-0123456789", rune(s[i+1]))) {
			break
		}
		i++
	}
	return i
}

// writeAtomically writes data to path without ever leaving half a file.
func writeAtomically(path string, data []byte) error { return runs.WriteFile(path, data) }

// saveFigure writes a figure to path; the format is the file extension.
func saveFigure(s *figures.Stack, path string) ([]string, error) {
	ext := strings.TrimPrefix(filepath.Ext(path), ".")
	ok := false
	for _, f := range figures.Formats {
		ok = ok || f == ext
	}
	if !ok {
		return nil, usagef("--plot %q: unknown figure format %q (allowed: %s)", path, ext, strings.Join(figures.Formats, ", "))
	}
	return s.Save(strings.TrimSuffix(path, "."+ext), []string{ext})
}
