package config

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"maserpol/config/units"
	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/transfer"
)

// DefaultSpecies is the species of a starter config when none is named.
const DefaultSpecies = "sio-v1-j1-0"

// commented are keys written commented out by Starter: alternatives to a
// default form, or meaningful only with another setting.
var commented = map[string]bool{
	"line.temperature": true,
	"line.turbulence":  true,
	"column.gain":      true,
	"pump.component":   true,
	"line.reference":   true,
	"output.spectra":   true, // the default depends on the number of models
	"pump.upper_f":     true,
	"pump.lower_f":     true,
}

// Starter returns a commented starter configuration for the named species
// (a preset or a species file path; DefaultSpecies when empty), for a study
// named "example". See StarterNamed.
func Starter(speciesName string) (string, error) {
	return StarterNamed(speciesName, "")
}

// StarterNamed returns a commented starter configuration for the named
// species (a preset or a species file path; DefaultSpecies when empty) and
// study name, with output.dir "runs/<name>". A name that is not a valid
// study name is cleaned (other characters become '-'); an empty one is
// "example". Every key is present with its unit, default and allowed
// range, and the field, line width, channels and saturation are chosen
// for the species (see starterValues); it parses as it is.
func StarterNamed(speciesName, name string) (string, error) {
	if speciesName == "" {
		speciesName = DefaultSpecies
	}
	sp, err := species.Resolve(speciesName)
	if err != nil {
		return "", fmt.Errorf("species %q: %v (presets: %s)", speciesName, err, strings.Join(species.Names(), ", "))
	}
	name = cleanName(name)
	sv, err := starterValues(sp, speciesName)
	if err != nil {
		return "", fmt.Errorf("species %q: %v", speciesName, err)
	}
	var b strings.Builder
	b.WriteString(`# maserpol model configuration.
#
# Quantities are strings with a unit: "25 mG", "0.6 km/s", "30 deg", "1 K".
# Keys whose comment says "a bare number is in X" also take a plain number.
# Any numeric key may instead be swept:
#   a list          theta = ["30 deg", "60 deg", "90 deg"]
#   a range         strength = { from = "1 G", to = "100 G", steps = 5, spacing = "log" }
#   a random draw   theta = { dist = "isotropic-angle", n = 100, seed = 7 }
#                   (dist: "uniform", "loguniform", "isotropic-angle"; from/to)
# The study is the product of all lists and ranges; random draws with the
# same n are one Latin-hypercube axis of n models.
`)
	fmt.Fprintf(&b, "# Species %s: rest frequency %.6g GHz.\n", sp.Name, sp.Frequency/1e9)
	for _, s := range sv.notes {
		fmt.Fprintf(&b, "# %s\n", s)
	}
	table := ""
	for _, s := range schema() {
		if s.table != table {
			table = s.table
			fmt.Fprintf(&b, "\n[%s]\n", table)
		}
		val := s.example
		if val == "" {
			val = s.def
		}
		switch s.path() {
		case "name":
			val = tomlString(name)
		case "species":
			val = tomlString(speciesName)
		case "field.strength":
			val = tomlString(sv.field)
		case "line.doppler":
			val = tomlString(sv.doppler)
		case "field.theta":
			val = tomlString(starterTheta)
			if sv.theta != "" {
				val = tomlString(sv.theta)
			}
		case "field.chi":
			val = tomlString(starterChi)
		case "line.channels":
			val = fmt.Sprint(sv.channels)
		case "line.span":
			val = tomlString(sv.span)
		case "column.saturation":
			val = floatText(sv.saturation)
		case "output.dir":
			val = tomlString("runs/" + name)
		}
		fmt.Fprintf(&b, "# %s.\n", upperFirst(s.doc))
		var notes []string
		if s.def != "" {
			notes = append(notes, "Default: "+s.def)
		}
		if s.path() == "species" {
			notes = append(notes, "Presets: "+strings.Join(species.Names(), ", "))
		} else if a := s.allowed(); a != "a string" {
			notes = append(notes, "Allowed: "+a)
		}
		if s.sweepable() {
			notes = append(notes, "May be swept")
		}
		if len(notes) > 0 {
			fmt.Fprintf(&b, "# %s.\n", strings.Join(notes, ". "))
		}
		prefix := ""
		if s.path() == "line.reference" && sv.reference != "" {
			val = tomlString(sv.reference)
		} else if commented[s.path()] {
			prefix = "# "
		}
		fmt.Fprintf(&b, "%s%s = %s\n", prefix, s.name, val)
	}
	return b.String(), nil
}

// cleanName makes a valid study name of s: "" becomes "example". Each run
// of characters not allowed in a name becomes one '-'.
func cleanName(s string) string {
	var b strings.Builder
	bad := false
	for i := 0; i < len(s); i++ {
		c := s[i]
		if isAlnum(c) || c == '.' || c == '_' || c == '-' {
			b.WriteByte(c)
			bad = false
		} else if !bad {
			b.WriteByte('-')
			bad = true
		}
	}
	s = strings.Trim(b.String(), "-._")
	if len(s) > 100 {
		s = s[:100]
	}
	if !validName(s) {
		return "example"
	}
	return s
}

func upperFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// starter holds the species-dependent values of a starter config.
type starter struct {
	field, doppler, span string
	theta                string // "" = the schema's example
	reference            string // line.reference, "" = the unsplit line (commented)
	channels             int
	saturation           float64
	notes                []string // comment lines explaining the choice
}

// Typical observed conditions of the real-molecule presets. Values from
// memory, common practice in the maser literature: SiO masers of evolved
// stars show fields of a few gauss and line widths of ~1 km/s; 22 GHz
// water masers in star-forming regions show fields of a few hundred mG
// and thermal widths of 400 K water (0.6 km/s); OH main-line masers are
// narrow (~0.3 km/s, thermal at ~100 K). Other species get their field
// from their Zeeman splitting alone (starterValues).
var typical = map[string]struct{ field, doppler string }{
	"sio-v1-j1-0":  {"3 G", "1 km/s"},
	"h2o-22":       {"300 mG", "0.6 km/s"},
	"oh-like-main": {"", "0.3 km/s"},
}

// Starter field direction: theta = 60 deg, chi = 30 deg, so that every
// Stokes spectrum of the first run shows something (V vanishes at theta
// = 90 deg, U at chi = 0 or 90 deg, Q at chi = 45 deg) and m_l lies on
// the perpendicular branch beyond the van Vleck angle (55 deg; Goldreich,
// Keeley & Kwan 1973); 60 deg is also the median angle of isotropically
// oriented fields (cos theta uniform).
const (
	starterTheta = "60 deg"
	starterChi   = "30 deg"
)

// Starter run targets.
const (
	// validLimit is the largest R/(g Omega) where the populations-only
	// model holds (physics.md section 4; transfer.Checkpoint.Valid).
	validLimit        = 0.1
	starterSaturation = 100.0 // well saturated, the regime of bright masers
	// starterPerDoppler is the number of channels per Doppler width the
	// starter aims at: transfer.MinChannelsPerWidth across the line
	// narrowed by the gain to saturation, v_D/sqrt(G), with G about 25 for
	// the default seed (6 x 5 = 30; transfer warns below).
	starterPerDoppler  = 32
	maxStarterChannels = 8192
)

// starterValues chooses the field, line width, channel grid and final
// saturation of a starter config for sp (name: the preset name or path as
// given).
//
// The field: the typical one of the preset when known; else, for a
// paramagnetic species (Bohr magneton), the field whose largest weak-field
// Zeeman shift is 3 Doppler widths (resolved Zeeman pairs, as observed in
// OH); for a closed-shell one, the smallest field of the 1-2-3-5 series
// with R/(g Omega) <= 0.1 up to the final saturation (the validity of the
// populations-only model over the whole run; physics.md section 4),
// keeping the shift below 5 % of the Doppler width (splitting << width).
// The channels: about 32 per Doppler width over the automatic span, at
// least 256 and at most 8192; when the lines spread too far for that (OH's
// satellite lines lie 50 MHz from the main lines), the span is narrowed
// to the strong lines. The notes state the validity range of the result.
func starterValues(sp *levels.Species, name string) (*starter, error) {
	comps, err := levels.Components(sp)
	if err != nil {
		return nil, err
	}
	sv := &starter{saturation: starterSaturation, doppler: "1 km/s"}
	t := typical[name]
	if t.doppler != "" {
		sv.doppler = t.doppler
	}
	// A species file may carry its own typical conditions ([typical]);
	// the starter then also ends the run where the populations-only model
	// stops holding at that field, so that it covers the whole run.
	fromSpecies := t.field == "" && sp.Typical.Field > 0
	if fromSpecies {
		t.field = fieldText(sp.Typical.Field)
	}
	if t.doppler == "" && sp.Typical.Doppler > 0 {
		sv.doppler = strconv.FormatFloat(units.In(sp.Typical.Doppler, units.Velocity, "km/s"), 'g', 3, 64) + " km/s"
	}
	if sp.Typical.Theta > 0 {
		sv.theta = strconv.FormatFloat(units.In(sp.Typical.Theta, units.Angle, "deg"), 'g', 4, 64) + " deg"
	}
	vd, _ := units.Parse(sv.doppler, units.Velocity)
	strongest, si := 0.0, 0
	for i, c := range comps {
		if c.Strength > strongest {
			strongest, si = c.Strength, i
		}
	}
	// Lines too far apart for one fine channel grid (OH's 1612-1720 MHz):
	// measure velocities from the strongest line and centre the span on it.
	vlo, vhi := math.Inf(1), math.Inf(-1)
	for _, c := range comps {
		v := -levels.SpeedOfLight * c.Offset / sp.Frequency
		vlo, vhi = math.Min(vlo, v), math.Max(vhi, v)
	}
	if starterPerDoppler*(vhi-vlo+8*vd)/vd > maxStarterChannels {
		sv.reference = levels.ComponentLabels(comps)[si]
		sp = sp.Referenced(comps[si].Offset)
		if comps, err = levels.Components(sp); err != nil {
			return nil, err
		}
		sv.notes = append(sv.notes, fmt.Sprintf("Velocity 0: the strongest line, component %s at %.6g MHz (line.reference); the span holds it alone; the other lines fall outside it and are left out of the model (transfer says how many). Model another line by setting line.reference to it.", sv.reference, sp.Frequency/1e6))
	}
	maxShift := 0.0 // largest weak-field shift of the strong components, m/s per G
	for _, c := range comps {
		if c.Strength >= 0.2*strongest {
			maxShift = math.Max(maxShift, math.Abs(c.SplitKmsPerG)*1e3)
		}
	}
	if maxShift == 0 {
		return nil, fmt.Errorf("no Zeeman splitting in the strong components: V and the field cannot be modelled")
	}
	// The starter keeps the default decay rates, so transfer's reference
	// Gamma (their harmonic mean) is DefaultGamma.
	gamma := transfer.DefaultGamma
	rEnd := sv.saturation * gamma // stimulated rate at the end of the run, s^-1

	// One solver for every field tried: the zero-field structure is
	// built once.
	ts, err := levels.NewTransitionSolver(sp)
	if err != nil {
		return nil, err
	}
	solve := func(b float64) (*levels.Transition, error) {
		tr := new(levels.Transition)
		if err := ts.Solve(b, tr); err != nil {
			return nil, err
		}
		return tr, nil
	}

	// The channel grid for a field: the automatic span when about 32
	// channels per Doppler width fit in 8192 channels, else a span over
	// the strong components, centred where transfer centres the grid.
	grid := func(b float64) (span, width float64, channels int, err error) {
		tr, err := solve(b)
		if err != nil {
			return 0, 0, 0, err
		}
		maxS := 0.0
		for _, l := range tr.Lines {
			maxS = math.Max(maxS, l.Strength)
		}
		c := levels.SpeedOfLight
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, l := range tr.Lines {
			if l.Strength > 1e-12*maxS { // the lines transfer keeps
				v := -c * l.Offset / sp.Frequency
				lo, hi = math.Min(lo, v), math.Max(hi, v)
			}
		}
		width = hi - lo + 8*vd // transfer's automatic span: 4 Doppler widths beyond the lines
		if starterPerDoppler*width/vd > maxStarterChannels {
			mid := (lo + hi) / 2
			if sp.ReferenceShift != 0 {
				mid = 0 // transfer centres a given span on the reference line
			}
			half := 0.0
			for _, cp := range comps {
				v := -c * cp.Offset / sp.Frequency
				// With a reference line, the span holds it and its
				// near neighbours only: the other lines are analysed
				// with their own line.reference.
				if cp.Strength >= 0.2*strongest && (sp.ReferenceShift == 0 || math.Abs(v) < 20*vd) {
					half = math.Max(half, math.Abs(v-mid)+b*maxShift)
				}
			}
			span = math.Ceil(2*(half+4*vd)/1e3) * 1e3 // whole km/s
			width = span
		}
		channels = 256
		for channels < maxStarterChannels && float64(channels) < starterPerDoppler*width/vd {
			channels *= 2
		}
		return span, width, channels, nil
	}
	gOmegaAt := func(b float64) (float64, error) {
		span, _, n, err := grid(b)
		if err != nil {
			return 0, err
		}
		return gOmega(solve, b, vd, span, n)
	}

	var b float64 // gauss
	switch {
	case t.field != "":
		b, _ = units.Parse(t.field, units.Field)
		if fromSpecies {
			sv.notes = append(sv.notes, "Field, line width and angle: the typical values of the species file ([typical]).")
		} else {
			sv.notes = append(sv.notes, "Field and line width: values typical of observed masers of this line (common practice).")
		}
	case sp.Magneton == levels.Bohr:
		b = nearestNice(3 * vd / maxShift)
		sv.notes = append(sv.notes, fmt.Sprintf("Field: largest Zeeman shift %.2g km/s, about 3 Doppler widths (resolved Zeeman pairs).", b*maxShift/1e3))
	default:
		limit := 0.05 * vd / maxShift
		best, bestG, found := 0.0, 0.0, false
		for _, x := range niceSeries(1e-3, limit) {
			g, err := gOmegaAt(x)
			if err != nil {
				return nil, err
			}
			if g > bestG {
				best, bestG = x, g
			}
			if rEnd/g <= validLimit {
				best, found = x, true
				break
			}
		}
		if best == 0 {
			best = 1e-3 // no splitting at all on the candidates
		}
		b = best
		if found {
			sv.notes = append(sv.notes, "Field: the smallest with R/gOmega <= 0.1 over the whole run (Zeeman shift < 5 % of the Doppler width).")
		} else {
			sv.notes = append(sv.notes, "Field: the one with the largest g Omega while the Zeeman shift stays < 5 % of the Doppler width.")
		}
	}
	sv.field = fieldText(b)
	span, width, n, err := grid(b)
	if err != nil {
		return nil, err
	}
	sv.channels = n
	sv.span = "0 km/s"
	if span > 0 {
		sv.span = units.Format(span, units.Velocity, "km/s")
		if sv.reference == "" {
			sv.notes = append(sv.notes, "Span: the strong components only; weaker lines outside it are ignored (transfer warns).")
		}
	}
	if per := float64(n-1) * vd / width; per < 4 {
		sv.notes = append(sv.notes, fmt.Sprintf("Channels: only %.2g per Doppler width; more resolve the line better.", per))
	}

	// Validity of the populations-only model at that field.
	g, err := gOmega(solve, b, vd, span, n)
	if err != nil {
		return nil, err
	}
	if g > 0 {
		satValid := validLimit * g / gamma
		first := transfer.DefaultFirstCheckpoint
		switch {
		case fromSpecies && satValid < sv.saturation && satValid > 10*first:
			sv.saturation = niceBelow(satValid)
			sv.notes = append(sv.notes, fmt.Sprintf("Validity: R/gOmega <= 0.1 up to saturation R/Gamma = %.2g at this field; the run ends at %g, inside it.", satValid, sv.saturation))
		case satValid >= sv.saturation:
			sv.notes = append(sv.notes, fmt.Sprintf("Validity: R/gOmega = %.2g at the final saturation %g: the populations-only model holds over the whole run.", rEnd/g, sv.saturation))
		case math.Log(satValid/first) >= 0.5*math.Log(sv.saturation/first):
			sv.notes = append(sv.notes, fmt.Sprintf("Validity: R/gOmega <= 0.1 up to saturation R/Gamma = %.2g; the checkpoints above it (to %g) are outside validity.", satValid, sv.saturation))
		case satValid > 10*first:
			// Most of the run would be outside: end it where validity ends.
			sv.saturation = niceBelow(satValid)
			sv.notes = append(sv.notes, fmt.Sprintf("Validity: R/gOmega <= 0.1 only up to saturation R/Gamma = %.2g at this field; the run ends at %g.", satValid, sv.saturation))
		default:
			sv.notes = append(sv.notes, fmt.Sprintf("Validity: R/gOmega <= 0.1 only up to saturation R/Gamma = %.2g at this field: most of the run is outside validity.", satValid))
		}
	}
	return sv, nil
}

// gOmega returns transfer's g Omega (s^-1) of sp at field b (gauss) on
// the given channel grid (which decides the lines transfer keeps).
func gOmega(solve func(float64) (*levels.Transition, error), b, vd, span float64, channels int) (float64, error) {
	tr, err := solve(b)
	if err != nil {
		return 0, err
	}
	p := transfer.Params{Species: tr.Species, Field: b, Doppler: vd, Span: span, Channels: channels}
	p.Defaults()
	m, err := transfer.NewModel(tr, p)
	if err != nil {
		return 0, err
	}
	return m.GOmega(), nil
}

// niceSeries returns the values 1, 2, 3, 5 times powers of ten from lo to
// hi (at least one value, lo's).
func niceSeries(lo, hi float64) []float64 {
	var out []float64
	for e := math.Floor(math.Log10(lo)); ; e++ {
		for _, m := range []float64{1, 2, 3, 5} {
			x := roundSig(m*math.Pow(10, e), 1)
			if x >= lo*(1-1e-9) && (x <= hi || len(out) == 0) {
				out = append(out, x)
			}
			if x > hi {
				return out
			}
		}
	}
}

// nearestNice returns the value of the 1-2-3-5 series nearest to x in log.
func nearestNice(x float64) float64 {
	best := 0.0
	for _, y := range niceSeries(x/10, x*10) {
		if best == 0 || math.Abs(math.Log(y/x)) < math.Abs(math.Log(best/x)) {
			best = y
		}
	}
	return best
}

// niceBelow returns the largest value of the 1-2-3-5 series <= x.
func niceBelow(x float64) float64 {
	s := niceSeries(x/10, x)
	return s[len(s)-1]
}

func roundSig(x float64, digits int) float64 {
	if x == 0 {
		return 0
	}
	p := math.Pow(10, float64(digits)-math.Ceil(math.Log10(math.Abs(x))))
	return math.Round(x*p) / p
}

// fieldText writes a field in G, mG or uG, whichever keeps it >= 1.
func fieldText(b float64) string {
	u := "uG"
	for _, c := range []string{"G", "mG"} {
		if units.In(b, units.Field, c) >= 1-1e-9 {
			u = c
			break
		}
	}
	return strconv.FormatFloat(roundSig(units.In(b, units.Field, u), 3), 'g', -1, 64) + " " + u
}
