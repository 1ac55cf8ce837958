package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"strings"
	"sync"
	"text/tabwriter"

	"maserpol/config/units"
	"maserpol/levels/species"
	"maserpol/runs"
	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
	"maserpol/runs/interpret"
	"maserpol/transfer"
)

const (
	fieldArgs    = "SPECIES SPECTRUM_OR_CATALOGUE [--component C] [--tb T --domega SR | --saturation LO:HI] [--theta A | --ml F --ml-err F] [--out FILE] [--plots DIR] [--skymap BASE] [flags]"
	fieldSummary = "fit V = A dI/dv + C I to observed spectra and turn A into B_los and B with 1-sigma errors, one feature or a catalogue"
)

// cmdField is "maserpol field".
func cmdField(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := newFlags("field", fieldArgs, fieldSummary, stderr)
	comp := fs.String("component", "blend", "hyperfine component: \"blend\", an index, or F labels \"2-1\"")
	doppler := fs.String("doppler", "1 km/s", "1/e half-width of the model line, in km/s or with a unit")
	fwhm := fs.String("fwhm", "", "FWHM of the model line, in km/s or with a unit (overrides --doppler)")
	gamma := fs.String("gamma", defaultGamma(), "decay rate Gamma of the maser levels, in s^-1 or with a unit; the default is that of run")
	tb := fs.String("tb", "", "brightness temperature, value or lo:hi (for rows without one)")
	domega := fs.String("domega", "", "beaming solid angle dOmega, value or lo:hi (for rows without one)")
	sat := fs.String("saturation", "", "saturation R/Gamma, value or lo:hi (for rows without one)")
	theta := fs.String("theta", "", "field angle to the line of sight, \"60 deg\" or \"60:10 deg\" (value:error)")
	ml := fs.String("ml", "", "measured fractional linear polarization (theta from GKK 1973), fraction or %")
	mlErr := fs.String("ml-err", "", "1-sigma error of --ml")
	branch := fs.String("branch", "auto", "GKK branch: auto, parallel or perpendicular")
	window := fs.String("window", "", "fit window \"lo:hi km/s\" (default: automatic around the line)")
	hanning := fs.Bool("hanning", false, "the spectra are Hanning-smoothed: neighbouring channels correlated 2/3 and 1/6 (errors inflated accordingly)")
	vunit := fs.String("velocity-unit", "", "velocity unit when a spectrum gives none")
	iunit := fs.String("intensity-unit", "", "intensity unit when a spectrum gives none")
	thetas := fs.String("grid-theta", "0,30,50,65,75,85 deg", "field angles of the factor grid")
	perDecade := fs.Int("grid-per-decade", 2, "saturation checkpoints per decade of the factor grid")
	out := fs.String("out", "field.ecsv", "output table (ECSV)")
	plots := fs.String("plots", "", "directory for one figure per feature and the catalogue figure")
	format := fs.String("format", "png", "figure format: png, svg, pdf or eps")
	sky := fs.String("skymap", "", "write the sky map of a catalogue to BASE.png, BASE.svg and BASE.pdf")
	workers := fs.Int("workers", runtime.NumCPU(), "models run in parallel for the factor grid")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 2 {
		fs.Usage()
		return exitInput
	}
	sp, err := species.Resolve(pos[0])
	if err != nil {
		return report(stderr, err)
	}
	base := transfer.Params{Species: sp}
	vd, g, err := lineWidthAndGamma(*doppler, *fwhm, *gamma)
	if err != nil {
		return report(stderr, err)
	}
	base.Doppler = vd
	base.GammaUpper, base.GammaLower = g, g
	c, err := pickComponent(sp, *comp)
	if err != nil {
		return report(stderr, err)
	}
	d, err := fieldDefaults(*tb, *domega, *sat, *theta, *ml, *mlErr, *branch, *window)
	if err != nil {
		return report(stderr, err)
	}
	d.Hanning = *hanning
	d.Read = interpret.ReadOptions{VelocityUnit: *vunit, IntensityUnit: *iunit}
	if !fieldFormatOK(*format) {
		return report(stderr, usagef("--format %q: allowed %s", *format, strings.Join(figuresFormats(), ", ")))
	}
	gridTh, err := parseAngleList(*thetas)
	if err != nil {
		return report(stderr, err)
	}
	if *perDecade < 1 || *perDecade > 20 {
		return report(stderr, usagef("--grid-per-decade %d: allowed 1..20", *perDecade))
	}

	// Input: a catalogue or one spectrum.
	b, err := os.ReadFile(pos[1])
	if err != nil {
		return report(stderr, usagef("%v", err))
	}
	var rows []interpret.CatalogueRow
	if interpret.IsCatalogue(b, pos[1]) {
		if rows, err = interpret.ParseCatalogue(b, pos[1]); err != nil {
			return report(stderr, usagef("%v", err))
		}
	} else {
		nan := math.NaN()
		name := strings.TrimSuffix(filepath.Base(pos[1]), filepath.Ext(pos[1]))
		rows = []interpret.CatalogueRow{{Feature: name, Spectrum: pos[1], Tb: nan, Flux: nan, SizeMaj: nan, SizeMin: nan, DOmega: nan, SatLo: nan, SatHi: nan,
			Ml: nan, MlErr: nan, EVPA: nan, Theta: nan, ThetaErr: nan, X: nan, Y: nan, WinLo: nan, WinHi: nan}}
		// Without a given angle, m_l and the EVPA come from Q and U at the
		// I peak when the spectrum has them.
		if math.IsNaN(d.Theta) && math.IsNaN(d.Ml) {
			if full, err := interpret.ReadObserved(pos[1], interpret.ReadOptions{VelocityUnit: *vunit, IntensityUnit: *iunit, Stokes: "IQUV"}); err == nil {
				if m, me, ev, eve, ok := interpret.PeakPolarization(full); ok {
					rows[0].Ml, rows[0].MlErr, rows[0].EVPA = m, me, ev
					fmt.Fprintf(stderr, "maserpol: m_l = %.3g +/- %.2g and EVPA = %.1f +/- %.1f deg at the I peak, from Q and U (noise bias removed); theta from GKK\n", m, me, ev*180/math.Pi, eve*180/math.Pi)
				}
			}
		}
	}
	feats := make([]interpret.Feature, len(rows))
	errs := make([]error, len(rows))
	satLo, satHi := math.Inf(1), 0.0
	good := 0
	for i, r := range rows {
		feats[i], errs[i] = interpret.FeatureFromRow(r, d, base)
		if errs[i] == nil {
			satLo, satHi = math.Min(satLo, feats[i].SatLo), math.Max(satHi, feats[i].SatHi)
			good++
		}
	}
	results := make([]interpret.FieldRow, len(rows))
	for i, r := range rows {
		results[i] = interpret.FieldRow{Feature: r.Feature, X: r.X, Y: r.Y, EVPA: r.EVPA, Ml: feats[i].Ml, Err: errs[i]}
		if errs[i] != nil {
			results[i].Ml = r.Ml
		}
	}
	if good > 0 {
		fmt.Fprintf(stderr, "maserpol: field: factor grid for %s over R/Gamma %.3g..%.3g and %d angles (%d models)\n", sp.Name, math.Min(1e-3, satLo), math.Max(10, satHi), len(gridTh), 2*len(gridTh))
		grid, fac, err := interpret.BuildFactorGrid(ctx, interpret.FieldGridSpec{Base: base, Component: c, Thetas: gridTh, SatLo: satLo, SatHi: satHi, CheckpointsPerDecade: *perDecade}, *workers, transfer.Run)
		if err != nil {
			var pe *transfer.ParamError
			if errors.As(err, &pe) || errors.Is(err, interpret.ErrNoAngles) {
				return report(stderr, usagef("%v", err))
			}
			return report(stderr, err)
		}
		for _, w := range fac.Warnings {
			fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
		}
		for i := range rows {
			if errs[i] != nil {
				continue
			}
			res, err := interpret.AnalyzeFeature(feats[i], grid)
			if err != nil {
				errs[i] = fmt.Errorf("line %d: %w", rows[i].Line, err)
				if rows[i].Line == 0 {
					errs[i] = err
				}
				results[i].Err = errs[i]
				continue
			}
			results[i].Result = res
		}
	}
	gkk := false
	for _, fr := range results {
		gkk = gkk || fr.Result != nil && fr.Result.GKK != nil
	}
	if gkk && !(sp.Upper.J == 1 && sp.Lower.J == 0 && len(sp.Upper.Spins) == 0 && len(sp.Lower.Spins) == 0) {
		fmt.Fprintf(stderr, "maserpol: warning: theta from m_l uses the GKK relation of a J = 1-0 line without hyperfine structure; %s (J = %g-%g) has another m_l(theta): treat those angles as indicative, or give --theta\n", sp.Name, sp.Upper.J, sp.Lower.J)
	}
	printField(stdout, sp.Name, results)
	meta := []ecsv.Meta{{Key: "program", Value: "maserpol " + runs.Version}, {Key: "command", Value: "field"}, {Key: "species", Value: sp.Name},
		{Key: "input", Value: filepath.Base(pos[1])},
		{Key: "convention", Value: "B_los > 0 towards the observer (IAU V = RCP - LCP); B cos(theta) = A / factor; theta from m_l by Goldreich, Keeley & Kwan 1973"},
		{Key: "validity", Value: "populations-only model valid where r_over_gomega <= 0.1"}}
	tab, err := interpret.WriteFieldTable(results, meta)
	if err != nil {
		return report(stderr, err)
	}
	if err := writeAtomically(*out, tab); err != nil {
		return report(stderr, err)
	}
	fmt.Fprintf(stderr, "maserpol: wrote %s\n", *out)
	if *plots != "" {
		if err := os.MkdirAll(*plots, 0o755); err != nil {
			return report(stderr, err)
		}
		n := 0
		for i := range results {
			if results[i].Result == nil {
				continue
			}
			if _, err := interpret.FeatureFigure(feats[i], results[i].Result).Save(filepath.Join(*plots, "feature-"+featureFileName(rows[i].Feature)), []string{*format}); err != nil {
				fmt.Fprintf(stderr, "maserpol: warning: figure of %s: %v\n", rows[i].Feature, err)
				continue
			}
			n++
		}
		paths, err := interpret.CatalogueFigure(results, sp.Name+": line-of-sight field of "+filepath.Base(pos[1])).Save(filepath.Join(*plots, "catalogue"), []string{*format})
		if err != nil {
			fmt.Fprintf(stderr, "maserpol: warning: catalogue figure: %v\n", err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %d feature figures and %s in %s\n", n, strings.Join(paths, ""), *plots)
	}
	if *sky != "" {
		paths, err := interpret.SkyMap(results, "sky map of "+filepath.Base(pos[1])).Save(*sky, []string{"png", "svg", "pdf"})
		switch {
		case errors.Is(err, figures.ErrNoData):
			fmt.Fprintf(stderr, "maserpol: warning: no sky map: no feature has sky offsets (catalogue columns ra_offset_mas, dec_offset_mas)\n")
		case err != nil:
			return report(stderr, err)
		default:
			fmt.Fprintf(stderr, "maserpol: wrote %s\n", strings.Join(paths, ", "))
		}
	}
	bad := 0
	for i, e := range errs {
		if e != nil {
			bad++
			fmt.Fprintf(stderr, "maserpol: feature %s not measured: %v\n", rows[i].Feature, e)
		}
	}
	if bad > 0 {
		fmt.Fprintf(stderr, "maserpol: %d of %d features had bad input (listed above and in %s with verdict \"bad input\")\n", bad, len(rows), *out)
		return exitInput
	}
	return exitOK
}

// unsafeChars is compiled when first needed, not at every start of the
// program.
var unsafeChars = sync.OnceValue(func() *regexp.Regexp { return regexp.MustCompile(`[^A-Za-z0-9._+-]+`) })

func featureFileName(s string) string { return unsafeChars().ReplaceAllString(s, "_") }

func figuresFormats() []string { return []string{"png", "svg", "pdf", "eps"} }

func fieldFormatOK(f string) bool {
	for _, x := range figuresFormats() {
		if x == f {
			return true
		}
	}
	return false
}

// fieldDefaults parses the per-run flags that rows may leave out.
func fieldDefaults(tb, domega, sat, theta, ml, mlErr, branch, window string) (interpret.FieldDefaults, error) {
	nan := math.NaN()
	d := interpret.FieldDefaults{SatLo: nan, SatHi: nan, TbLo: nan, TbHi: nan, DOmegaLo: nan, DOmegaHi: nan, Theta: nan, ThetaErr: nan, Ml: nan, MlErr: nan}
	var err error
	if sat != "" {
		if tb != "" {
			return d, usagef("give either --saturation or --tb with --domega, not both")
		}
		if d.SatLo, d.SatHi, err = parseRange(sat, units.Dimensionless, "", "saturation"); err != nil {
			return d, err
		}
		if !(d.SatLo > 0) {
			return d, usagef("--saturation %q: allowed > 0", sat)
		}
	}
	if domega != "" {
		if d.DOmegaLo, d.DOmegaHi, err = parseRange(domega, units.SolidAngle, "sr", "domega"); err != nil {
			return d, err
		}
		if !(d.DOmegaLo > 0) {
			return d, usagef("--domega %q: allowed > 0", domega)
		}
	}
	if tb != "" {
		if domega == "" {
			return d, usagef("--tb needs --domega (the beaming solid angle)")
		}
		if d.TbLo, d.TbHi, err = parseRange(tb, units.Temperature, "K", "tb"); err != nil {
			return d, err
		}
		if !(d.TbLo > 0) {
			return d, usagef("--tb %q: allowed > 0", tb)
		}
	}
	if theta != "" && ml != "" {
		return d, usagef("give either --theta or --ml, not both")
	}
	if theta != "" {
		parts := strings.Split(theta, ":")
		last := strings.TrimSpace(parts[len(parts)-1])
		unit := strings.TrimSpace(last[numberPrefix(last):])
		vals := make([]float64, len(parts))
		for i, p := range parts {
			p = strings.TrimSpace(p)
			if numberPrefix(p) == len(p) {
				p += " " + unit
			}
			if vals[i], err = units.Parse(p, units.Angle); err != nil {
				return d, usagef("--theta: %v", err)
			}
		}
		if len(parts) > 2 || vals[0] < 0 || vals[0] > math.Pi {
			return d, usagef("--theta %q: allowed an angle 0..180 deg, optionally :error", theta)
		}
		d.Theta, d.ThetaErr = vals[0], 0
		if len(vals) == 2 {
			d.ThetaErr = vals[1]
		}
	}
	if ml != "" {
		if d.Ml, err = units.Parse(ml, units.Dimensionless); err != nil || d.Ml < 0 || d.Ml > 1 {
			return d, usagef("--ml %q: allowed a fraction 0..1 or a percentage", ml)
		}
		d.MlErr = 0
		if mlErr != "" {
			if d.MlErr, err = units.Parse(mlErr, units.Dimensionless); err != nil || d.MlErr < 0 {
				return d, usagef("--ml-err %q: allowed a fraction >= 0 or a percentage", mlErr)
			}
		}
	}
	switch branch {
	case "auto":
	case "parallel":
		d.Branch = interpret.Parallel
	case "perpendicular":
		d.Branch = interpret.Perpendicular
	default:
		return d, usagef("--branch %q: allowed auto, parallel, perpendicular", branch)
	}
	if window != "" {
		lo, hi, err := parseRange(window, units.Velocity, "km/s", "window")
		if err != nil {
			return d, err
		}
		if !(hi > lo) {
			return d, usagef("--window %q: allowed lo < hi", window)
		}
		d.Window = [2]float64{lo, hi}
	}
	return d, nil
}

func printField(w io.Writer, name string, rows []interpret.FieldRow) {
	fmt.Fprintf(w, "Field from Stokes V for %s: V = A dI/dv + C I, B cos(theta) = A / factor (full model)\n\n", name)
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "feature\tv (km/s)\tA (m/s)\tB_los\ttheta (deg)\tB\tR/Gamma\tR/(g Omega)\tchi2_r\tverdict")
	counts := map[string]int{}
	for _, fr := range rows {
		r := fr.Result
		if r == nil {
			fmt.Fprintf(tw, "%s\t-\t-\t-\t-\t-\t-\t-\t-\tbad input\n", fr.Feature)
			counts["bad input"]++
			continue
		}
		counts[string(r.Verdict)]++
		blos := gaussPM(r.BLos, r.BLosErr)
		if !r.Detected {
			blos = fmt.Sprintf("|B_los| < %s (3σ)", gaussText(r.UpperLimit))
		}
		th, b := "-", "-"
		if !math.IsNaN(r.Theta) {
			th = fmt.Sprintf("%.1f ± %.1f", r.Theta*180/math.Pi, r.ThetaErr*180/math.Pi)
			if r.GKK != nil && r.GKK.Ambiguous {
				th += " (ambiguous)"
			}
			if r.Detected {
				b = gaussPM(r.B, r.BErr)
			}
		}
		sat := g3(r.SatLo)
		if r.SatHi > r.SatLo {
			sat += ".." + g3(r.SatHi)
		}
		fmt.Fprintf(tw, "%s\t%.3f\t%s ± %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\n", fr.Feature, r.PeakV/1e3, g3(r.Fit.A), g3(r.Fit.AErr), blos, th, b, sat, g3(r.RoverGOmega), g3(r.Fit.RedChi2()), r.Verdict)
	}
	tw.Flush()
	fmt.Fprintf(w, "\n%d features:", len(rows))
	for _, v := range []string{"ok", "not detected", "outside validity", "poor fit", "bad input"} {
		if counts[v] > 0 {
			fmt.Fprintf(w, " %d %s;", counts[v], v)
		}
	}
	fmt.Fprintf(w, "\nValidity: the V-to-field factor comes from models at B0 and holds for fields where R/(g Omega) <= 0.1, where V is linear in B (beyond, the Zeeman coherences make V non-linear in B: model the feature at its own field with the density matrix); detection: |A| >= 3 sigma_A; poor fit: chi-square probability < 0.001.\n")
}

// gaussPM writes a field and its error (gauss) in G or mG, one unit for both.
func gaussPM(b, e float64) string {
	if math.Abs(b) < 1 {
		return g3(b*1e3) + " ± " + g3(e*1e3) + " mG"
	}
	return g3(b) + " ± " + g3(e) + " G"
}
