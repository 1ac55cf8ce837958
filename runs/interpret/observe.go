package interpret

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"sort"
	"strings"

	"maserpol/config/units"
	"maserpol/runs/ecsv"
)

// StokesNames are the Stokes parameters in the order used throughout.
var StokesNames = [4]string{"I", "Q", "U", "V"}

// Observed is an observed full-Stokes spectrum, sorted by increasing
// velocity.
type Observed struct {
	File     string
	Velocity []float64 // m/s, strictly increasing
	// Stokes holds I, Q, U, V in Unit; a nil entry is a Stokes parameter
	// not used (not in Use).
	Stokes [4][]float64
	// Err is the 1-sigma error per channel in Unit; ErrFrom says where it
	// came from ("column dI" or "rms of 120 line-free channels").
	Err     [4][]float64
	ErrFrom [4]string
	Use     [4]bool
	// Unit is the intensity unit: "K" when the file gave a temperature
	// (converted to K), else the file's own unit ("Jy", or "" for none).
	Unit string
}

// Channels returns the number of channels.
func (o *Observed) Channels() int { return len(o.Velocity) }

// ReadOptions say how to interpret an observed spectrum file.
type ReadOptions struct {
	// VelocityUnit applies when the velocity column carries no unit
	// (e.g. "km/s"); empty means the file must give it.
	VelocityUnit string
	// IntensityUnit applies when the Stokes columns carry no unit.
	IntensityUnit string
	// Stokes lists the Stokes parameters to read and fit, e.g. "IQUV"
	// (default) or "IV". I is always required.
	Stokes string
}

// Accepted column names (compared case-insensitively). The unit may also be
// given in the name with a suffix (velocity_kms) or in brackets
// (velocity [km/s]) in plain CSV.
var (
	velocityNames = []string{"velocity", "velocity_kms", "velocity_ms", "vel", "v_lsr", "vlsr", "v"}
	errorPatterns = []string{"d%s", "sigma_%s", "%s_err", "err_%s", "e_%s", "%s_error", "%s_sigma"}
)

func stokesNames(s string) []string {
	return []string{s, "stokes_" + s, s + "_K", s + "_mK"}
}

// findColumn returns the index of the first column whose name matches one
// of names (case-sensitively first, then case-insensitively for names
// longer than one letter, so that "v" does not match "V").
func findColumn(t *ecsv.Table, names []string) int {
	for _, n := range names {
		if i := t.Index(n); i >= 0 {
			return i
		}
	}
	for _, n := range names {
		if len(n) < 2 {
			continue
		}
		for i, c := range t.Columns {
			if strings.EqualFold(c.Name, n) {
				return i
			}
		}
	}
	return -1
}

// astropyUnit turns an astropy unit string into the spelling of
// config/units: "km / s" -> "km/s", "m s-1" stays.
func astropyUnit(u string) string {
	u = strings.TrimSpace(u)
	u = strings.ReplaceAll(u, " / ", "/")
	return u
}

// unitFromName gives the unit a column name implies by its suffix.
func unitFromName(name string, k units.Kind) string {
	l := strings.ToLower(name)
	switch {
	case k == units.Velocity && strings.HasSuffix(l, "_kms"):
		return "km/s"
	case k == units.Velocity && strings.HasSuffix(l, "_ms"):
		return "m/s"
	case k == units.Temperature && strings.HasSuffix(name, "_mK"):
		return "mK"
	case k == units.Temperature && strings.HasSuffix(name, "_K"):
		return "K"
	}
	return ""
}

// ObservedError is a problem with an observed spectrum file: it names the
// file, the column, the line (0 when it concerns the whole file) and what
// is allowed.
type ObservedError struct {
	File, Column string
	Line         int
	Msg, Allowed string
}

func (e *ObservedError) Error() string {
	s := e.File
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	if e.Column != "" {
		s += ": column " + e.Column
	}
	s += ": " + e.Msg
	if e.Allowed != "" && !strings.Contains(e.Msg, "(allowed: ") {
		s += " (allowed: " + e.Allowed + ")"
	}
	return s
}

// dataLines returns the 1-based file line of each data row (the header row
// excluded): the lines that are neither comments nor blank, as the ecsv
// reader counts them.
func dataLines(b []byte) []int {
	var out []int
	first := true
	for i, ln := range bytes.Split(b, []byte("\n")) {
		s := strings.TrimRight(string(ln), "\r")
		if i == 0 {
			s = strings.TrimPrefix(s, "\ufeff")
		}
		if strings.HasPrefix(s, "#") || strings.TrimSpace(s) == "" {
			continue
		}
		if first {
			first = false
			continue
		}
		out = append(out, i+1)
	}
	return out
}

// ReadObserved reads an observed spectrum from an ECSV or plain CSV file.
func ReadObserved(path string, opt ReadOptions) (*Observed, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseObserved(b, path, opt)
}

// ParseObserved reads an observed spectrum from the bytes of a file; name
// is used in errors.
func ParseObserved(b []byte, name string, opt ReadOptions) (*Observed, error) {
	t, err := ecsv.Read(bytes.NewReader(b), name)
	if err != nil {
		return nil, err
	}
	lines := dataLines(b)
	lineOf := func(i int) int {
		if i < len(lines) {
			return lines[i]
		}
		return 0
	}
	colNames := func() string {
		n := make([]string, len(t.Columns))
		for i, c := range t.Columns {
			n[i] = c.Name
		}
		return strings.Join(n, ", ")
	}
	if opt.Stokes == "" {
		opt.Stokes = "IQUV"
	}
	o := &Observed{File: name}
	for _, r := range strings.ToUpper(opt.Stokes) {
		k := strings.IndexRune("IQUV", r)
		if k < 0 {
			return nil, &ObservedError{File: name, Msg: fmt.Sprintf("unknown Stokes parameter %q", string(r)), Allowed: "letters of IQUV, e.g. IQUV or IV"}
		}
		o.Use[k] = true
	}
	if !o.Use[0] {
		return nil, &ObservedError{File: name, Msg: "Stokes I is needed to scale the models", Allowed: "a Stokes list containing I"}
	}
	if len(t.Rows) < 8 {
		return nil, &ObservedError{File: name, Msg: fmt.Sprintf("%d channels", len(t.Rows)), Allowed: "at least 8 channels"}
	}
	floats := func(j int) ([]float64, error) {
		c := t.Columns[j]
		x, err := t.Floats(c.Name)
		if err != nil {
			return nil, err
		}
		for i, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &ObservedError{File: name, Column: c.Name, Line: lineOf(i), Msg: "missing or non-finite value", Allowed: "finite numbers in every channel; blank out bad channels by removing their rows"}
			}
		}
		return x, nil
	}

	// Velocity.
	vj := findColumn(t, velocityNames)
	if vj < 0 {
		return nil, &ObservedError{File: name, Msg: "no velocity column (columns: " + colNames() + ")", Allowed: strings.Join(velocityNames, ", ")}
	}
	vc := t.Columns[vj]
	vu := astropyUnit(vc.Unit)
	if vu == "" {
		vu = unitFromName(vc.Name, units.Velocity)
	}
	if vu == "" {
		vu = opt.VelocityUnit
	}
	if vu == "" {
		return nil, &ObservedError{File: name, Column: vc.Name, Msg: "velocity has no unit; give it in the header (ECSV unit, or \"velocity [km/s]\" in CSV) or with the velocity-unit option", Allowed: units.Allowed(units.Velocity)}
	}
	vscale, err := units.Parse("1 "+vu, units.Velocity)
	if err != nil {
		return nil, &ObservedError{File: name, Column: vc.Name, Msg: err.Error(), Allowed: units.Allowed(units.Velocity)}
	}
	vel, err := floats(vj)
	if err != nil {
		return nil, err
	}
	for i := range vel {
		vel[i] *= vscale
	}
	// Strictly monotonic, either direction; decreasing spectra are reversed.
	dir := 0.0
	for i := 1; i < len(vel); i++ {
		d := vel[i] - vel[i-1]
		if d == 0 || (dir != 0 && d*dir < 0) {
			return nil, &ObservedError{File: name, Column: vc.Name, Line: lineOf(i),
				Msg:     fmt.Sprintf("velocity %g %s after %g %s is not strictly monotonic", units.In(vel[i], units.Velocity, "km/s"), "km/s", units.In(vel[i-1], units.Velocity, "km/s"), "km/s"),
				Allowed: "velocities strictly increasing or strictly decreasing, no repeats"}
		}
		dir = math.Copysign(1, d)
	}

	// Stokes parameters and their errors.
	var order []int
	for i := range vel {
		order = append(order, i)
	}
	if dir < 0 {
		sort.Slice(order, func(a, b int) bool { return vel[order[a]] < vel[order[b]] })
	}
	o.Velocity = permute(vel, order)
	for k, s := range StokesNames {
		if !o.Use[k] {
			continue
		}
		j := findColumn(t, stokesNames(s))
		if j < 0 {
			return nil, &ObservedError{File: name, Msg: fmt.Sprintf("no Stokes %s column (columns: %s)", s, colNames()),
				Allowed: strings.Join(stokesNames(s), ", ") + "; or restrict the Stokes list (e.g. IV)"}
		}
		c := t.Columns[j]
		u := astropyUnit(c.Unit)
		if u == "" {
			u = unitFromName(c.Name, units.Temperature)
		}
		if u == "" {
			u = opt.IntensityUnit
		}
		sc, tag := intensityScale(u)
		if k == 0 {
			o.Unit = tag
		} else if tag != o.Unit {
			return nil, &ObservedError{File: name, Column: c.Name, Msg: fmt.Sprintf("unit %q does not match the unit of I (%q)", u, o.Unit), Allowed: "one intensity unit for I, Q, U, V and their errors (temperatures may mix K and mK)"}
		}
		x, err := floats(j)
		if err != nil {
			return nil, err
		}
		for i := range x {
			x[i] *= sc
		}
		o.Stokes[k] = permute(x, order)

		var en []string
		for _, p := range errorPatterns {
			en = append(en, fmt.Sprintf(p, s))
		}
		if ej := findColumn(t, en); ej >= 0 {
			ec := t.Columns[ej]
			e, err := floats(ej)
			if err != nil {
				return nil, err
			}
			esc := sc
			if eu := astropyUnit(ec.Unit); eu != "" {
				var etag string
				if esc, etag = intensityScale(eu); etag != o.Unit {
					return nil, &ObservedError{File: name, Column: ec.Name, Msg: fmt.Sprintf("unit %q does not match the unit of I (%q)", eu, o.Unit), Allowed: "one intensity unit for I, Q, U, V and their errors"}
				}
			}
			for i := range e {
				if !(e[i] > 0) {
					return nil, &ObservedError{File: name, Column: ec.Name, Line: lineOf(i), Msg: fmt.Sprintf("error %g is not positive", e[i]), Allowed: "errors > 0"}
				}
				e[i] *= esc
			}
			o.Err[k] = permute(e, order)
			o.ErrFrom[k] = "column " + ec.Name
		}
	}
	// Channels without given errors get the rms of line-free channels.
	need := false
	for k := range o.Use {
		if o.Use[k] && o.Err[k] == nil {
			need = true
		}
	}
	if need {
		mask, nfree, err := LineFree(o.Stokes[0])
		if err != nil {
			return nil, &ObservedError{File: name, Msg: err.Error(), Allowed: "error columns (" + strings.Join(en0(), ", ") + ") or a spectrum with line-free channels"}
		}
		for k := range o.Use {
			if !o.Use[k] || o.Err[k] != nil {
				continue
			}
			r := rmsOver(o.Stokes[k], mask)
			if !(r > 0) {
				return nil, &ObservedError{File: name, Column: StokesNames[k], Msg: "the line-free channels have zero rms, so no error can be estimated", Allowed: "an error column or noisy line-free channels"}
			}
			e := make([]float64, len(o.Velocity))
			for i := range e {
				e[i] = r
			}
			o.Err[k] = e
			o.ErrFrom[k] = fmt.Sprintf("rms of %d line-free channels", nfree)
		}
	}
	return o, nil
}

// intensityScale converts temperatures to K; any other unit (Jy, counts)
// is kept as it is, since the model scale is fitted.
func intensityScale(u string) (float64, string) {
	if u == "" {
		return 1, ""
	}
	if sc, err := units.Parse("1 "+u, units.Temperature); err == nil {
		return sc, "K"
	}
	return 1, u
}

func en0() []string {
	var en []string
	for _, p := range errorPatterns {
		en = append(en, fmt.Sprintf(p, "I"))
	}
	return en
}

func permute(x []float64, order []int) []float64 {
	out := make([]float64, len(order))
	for i, j := range order {
		out[i] = x[j]
	}
	return out
}

// LineFree marks the channels of a Stokes I spectrum that carry no line
// emission (common practice for noise estimates):
//
//  1. a robust noise estimate from first differences, sigma0 = 1.4826 *
//     MAD(I[i+1] - I[i]) / sqrt(2), insensitive to a smooth line;
//  2. line channels are those with I > 3 sigma0, widened by a guard band of
//     max(2, N/50) channels on each side;
//  3. all other channels are line-free.
//
// It returns the mask (true = line-free) and the number of line-free
// channels, and fails when fewer than 10 remain.
func LineFree(I []float64) ([]bool, int, error) {
	n := len(I)
	if n < 3 {
		return nil, 0, fmt.Errorf("too few channels (%d) to estimate the noise", n)
	}
	d := make([]float64, n-1)
	for i := range d {
		d[i] = I[i+1] - I[i]
	}
	sigma0 := 1.4826 * mad(d) / math.Sqrt2
	guard := max(2, n/50)
	mask := make([]bool, n)
	for i := range mask {
		mask[i] = true
	}
	for i, x := range I {
		if x > 3*sigma0 {
			for j := max(0, i-guard); j <= min(n-1, i+guard); j++ {
				mask[j] = false
			}
		}
	}
	nf := 0
	for _, f := range mask {
		if f {
			nf++
		}
	}
	if nf < 10 {
		return nil, nf, fmt.Errorf("only %d line-free channels to estimate the noise from (need 10)", nf)
	}
	return mask, nf, nil
}

func mad(x []float64) float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	med := median(s)
	for i := range s {
		s[i] = math.Abs(s[i] - med)
	}
	sort.Float64s(s)
	return median(s)
}

func median(sorted []float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return sorted[n/2]
	}
	return (sorted[n/2-1] + sorted[n/2]) / 2
}

// rmsOver is the rms about zero over the masked channels: the model has no
// baseline, so an offset counts as noise.
func rmsOver(x []float64, mask []bool) float64 {
	var s float64
	n := 0
	for i, v := range x {
		if mask[i] {
			s += v * v
			n++
		}
	}
	return math.Sqrt(s / float64(n))
}
