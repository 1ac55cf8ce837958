package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"

	"maserpol/config"
	"maserpol/config/units"
	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/runs"
	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
)

func cmdLevels(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	fs := flagsFor("levels", stderr)
	field := fs.String("field", "", "field `grid`: \"START:STOP:N UNIT\" (N evenly spaced values), a list \"a,b,c UNIT\" or one value \"25 mG\" (default \"0:100:21 mG\" for paramagnetic species, \"0:100:21 G\" for closed-shell ones)")
	format := fs.String("format", "table", "output `format`: table, ecsv (long form with units, for astropy), csv (the same, plain), or components (the species as a component-table species file)")
	plotFile := fs.String("plot", "", "also draw the Zeeman diagram into `FILE` (.png, .svg, .pdf or .eps; no extension: png and svg)")
	titles := fs.Bool("titles", false, "put a title above the Zeeman diagram (journal figures have none)")
	compsOnly := fs.Bool("components", false, "print only the zero-field hyperfine components with their weak-field splitting factors")
	minStrength := fs.Float64("min-strength", 1e-6, "leave out components and lines weaker than this relative strength (0 keeps all; strengths sum to 1)")
	pos, err := parseFlags(fs, args)
	if err != nil {
		return flagExit(err)
	}
	if len(pos) != 1 {
		fs.Usage()
		return exitInput
	}
	if !(*minStrength >= 0 && *minStrength < 1) {
		return report(stderr, usagef("--min-strength %g: allowed 0 <= x < 1 (relative strength; strengths sum to 1)", *minStrength))
	}
	if *compsOnly && *plotFile != "" {
		return report(stderr, usagef("--components lists the zero-field components only; draw the Zeeman diagram without it"))
	}
	if *format != "table" && *format != "csv" && *format != "ecsv" && *format != "components" {
		return report(stderr, usagef("--format %q: allowed: table, ecsv, csv, components", *format))
	}
	sps, names, err := resolveSpecies(pos[0])
	if err != nil {
		return report(stderr, err)
	}
	var cw *ecsv.Writer
	switch *format {
	case "csv":
		cw = ecsv.NewPlainWriter(stdout, levelColumns)
	case "ecsv":
		cw = ecsv.NewWriter(stdout, levelColumns, []ecsv.Meta{{Key: "program", Value: "maserpol " + runs.Version}, {Key: "command", Value: "levels"},
			{Key: "kinds", Value: "component: zero-field hyperfine components; state: eigenstates at each field; line: allowed transitions at each field; cells that do not apply are empty"}})
	}
	for k, sp := range sps {
		grid := *field
		if grid == "" {
			grid = "0:100:21 G"
			if sp.Magneton == levels.Bohr {
				grid = "0:100:21 mG"
			}
		}
		if *format == "components" {
			if w := sp.UnverifiedWarning(); w != "" {
				fmt.Fprintf(stderr, "maserpol: warning: %s (%s)\n", w, names[k])
			}
			if err := writeComponentTable(stdout, sp, names[k]); err != nil {
				return report(stderr, fmt.Errorf("species %s: %w", names[k], err))
			}
			continue
		}
		fields, unit, err := parseFieldGrid(grid)
		if err != nil {
			return report(stderr, err)
		}
		if *compsOnly {
			fields = nil
		}
		if w := sp.UnverifiedWarning(); w != "" {
			fmt.Fprintf(stderr, "maserpol: warning: %s (%s)\n", w, names[k])
		}
		lt, err := solveLevels(ctx, sp, fields, unit)
		if errors.Is(err, context.Canceled) {
			fmt.Fprintln(stderr, "maserpol: interrupted")
			return exitFailure
		}
		if err != nil {
			return report(stderr, fmt.Errorf("species %s: %w", names[k], err))
		}
		lt.dropWeak(*minStrength)
		if cw != nil {
			if err := lt.writeCSV(cw); err != nil {
				return report(stderr, err)
			}
		} else {
			lt.writeTable(stdout, names[k])
		}
		if *plotFile != "" {
			base := *plotFile
			if len(sps) > 1 {
				ext := filepath.Ext(base)
				base = strings.TrimSuffix(base, ext) + "_" + safeName(names[k]) + ext
			}
			paths, err := lt.plot(base, *titles)
			if err != nil {
				return report(stderr, err)
			}
			for _, p := range paths {
				fmt.Fprintf(stderr, "maserpol: wrote Zeeman diagram %s\n", p)
			}
		}
	}
	if cw != nil {
		if err := cw.Flush(); err != nil {
			return report(stderr, err)
		}
	}
	return exitOK
}

func safeName(s string) string {
	return strings.Map(func(r rune) rune {
		if r == '/' || r == ' ' || r == '\\' {
			return '_'
		}
		return r
	}, filepath.Base(strings.TrimSuffix(s, filepath.Ext(s))))
}

// resolveSpecies takes a preset name, a species file, or a config file
// (.toml with a species key): the distinct species of its models.
func resolveSpecies(arg string) ([]*levels.Species, []string, error) {
	if strings.HasSuffix(arg, ".toml") {
		if _, err := os.Stat(arg); err == nil && looksLikeConfig(arg) {
			st, err := config.Load(arg)
			if err != nil {
				return nil, nil, err
			}
			var sps []*levels.Species
			var names []string
			seen := map[string]bool{}
			for _, m := range st.Models {
				if !seen[m.Species] && m.Params.Species != nil {
					seen[m.Species] = true
					sps = append(sps, m.Params.Species)
					names = append(names, m.Species)
				}
			}
			if len(sps) == 0 {
				return nil, nil, usagef("%s: no models, so no species", arg)
			}
			return sps, names, nil
		}
	}
	sp, err := species.Resolve(arg)
	if err != nil {
		var se *species.Error
		if errors.As(err, &se) {
			return nil, nil, err
		}
		return nil, nil, usagef("species %q: %v (presets: %s)", arg, err, strings.Join(species.Names(), ", "))
	}
	return []*levels.Species{sp}, []string{arg}, nil
}

// looksLikeConfig tells a study config from a species file: a config has a
// [field] table (species files describe levels, not fields).
func looksLikeConfig(path string) bool {
	data, err := os.ReadFile(path)
	if err != nil {
		return false
	}
	for _, l := range strings.Split(string(data), "\n") {
		t := strings.TrimSpace(l)
		if strings.HasPrefix(t, "[field]") || strings.HasPrefix(t, "[output]") || strings.HasPrefix(t, "[column]") {
			return true
		}
	}
	return false
}

// parseFieldGrid reads "START:STOP:N UNIT", "a,b,c UNIT" or "x UNIT" into
// fields in gauss, and returns the unit as written, for display.
func parseFieldGrid(s string) ([]float64, string, error) {
	bad := func(f string, a ...any) error {
		return usagef("--field %q: %s; write e.g. \"0:100:21 mG\" (21 fields from 0 to 100 mG), \"0,10,50 mG\" or \"25 mG\" (units: %s)",
			s, fmt.Sprintf(f, a...), units.Allowed(units.Field))
	}
	t := strings.TrimSpace(s)
	i := strings.LastIndexAny(t, "0123456789.")
	if i < 0 {
		return nil, "", bad("no numbers")
	}
	nums, unit := strings.TrimSpace(t[:i+1]), strings.TrimSpace(t[i+1:])
	if unit == "" {
		return nil, "", bad("no unit")
	}
	one := func(x string) (float64, error) {
		v, err := units.Parse(strings.TrimSpace(x)+" "+unit, units.Field)
		if err != nil {
			return 0, bad("%v", err)
		}
		return v, nil
	}
	var out []float64
	switch {
	case strings.Contains(nums, ":"):
		p := strings.Split(nums, ":")
		if len(p) != 3 {
			return nil, "", bad("a range needs START:STOP:N")
		}
		a, err := one(p[0])
		if err != nil {
			return nil, "", err
		}
		b, err := one(p[1])
		if err != nil {
			return nil, "", err
		}
		n, err := strconv.Atoi(strings.TrimSpace(p[2]))
		if err != nil || n < 1 || n > 10000 {
			return nil, "", bad("N must be an integer from 1 to 10000")
		}
		if n == 1 && a != b {
			return nil, "", bad("N = 1 needs START = STOP")
		}
		for k := 0; k < n; k++ {
			x := a
			if n > 1 {
				x = a + (b-a)*float64(k)/float64(n-1)
			}
			out = append(out, x)
		}
	default:
		for _, x := range strings.Split(nums, ",") {
			v, err := one(x)
			if err != nil {
				return nil, "", err
			}
			out = append(out, v)
		}
	}
	for _, b := range out {
		if math.Abs(b) > 1e6 {
			return nil, "", bad("fields beyond 1e6 G are outside the level solver's range")
		}
	}
	return out, unit, nil
}

// levelTables holds what "levels" prints, in display units.
type levelTables struct {
	sp     *levels.Species
	comps  []levels.Component
	fields []float64 // gauss
	unit   string    // field unit for display, as the user wrote it
	states [][2][]stateRow
	lines  [][]lineRow
	// minStrength is the cutoff of dropWeak, and what it left out.
	minStrength                float64
	droppedComps, droppedLines int
}

type stateRow struct {
	key         int // multiplet and M, stable across fields
	F, F1, M    float64
	energyKHz   float64
	zeroKHz     float64 // energy of the state's zero-field multiplet
	composition string
}

type lineRow struct {
	u, l              stateRow
	q                 int
	offsetKHz, streng float64
}

func solveLevels(ctx context.Context, sp *levels.Species, fields []float64, unit string) (*levelTables, error) {
	comps, err := levels.ComponentsContext(ctx, sp)
	if err != nil {
		return nil, err
	}
	ts, err := levels.NewTransitionSolver(sp)
	if err != nil {
		return nil, err
	}
	lt := &levelTables{sp: sp, comps: comps, fields: fields, unit: unit}
	var tr levels.Transition
	for _, b := range fields {
		if err := ts.SolveContext(ctx, b, &tr); err != nil {
			if ctx.Err() != nil {
				return nil, ctx.Err()
			}
			return nil, fmt.Errorf("at %s: %w", fieldText(b, unit), err)
		}
		var st [2][]stateRow
		mults := [2][]levels.Multiplet{ts.Upper().Multiplets(), ts.Lower().Multiplets()}
		for k, s := range []*levels.Structure{tr.Upper, tr.Lower} {
			for _, x := range s.States {
				zero := math.NaN()
				if x.Multiplet >= 0 && x.Multiplet < len(mults[k]) {
					zero = units.In(mults[k][x.Multiplet].Energy, units.Frequency, "kHz")
				}
				st[k] = append(st[k], stateRow{
					key: x.Multiplet*100000 + int(math.Round(2*x.M)), F: x.F, F1: x.F1, M: x.M,
					energyKHz:   units.In(x.Energy, units.Frequency, "kHz"),
					zeroKHz:     zero,
					composition: composition(s, &x),
				})
			}
		}
		var ls []lineRow
		for _, ln := range tr.Lines {
			ls = append(ls, lineRow{u: st[0][ln.Upper], l: st[1][ln.Lower], q: ln.Q,
				offsetKHz: units.In(ln.Offset, units.Frequency, "kHz"), streng: ln.Strength})
		}
		lt.states = append(lt.states, st)
		lt.lines = append(lt.lines, ls)
	}
	return lt, nil
}

// composition lists the largest basis components of a state, |amplitude|^2
// first, until 99 % of the norm or three terms.
func composition(s *levels.Structure, x *levels.State) string {
	type term struct {
		w float64
		i int
	}
	if len(s.Level.Table) > 0 {
		// A component-table level has the basis |F M>: states are pure.
		return fmt.Sprintf("1.000|F=%s,M=%s>", half(x.F), half(x.M))
	}
	var ts []term
	for i, a := range x.Vector {
		if a*a > 1e-6 {
			ts = append(ts, term{a * a, i})
		}
	}
	sort.SliceStable(ts, func(a, b int) bool { return ts[a].w > ts[b].w })
	var parts []string
	sum := 0.0
	for k, t := range ts {
		if k == 3 || sum > 0.99 {
			break
		}
		sum += t.w
		b := s.Basis[t.i]
		ket := "mJ=" + half(b.MJ)
		for j, m := range b.MI {
			name := "I" + strconv.Itoa(j+1)
			if j < len(s.Level.Spins) && s.Level.Spins[j].Name != "" {
				name = s.Level.Spins[j].Name
			}
			ket += ",m_" + name + "=" + half(m)
		}
		parts = append(parts, fmt.Sprintf("%.3f|%s>", t.w, ket))
	}
	return strings.Join(parts, " + ")
}

// half writes a multiple of 1/2 as an integer or n/2.
func half(x float64) string {
	t := int(math.Round(2 * x))
	if t%2 == 0 {
		return strconv.Itoa(t / 2)
	}
	return strconv.Itoa(t) + "/2"
}

// fieldText writes a field (gauss) in the unit the user gave, with ten
// significant digits so that grid steps such as 0.1 print without
// round-off tails.
func fieldText(b float64, unit string) string {
	r, _ := strconv.ParseFloat(strconv.FormatFloat(units.In(b, units.Field, unit), 'g', 10, 64), 64)
	return strconv.FormatFloat(r, 'g', -1, 64) + " " + unit
}

func linearUpTo(g float64) string {
	if math.IsInf(g, 1) {
		return "inf"
	}
	return strconv.FormatFloat(g, 'g', 4, 64)
}

// dropWeak leaves out components and lines weaker than min (forbidden
// ones, whose strength is round-off, and negligible ones) and counts them.
func (lt *levelTables) dropWeak(min float64) {
	lt.minStrength = min
	var cs []levels.Component
	for _, c := range lt.comps {
		if c.Strength >= min && c.Strength > 0 {
			cs = append(cs, c)
		} else {
			lt.droppedComps++
		}
	}
	lt.comps = cs
	for i, ls := range lt.lines {
		var keep []lineRow
		for _, l := range ls {
			if l.streng >= min && l.streng > 0 {
				keep = append(keep, l)
			} else {
				lt.droppedLines++
			}
		}
		lt.lines[i] = keep
	}
}

func (lt *levelTables) writeTable(w io.Writer, name string) {
	sp := lt.sp
	fmt.Fprintf(w, "Species %s (%s): rest frequency %s, A = %.4g s^-1, %s magneton\n",
		name, sp.Name, units.Format(sp.Frequency, units.Frequency, "GHz"), sp.EinsteinA, strings.ToLower(sp.Magneton.String()))
	fmt.Fprintf(w, "Upper level J = %s, lower level J = %s; energies E/h relative to the unsplit level, offsets relative to the rest frequency.\n", half(sp.Upper.J), half(sp.Lower.J))
	if len(sp.Upper.Table) > 0 {
		fmt.Fprintf(w, "Defined by a hyperfine component table: each F level splits linearly with its g_F, no mixing between F levels (linear up to: inf by construction).\n")
	}
	for _, n := range sp.Notes {
		fmt.Fprintf(w, "Source: %s\n", n)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "Zero-field hyperfine components (weak-field splitting: sigma+ centroid minus pi centroid):\n")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "Fu\tF1u\tFl\tF1l\toffset (kHz)\tstrength\tsplit (Hz/G)\tsplit (km/s/G)\tlinear up to (G)\t\n")
	for _, c := range lt.comps {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%.4f\t%.4g\t%.5g\t%.5g\t%s\t\n", half(c.Fu), half(c.F1u), half(c.Fl), half(c.F1l),
			units.In(c.Offset, units.Frequency, "kHz"), c.Strength, c.SplitHzPerG, c.SplitKmsPerG, linearUpTo(c.LinearUpTo))
	}
	tw.Flush()
	fmt.Fprintf(w, "(linear up to: field below which the splitting stays linear in B within 1 %%; inf = no hyperfine decoupling found up to 1e6 G)\n")
	if lt.droppedComps+lt.droppedLines > 0 {
		fmt.Fprintf(w, "(left out: %d components and %d lines of relative strength below %g; --min-strength 0 shows them)\n", lt.droppedComps, lt.droppedLines, lt.minStrength)
	}
	for i, b := range lt.fields {
		fmt.Fprintf(w, "\nField B = %s\n", fieldText(b, lt.unit))
		for k, lev := range []string{"upper", "lower"} {
			fmt.Fprintf(w, "  %s level states:\n", lev)
			tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
			fmt.Fprintf(tw, "    F\tF1\tM\tE/h (kHz)\tcomposition (|amplitude|^2, uncoupled basis)\n")
			for _, s := range lt.states[i][k] {
				fmt.Fprintf(tw, "    %s\t%s\t%s\t%.6f\t%s\n", half(s.F), half(s.F1), half(s.M), s.energyKHz, s.composition)
			}
			tw.Flush()
		}
		fmt.Fprintf(w, "  transitions (offset from the rest frequency; strengths sum to 1 per upper state):\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "    upper F,F1,M\tlower F,F1,M\tq\toffset (kHz)\tstrength\n")
		for _, l := range lt.lines[i] {
			fmt.Fprintf(tw, "    %s,%s,%s\t%s,%s,%s\t%s\t%.6f\t%.5f\n", half(l.u.F), half(l.u.F1), half(l.u.M), half(l.l.F), half(l.l.F1), half(l.l.M), qName(l.q), l.offsetKHz, l.streng)
		}
		tw.Flush()
	}
	fmt.Fprintln(w)
}

// levelColumns is the long-form table of "levels --format ecsv|csv": one
// row per component (kind = component), state (kind = state) or transition
// line (kind = line); cells that do not apply are empty. Angular momenta
// are written as text ("3/2").
var levelColumns = []ecsv.Column{
	{Name: "species", Datatype: ecsv.String, Description: "preset name or species file"},
	{Name: "kind", Datatype: ecsv.String, Description: "component, state or line"},
	{Name: "field_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "field strength"},
	{Name: "level", Datatype: ecsv.String, Description: "upper or lower (states)"},
	{Name: "F", Datatype: ecsv.String, Description: "zero-field F label carried to this field (states)"},
	{Name: "F1", Datatype: ecsv.String, Description: "F1, J coupled to the first spin (states)"},
	{Name: "M", Datatype: ecsv.String, Description: "total projection M (states)"},
	{Name: "energy_khz", Unit: "kHz", Datatype: ecsv.Float64, Description: "E/h relative to the unsplit rotational level (states)"},
	{Name: "composition", Datatype: ecsv.String, Description: "largest uncoupled-basis components (states)"},
	{Name: "Fu", Datatype: ecsv.String, Description: "F of the upper state"},
	{Name: "F1u", Datatype: ecsv.String, Description: "F1 of the upper state"},
	{Name: "Mu", Datatype: ecsv.String, Description: "M of the upper state (lines)"},
	{Name: "Fl", Datatype: ecsv.String, Description: "F of the lower state"},
	{Name: "F1l", Datatype: ecsv.String, Description: "F1 of the lower state"},
	{Name: "Ml", Datatype: ecsv.String, Description: "M of the lower state (lines)"},
	{Name: "q", Datatype: ecsv.Int64, Description: "m_u - m_l (lines)"},
	{Name: "offset_khz", Unit: "kHz", Datatype: ecsv.Float64, Description: "frequency offset from the species rest frequency"},
	{Name: "strength", Datatype: ecsv.Float64, Description: "relative strength: lines sum to 1 per upper state, components sum to 1"},
	{Name: "split_hz_per_G", Unit: "Hz / G", Datatype: ecsv.Float64, Description: "weak-field sigma+ minus pi centroid shift of a component"},
	{Name: "split_kms_per_G", Unit: "km / (G s)", Datatype: ecsv.Float64, Description: "the same in velocity"},
	{Name: "linear_up_to_G", Unit: "G", Datatype: ecsv.Float64, Description: "field below which the component's shifts stay linear in B within 1 %"},
}

func (lt *levelTables) writeCSV(cw *ecsv.Writer) error {
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	var err error
	row := func(kv map[string]string) {
		r := make([]string, len(levelColumns))
		for i, c := range levelColumns {
			r[i] = kv[c.Name]
		}
		if err == nil {
			err = cw.WriteCells(r)
		}
	}
	name := lt.sp.Name
	for _, c := range lt.comps {
		lin := f(c.LinearUpTo)
		if math.IsInf(c.LinearUpTo, 1) {
			lin = "inf"
		}
		row(map[string]string{"species": name, "kind": "component", "field_mG": "0", "Fu": half(c.Fu), "F1u": half(c.F1u), "Fl": half(c.Fl), "F1l": half(c.F1l),
			"offset_khz": f(units.In(c.Offset, units.Frequency, "kHz")), "strength": f(c.Strength),
			"split_hz_per_G": f(c.SplitHzPerG), "split_kms_per_G": f(c.SplitKmsPerG), "linear_up_to_G": lin})
	}
	for i, b := range lt.fields {
		mg := f(units.In(b, units.Field, "mG"))
		for k, lev := range []string{"upper", "lower"} {
			for _, s := range lt.states[i][k] {
				row(map[string]string{"species": name, "kind": "state", "field_mG": mg, "level": lev, "F": half(s.F), "F1": half(s.F1), "M": half(s.M),
					"energy_khz": f(s.energyKHz), "composition": s.composition})
			}
		}
		for _, l := range lt.lines[i] {
			row(map[string]string{"species": name, "kind": "line", "field_mG": mg, "Fu": half(l.u.F), "F1u": half(l.u.F1), "Mu": half(l.u.M),
				"Fl": half(l.l.F), "F1l": half(l.l.F1), "Ml": half(l.l.M), "q": strconv.Itoa(l.q), "offset_khz": f(l.offsetKHz), "strength": f(l.streng)})
		}
	}
	if err == nil {
		err = cw.Flush()
	}
	return err
}

// plot draws the Zeeman diagram: one curve per state (followed by its
// label across fields), coloured by F.
func (lt *levelTables) plot(file string, titles bool) ([]string, error) {
	ext := strings.TrimPrefix(filepath.Ext(file), ".")
	formats := []string{"png", "svg"}
	base := file
	if ext != "" {
		formats = []string{strings.ToLower(ext)}
		base = strings.TrimSuffix(file, filepath.Ext(file))
		ok := false
		for _, f := range figures.Formats {
			ok = ok || f == formats[0]
		}
		if !ok {
			return nil, usagef("--plot %s: unknown figure format %q (allowed: %s)", file, ext, strings.Join(figures.Formats, ", "))
		}
	}
	x := make([]float64, len(lt.fields))
	for i, b := range lt.fields {
		x[i] = units.In(b, units.Field, lt.unit)
	}
	var panels [2][]figures.Curve
	var relative [2]bool
	for k := 0; k < 2; k++ {
		// When the hyperfine spread dwarfs the Zeeman shifts, plot each
		// state's shift from its zero-field multiplet, so the fans show.
		lo, hi, shift := math.Inf(1), math.Inf(-1), 0.0
		for i := range lt.fields {
			for _, s := range lt.states[i][k] {
				lo, hi = math.Min(lo, s.zeroKHz), math.Max(hi, s.zeroKHz)
				shift = math.Max(shift, math.Abs(s.energyKHz-s.zeroKHz))
			}
		}
		relative[k] = hi-lo > 10*shift && shift > 0
		// M is conserved along the field, so states of one M block never
		// cross (the non-crossing rule of von Neumann & Wigner 1929): the
		// r-th state of a block by energy is one smooth curve. It carries
		// the labels of that state at the weakest field, where F (and
		// F1) are good quantum numbers; following the solver's labels
		// instead would jump between curves at avoided crossings.
		type track struct {
			F, F1, zero float64
			y           []float64
		}
		byField := make([]int, len(lt.fields))
		for i := range byField {
			byField[i] = i
		}
		sort.SliceStable(byField, func(a, b int) bool { return math.Abs(lt.fields[byField[a]]) < math.Abs(lt.fields[byField[b]]) })
		var order [][2]int
		tracks := map[[2]int]*track{}
		for _, i := range byField {
			blocks := map[int][]stateRow{}
			for _, s := range lt.states[i][k] {
				m := int(math.Round(2 * s.M))
				blocks[m] = append(blocks[m], s)
			}
			for m, st := range blocks {
				sort.SliceStable(st, func(a, b int) bool { return st[a].energyKHz < st[b].energyKHz })
				for r, s := range st {
					key := [2]int{m, r}
					t, ok := tracks[key]
					if !ok {
						t = &track{F: s.F, F1: s.F1, zero: s.zeroKHz, y: nanSlice(len(lt.fields))}
						tracks[key] = t
						order = append(order, key)
					}
					t.y[i] = s.energyKHz
					if relative[k] {
						t.y[i] -= t.zero
					}
				}
			}
		}
		sort.Slice(order, func(a, b int) bool {
			if order[a][0] != order[b][0] {
				return order[a][0] < order[b][0]
			}
			return order[a][1] < order[b][1]
		})
		var fs []float64
		for _, key := range order {
			fs = appendUnique(fs, tracks[key].F*1000+tracks[key].F1)
		}
		sort.Float64s(fs)
		labelled := map[int]bool{}
		for _, key := range order {
			t := tracks[key]
			style := sort.SearchFloat64s(fs, t.F*1000+t.F1)
			c := figures.Curve{X: x, Y: t.y, Style: style}
			if !labelled[style] {
				labelled[style] = true
				c.Label = "F = " + half(t.F)
				if len(lt.sp.Upper.Spins) > 1 {
					c.Label = "F1 = " + half(t.F1) + ", " + c.Label
				}
			}
			panels[k] = append(panels[k], c)
		}
		// Legend entries in order of F.
		sort.SliceStable(panels[k], func(a, b int) bool { return panels[k][a].Style < panels[k][b].Style })
	}
	title := figures.Escape(lt.sp.Name) + ": Zeeman diagram"
	fig := figures.Zeeman(title, panels[0], panels[1])
	fig.XLabel = "field strength B (" + lt.unit + ")"
	// Energies (or shifts) below 1 kHz, as at mG fields, read in Hz; both
	// panels share the unit.
	unit := "kHz"
	if m := math.Max(maxAbs(panels[0]), maxAbs(panels[1])); m > 0 && m < 1 {
		unit = "Hz"
	}
	for k, rel := range relative {
		if unit == "Hz" {
			unit = "Hz"
			for i := range fig.Panels[k].Curves {
				c := &fig.Panels[k].Curves[i]
				y := make([]float64, len(c.Y))
				for j, v := range c.Y {
					y[j] = 1e3 * v
				}
				c.Y = y
			}
		}
		name := []string{"upper", "lower"}[k]
		if rel {
			fig.Panels[k].YLabel = name + " ΔE/h (" + unit + ")"
		} else {
			fig.Panels[k].YLabel = name + " E/h (" + unit + ")"
		}
	}
	if relative[0] || relative[1] {
		fig.Title += "\nshifts from the zero-field hyperfine levels"
	}
	if !titles {
		fig.Title = ""
	}
	return fig.Save(base, formats)
}

// maxAbs is the largest finite |y| of the curves.
func maxAbs(cs []figures.Curve) float64 {
	m := 0.0
	for _, c := range cs {
		for _, y := range c.Y {
			if !math.IsNaN(y) && !math.IsInf(y, 0) {
				m = math.Max(m, math.Abs(y))
			}
		}
	}
	return m
}

func nanSlice(n int) []float64 {
	y := make([]float64, n)
	for i := range y {
		y[i] = math.NaN()
	}
	return y
}

func appendUnique(xs []float64, x float64) []float64 {
	for _, y := range xs {
		if y == x {
			return xs
		}
	}
	return append(xs, x)
}

func qName(q int) string {
	switch q {
	case 1:
		return "+1"
	case -1:
		return "-1"
	}
	return "0"
}
