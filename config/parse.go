package config

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"maserpol/config/tomlpos"
	"maserpol/config/units"
	"maserpol/levels"
	"maserpol/transfer"
)

// Load reads and parses the configuration file at path. Species file paths
// in it are relative to the file's directory.
func Load(path string) (*Study, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &Error{File: path, Msg: err.Error()}
	}
	return Parse(data, path)
}

// Parse parses, validates and expands a configuration. filename is used in
// errors, for the default study name, and as the base of relative species
// file paths (the working directory when filename is empty).
func Parse(data []byte, filename string) (*Study, error) {
	return parseLimited(data, filename, maxModels)
}

// parseLimited is Parse with another bound on the number of models (the
// fuzz test keeps studies small so that it can try many).
func parseLimited(data []byte, filename string, limit int) (*Study, error) {
	ps := &parser{file: filename, pos: tomlpos.Index(data), maxModels: limit}
	if filename != "" {
		ps.dir = filepath.Dir(filename)
	}
	st, err := ps.parse(data)
	if err != nil {
		return nil, err // keep a nil error interface for a nil *Error
	}
	return st, nil
}

// parser holds the state of one Parse.
type parser struct {
	file      string
	dir       string
	pos       *tomlpos.Positions
	maxModels int
}

func (ps *parser) err(key, allowed, format string, args ...any) *Error {
	e := &Error{File: ps.file, Key: key, Msg: fmt.Sprintf(format, args...), Allowed: allowed}
	if ps.pos != nil {
		e.Line = ps.pos.Line(key)
	}
	return e
}

// unknown reports an unknown key with the closest known key of its table,
// or the table where a key of that name lives.
func (ps *parser) unknown(path, name string, known []string) *Error {
	e := ps.err(path, quoteList(known), "unknown key %q", name)
	if s := tomlpos.Closest(name, known); s != "" {
		e.Suggest = strconv.Quote(s)
		return e
	}
	for _, s := range schema() {
		if s.name == name && s.path() != path {
			e.Suggest = strconv.Quote(s.path()) + " (in table [" + s.table + "])"
			return e
		}
	}
	return e
}

// validName reports whether s is a study name: letters, digits, '.', '_'
// and '-', starting with a letter or digit, at most 100 bytes. It is
// written out rather than a regular expression: compiling the bounded
// repetition {0,99} took 2-4 ms at every start of the program.
func validName(s string) bool {
	if len(s) == 0 || len(s) > 100 || !isAlnum(s[0]) {
		return false
	}
	for i := 1; i < len(s); i++ {
		if c := s[i]; !isAlnum(c) && c != '.' && c != '_' && c != '-' {
			return false
		}
	}
	return true
}

func isAlnum(c byte) bool {
	return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9'
}

// parsed is the validated content of a document before expansion.
type parsed struct {
	raw     map[string]any
	given   map[string]bool
	params  []*param // numeric keys in reference order
	byPath  map[string]*param
	str     map[string]string
	bools   map[string]bool
	strs    map[string][]string
	weights map[string]map[float64]float64
	// levelWeights are the pump weights given by {F1, F} ("13/2,7" keys).
	levelWeights map[string]map[[2]float64]float64
	rawOf        map[string]any // written or default value of every non-numeric key
	// comps are the zero-field components of the species, for
	// pump.component (computed once, when that key is given).
	comps []levels.Component

	species     *levels.Species
	speciesText string // as written, for Model.Species
	speciesOut  string // resolved value of the species key: the preset name ("" for a table)
	// speciesDigest is the hex SHA-256 of a preset's definition; it is
	// written into the resolved config so that it enters the hash.
	speciesDigest string
	// speciesTbl is the species as an inline table: written so, or the
	// decoded content of a species file.
	speciesTbl map[string]any
}

func (ps *parser) parse(data []byte) (*Study, *Error) {
	raw := map[string]any{}
	if _, err := toml.Decode(string(data), &raw); err != nil {
		e := &Error{File: ps.file, Msg: err.Error()}
		var pe toml.ParseError
		if errors.As(err, &pe) {
			e.Line = pe.Position.Line
			if st := pe.Position.Start; st > 0 && st <= len(data) {
				// The decoder counts an error at a newline as on the next
				// line; count from the byte offset instead.
				e.Line = 1 + bytes.Count(data[:st], []byte{'\n'})
			}
			e.Key = pe.LastKey
			e.Msg = "malformed TOML: " + pe.Message
			tomlpos.Locate(e, data)
		}
		return nil, e
	}
	pd := &parsed{raw: raw, given: map[string]bool{}, byPath: map[string]*param{},
		str: map[string]string{}, bools: map[string]bool{}, strs: map[string][]string{},
		weights: map[string]map[float64]float64{}, levelWeights: map[string]map[[2]float64]float64{}, rawOf: map[string]any{}}
	specs := schema()
	if err := ps.structure(raw, specs, pd); err != nil {
		return nil, err
	}
	if err := ps.conflicts(pd); err != nil {
		return nil, err
	}
	if err := ps.componentLabels(pd); err != nil {
		return nil, err
	}
	for _, s := range specs {
		if err := ps.key(s, pd); err != nil {
			return nil, err
		}
	}
	if pd.species == nil {
		if err := ps.resolveSpecies(pd); err != nil {
			return nil, err
		}
	}
	if err := ps.checkFLabels(pd); err != nil {
		return nil, err
	}
	if err := ps.reference(pd); err != nil {
		return nil, err
	}
	return ps.expand(pd, specs)
}

// structure checks tables and key names, and records which keys are given.
func (ps *parser) structure(raw map[string]any, specs []*spec, pd *parsed) *Error {
	known := map[string][]string{}
	for _, s := range specs {
		known[s.table] = append(known[s.table], s.name)
	}
	top := append([]string{}, known[""]...)
	top = append(top, tables[1:]...)
	for _, k := range sortedKeys(raw) {
		if !slices.Contains(top, k) {
			return ps.unknown(k, k, top)
		}
		if k == "species" || !slices.Contains(tables, k) {
			pd.given[k] = true
			continue
		}
		t, ok := raw[k].(map[string]any)
		if !ok {
			return ps.err(k, "a table ["+k+"]", "%s must be a table, not %s", k, tomlType(raw[k]))
		}
		for _, kk := range sortedKeys(t) {
			if !slices.Contains(known[k], kk) {
				return ps.unknown(k+"."+kk, kk, known[k])
			}
			pd.given[k+"."+kk] = true
		}
	}
	return nil
}

func (ps *parser) conflicts(pd *parsed) *Error {
	pairs := [][2]string{
		{"line.doppler", "line.temperature"},
		{"line.doppler", "line.turbulence"},
		{"column.saturation", "column.gain"},
	}
	for _, p := range pairs {
		if pd.given[p[0]] && pd.given[p[1]] {
			return ps.err(p[1], "either "+p[0]+" or "+p[1], "%s and %s are alternatives; give one", p[0], p[1])
		}
	}
	if pd.given["line.turbulence"] && !pd.given["line.temperature"] {
		return ps.err("line.turbulence", "line.turbulence together with line.temperature", "turbulence without temperature; give line.doppler instead")
	}
	if !pd.given["species"] {
		return ps.err("species", speciesAllowed(), "missing species")
	}
	if !pd.given["field.strength"] {
		return ps.err("field.strength", units.Allowed(units.Field), `missing field strength, e.g. [field] strength = "30 mG"`)
	}
	return nil
}

// lookupRaw returns the written value of a key.
func lookupRaw(raw map[string]any, s *spec) (any, bool) {
	if s.table == "" {
		v, ok := raw[s.name]
		return v, ok
	}
	t, _ := raw[s.table].(map[string]any)
	v, ok := t[s.name]
	return v, ok
}

func decodeDefault(text string) any {
	var m map[string]any
	if _, err := toml.Decode("v = "+text, &m); err != nil {
		panic("config: bad default " + text) // a schema bug, held by tests
	}
	return m["v"]
}

// key reads one key (or its default) into pd.
func (ps *parser) key(s *spec, pd *parsed) *Error {
	path := s.path()
	v, ok := lookupRaw(pd.raw, s)
	if !ok {
		if !defaultApplies(s, pd.given) || s.def == "" {
			return nil
		}
		v = decodeDefault(s.def)
	}
	if s.sweepable() {
		p, err := ps.param(s, v)
		if err != nil {
			return err
		}
		pd.params = append(pd.params, p)
		pd.byPath[path] = p
		return nil
	}
	if path == "species" {
		return nil // resolved separately
	}
	pd.rawOf[path] = v
	switch s.typ {
	case tString:
		str, ok := v.(string)
		if !ok {
			return ps.err(path, s.allowed(), "expected a non-empty string, got %s", tomlType(v))
		}
		if str == "" {
			return ps.err(path, s.allowed(), "empty string")
		}
		if path == "name" && !validName(str) {
			return ps.err(path, "letters, digits, '.', '_' and '-', starting with a letter or digit, at most 100", "bad name %q", str)
		}
		pd.str[path] = str
	case tEnum:
		str, _ := v.(string)
		if !slices.Contains(s.enum, str) {
			e := ps.err(path, s.allowed(), "unknown value %v", tomlValue(v))
			if c := tomlpos.Closest(str, s.enum); c != "" {
				e.Suggest = strconv.Quote(c)
			}
			return e
		}
		pd.str[path] = str
	case tBool:
		b, ok := v.(bool)
		if !ok {
			return ps.err(path, s.allowed(), "expected true or false, got %s", tomlType(v))
		}
		pd.bools[path] = b
	case tStrings:
		list, ok := v.([]any)
		if !ok {
			return ps.err(path, "a non-empty list of "+s.allowed(), "expected a list of strings, got %s", tomlType(v))
		}
		if len(list) == 0 {
			return ps.err(path, "a non-empty list of "+s.allowed(), "empty list")
		}
		var out []string
		for _, e := range list {
			str, _ := e.(string)
			if !slices.Contains(s.enum, str) {
				return ps.err(path, s.allowed(), "unknown value %v", tomlValue(e))
			}
			if !slices.Contains(out, str) {
				out = append(out, str)
			}
		}
		pd.strs[path] = out
	case tWeights:
		t, ok := v.(map[string]any)
		if !ok {
			return ps.err(path, s.allowed(), "expected a table, got %s", tomlType(v))
		}
		w := map[float64]float64{}
		lw := map[[2]float64]float64{}
		for _, k := range sortedKeys(t) {
			f1, f, err := parseLevelKey(k)
			if err != nil {
				return ps.err(path+"."+k, "F labels like \"1\", \"2.5\" or \"5/2\", or F1 and F like \"13/2,7\" (non-negative multiples of 1/2)", "bad F label %q", k)
			}
			var x float64
			switch y := t[k].(type) {
			case int64:
				x = float64(y)
			case float64:
				x = y
			default:
				return ps.err(path+"."+k, "a number >= 0", "weight of F = %s is %s", k, tomlType(t[k]))
			}
			if !(x >= 0) || math.IsInf(x, 0) {
				return ps.err(path+"."+k, "a number >= 0", "negative or non-finite weight %v", x)
			}
			if f1 >= 0 {
				if _, dup := lw[[2]float64{f1, f}]; dup {
					return ps.err(path+"."+k, "each level once", "level %s given twice", k)
				}
				lw[[2]float64{f1, f}] = x
				continue
			}
			if _, dup := w[f]; dup {
				return ps.err(path+"."+k, "each F once", "F = %s given twice", k)
			}
			w[f] = x
		}
		pd.weights[path] = w
		if len(lw) > 0 {
			pd.levelWeights[path] = lw
		}
	}
	return nil
}

// checkFLabels rejects pump weights for F labels the species does not
// have: a weight on an absent level would silently do nothing.
func (ps *parser) checkFLabels(pd *parsed) *Error {
	for _, lv := range []struct {
		path  string
		level levels.Level
	}{{"pump.upper_f", pd.species.Upper}, {"pump.lower_f", pd.species.Lower}} {
		w := pd.weights[lv.path]
		if len(w) == 0 && len(pd.levelWeights[lv.path]) == 0 {
			continue
		}
		if err := ps.checkLevelKeys(pd, lv.path, lv.level); err != nil {
			return err
		}
		fs, err := fLabels(lv.level)
		if err != nil {
			return ps.err(lv.path, "", "species %s: %v", pd.species.Name, err)
		}
		have := map[float64]bool{}
		var names []string
		for _, f := range fs {
			have[f] = true
			names = append(names, strconv.Quote(halfText(f)))
		}
		// Unlisted F labels keep weight 1; a level whose every weight is 0
		// is refused by transfer ("nothing is pumped"): refuse it here.
		allZero := true
		for _, f := range fs {
			if x, ok := w[f]; !ok || x > 0 {
				allZero = false
			}
		}
		if allZero && pd.str["pump.kind"] == "hyperfine" {
			hint := "at least one F with a weight > 0"
			if lv.path == "pump.lower_f" {
				hint += "; to pump the lower level not at all, set pump.lower_ratio = 0"
			}
			return ps.err(lv.path, hint, "every F of the %s level has pump weight 0: nothing would be pumped", strings.TrimSuffix(strings.TrimPrefix(lv.path, "pump."), "_f"))
		}
		t, _ := lookupRaw(pd.raw, &spec{table: "pump", name: strings.TrimPrefix(lv.path, "pump.")})
		tbl, _ := t.(map[string]any)
		for _, k := range sortedKeys(tbl) {
			f1, f, _ := parseLevelKey(k)
			if f1 >= 0 || have[f] {
				continue // {F1, F} keys: checkLevelKeys
			}
			key := lv.path + "." + k
			e := ps.err(key, "the F labels of this level: "+strings.Join(names, ", "),
				"species %s has no %s level with F = %s", pd.species.Name, strings.TrimSuffix(strings.TrimPrefix(lv.path, "pump."), "_f"), k)
			if e.Line == 0 && ps.pos != nil {
				e.Line = ps.pos.Line(lv.path)
			}
			return e
		}
	}
	return nil
}

// fLabels returns the distinct zero-field F labels of a level, sorted: the
// multiplets of its hyperfine Hamiltonian (levels.Solver).
func fLabels(l levels.Level) ([]float64, error) {
	s, err := levels.NewSolver(l)
	if err != nil {
		return nil, err
	}
	seen := map[float64]bool{}
	var fs []float64
	for _, m := range s.Multiplets() {
		if !seen[m.F] {
			seen[m.F] = true
			fs = append(fs, m.F)
		}
	}
	sort.Float64s(fs)
	return fs, nil
}

// halfText writes a multiple of 1/2 as "2" or "5/2".
func halfText(f float64) string {
	if t := int(math.Round(2 * f)); t%2 != 0 {
		return strconv.Itoa(t) + "/2"
	}
	return strconv.FormatFloat(f, 'g', -1, 64)
}

// parseF reads an F label: "2", "1.5" or "3/2".
func parseF(s string) (float64, error) {
	var f float64
	if a, b, ok := strings.Cut(s, "/"); ok {
		n, err1 := strconv.Atoi(strings.TrimSpace(a))
		d, err2 := strconv.Atoi(strings.TrimSpace(b))
		if err1 != nil || err2 != nil || d != 2 {
			return 0, fmt.Errorf("bad F %q", s)
		}
		f = float64(n) / 2
	} else {
		var err error
		if f, err = strconv.ParseFloat(s, 64); err != nil {
			return 0, err
		}
	}
	if f < 0 || f*2 != math.Trunc(f*2) || f > 100 {
		return 0, fmt.Errorf("bad F %q", s)
	}
	return f, nil
}

// expand builds the models of the study: the product of the list and range
// axes and the Latin-hypercube axes, first axis slowest.
func (ps *parser) expand(pd *parsed, specs []*spec) (*Study, *Error) {
	var swept []*param
	for _, p := range pd.params {
		if p.swept() {
			swept = append(swept, p)
		}
	}
	axes, err := ps.axes(swept)
	if err != nil {
		return nil, err
	}
	total := 1
	for _, a := range axes {
		total *= a.n
	}

	name := pd.str["name"]
	if name == "" {
		name = defaultName(ps.file)
		pd.str["name"] = name
		pd.rawOf["name"] = name
	}
	dir := pd.str["output.dir"]
	if dir == "" {
		dir = "runs/" + name
		pd.str["output.dir"] = dir
		pd.rawOf["output.dir"] = dir
	}
	st := &Study{
		File: ps.file,
		Output: Output{
			Dir:     dir,
			Plots:   pd.bools["output.plots"],
			Formats: pd.strs["output.formats"],
			Spectra: pd.str["output.spectra"],
		},
	}
	if w := pd.species.UnverifiedWarning(); w != "" {
		st.Warnings = append(st.Warnings, w)
	}

	// Columns beyond the three always reported.
	always := map[string]bool{"field.strength": true, "field.theta": true, "field.chi": true}
	var extra []*param
	for _, p := range swept {
		if !always[p.spec.path()] {
			extra = append(extra, p)
			st.Swept = append(st.Swept, p.spec.column)
		}
	}

	// Where each swept param sits: axis and member.
	type at struct{ axis, member int }
	where := map[*param]at{}
	for i, a := range axes {
		for j, p := range a.params {
			where[p] = at{i, j}
		}
	}

	kind := transfer.PumpKind(indexOf(pumpKinds, pd.str["pump.kind"]))
	if kind == transfer.Anisotropic && pd.species.IsTable() {
		return nil, ps.err("pump.kind", `"isotropic", "hyperfine"`, "anisotropic pumping weights states by <m_J^2>, which species %s, given as a component table, does not define: use its Hamiltonian form", pd.species.Name)
	}
	width := len(strconv.Itoa(total - 1))
	if width < 4 {
		width = 4
	}
	pos := make([]int, len(axes))
	vals := map[string]float64{}
	texts := map[string]string{}
	warned := map[string]bool{}
	warn := func(s string) {
		if !warned[s] {
			warned[s] = true
			st.Warnings = append(st.Warnings, s)
		}
	}
	size := pd.species.Size()
	spreads := map[float64]lineSpread{}
	st.Models = make([]Model, total)
	for i := 0; i < total; i++ {
		digits(i, axes, pos)
		for _, p := range pd.params {
			if w, ok := where[p]; ok {
				a := axes[w.axis]
				vals[p.spec.path()] = a.values[w.member][pos[w.axis]]
				texts[p.spec.path()] = a.texts[w.member][pos[w.axis]]
			} else {
				vals[p.spec.path()] = p.values[0]
				texts[p.spec.path()] = p.texts[0]
			}
		}
		m := Model{
			Index:   i,
			Name:    fmt.Sprintf("m%0*d", width, i),
			Species: pd.speciesText,
		}
		par := &m.Params
		par.Species = pd.species
		par.Pump = transfer.Pump{Kind: kind, UpperF: pd.weights["pump.upper_f"], LowerF: pd.weights["pump.lower_f"],
			UpperLevels: pd.levelWeights["pump.upper_f"], LowerLevels: pd.levelWeights["pump.lower_f"]}
		par.Population = transfer.PopulationModel(indexOf(populationModels, pd.str["populations.model"]))
		for _, s := range specs {
			if x, ok := vals[s.path()]; ok && s.set != nil {
				s.set(par, x)
			}
		}
		if x, ok := vals["pump.component"]; ok {
			if err := ps.pumpComponent(pd, par, int(x), kind); err != nil {
				return nil, err
			}
		}
		if par.Gain > 0 {
			// The column ends at the gain; transfer still requires a
			// positive saturation, so it keeps its default.
			par.Saturation = transfer.DefaultSaturation
		}
		if T, ok := vals["line.temperature"]; ok {
			par.Doppler = transfer.DopplerWidth(T, pd.species.Mass, vals["line.turbulence"])
		}
		if err := ps.checkModel(&m, pd, vals, warn); err != nil {
			return nil, err
		}
		if err := ps.checkMemory(&m, size); err != nil {
			return nil, err
		}
		if err := ps.checkGrid(&m, pd, spreads); err != nil {
			return nil, err
		}
		for _, k := range []string{"field.strength", "field.theta", "field.chi"} {
			m.Values = append(m.Values, value(pd.byPath[k].spec, vals[k], texts[k]))
		}
		for _, p := range extra {
			k := p.spec.path()
			m.Values = append(m.Values, value(p.spec, vals[k], texts[k]))
		}
		st.Models[i] = m
	}
	if kind != transfer.Anisotropic {
		for _, x := range columnValues(st, pd, "pump.alignment") {
			if x != 0 {
				warn(`pump.alignment is used only with pump.kind = "anisotropic"; ignored`)
				break
			}
		}
	}
	if kind != transfer.Hyperfine && (pd.given["pump.upper_f"] || pd.given["pump.lower_f"]) {
		warn(`pump.upper_f and pump.lower_f are used only with pump.kind = "hyperfine"; ignored`)
	}
	if w := tableWarning(st); w != "" {
		st.Warnings = append(st.Warnings, w)
	}
	st.Resolved = ps.resolved(pd, specs)
	sum := sha256.Sum256(st.Resolved)
	st.Hash = hex.EncodeToString(sum[:])
	return st, nil
}

func (ps *parser) specAllowed(path string) string {
	for _, s := range schema() {
		if s.path() == path {
			return s.allowed()
		}
	}
	return ""
}

func columnValues(st *Study, pd *parsed, path string) []float64 {
	p := pd.byPath[path]
	if p == nil {
		return nil
	}
	if !p.swept() {
		return p.values
	}
	var out []float64
	for _, m := range st.Models {
		for _, v := range m.Values {
			if v.Key == path {
				out = append(out, v.Number)
			}
		}
	}
	return out
}

// checkModel holds the constraints that involve several keys.
func (ps *parser) checkModel(m *Model, pd *parsed, vals map[string]float64, warn func(string)) *Error {
	par := &m.Params
	l, c := par.Seed.LinearFraction, par.Seed.CircularFraction
	if l*l+c*c > 1+1e-12 {
		key := "seed.circular"
		if pd.given["seed.linear"] {
			key = "seed.linear"
		}
		return ps.err(key, "seed.linear^2 + seed.circular^2 <= 1", "model %s: seed polarization %g linear, %g circular exceeds 1", m.Name, l, c)
	}
	if vals["column.gain"] == 0 && par.FirstCheckpoint >= par.Saturation {
		key := "column.first_checkpoint"
		return ps.err(key, "first_checkpoint < saturation", "model %s: first checkpoint %g is not below the target saturation %g", m.Name, par.FirstCheckpoint, par.Saturation)
	}
	if !(par.Doppler > 0) {
		return ps.err("line.temperature", "a positive Doppler width", "model %s: Doppler width %g m/s", m.Name, par.Doppler)
	}
	if par.ElectronDensity > 0 && par.GainLength == 0 {
		return ps.err("faraday.gain_length", ps.specAllowed("faraday.gain_length"), "model %s: faraday.electron_density > 0 needs the gain length", m.Name)
	}
	if r := par.GammaLower / par.GammaUpper; par.Pump.LowerPump >= r {
		return ps.err("pump.lower_ratio", fmt.Sprintf("< gamma_lower/gamma_upper = %g", r), "model %s: lower_ratio %g leaves the line uninverted", m.Name, par.Pump.LowerPump)
	}
	// The transfer package's own checks are the last line: anything they
	// reject is reported against the key that set it.
	if err := par.Validate(); err != nil {
		key := ""
		var pe *transfer.ParamError
		if errors.As(err, &pe) {
			key = paramKeys[pe.Field]
		}
		return ps.err(key, "", "model %s: %v", m.Name, err)
	}
	if par.Span > 0 && par.Span < 4*par.Doppler {
		warn(fmt.Sprintf("line.span %s is narrower than 4 Doppler half-widths (%s): the line wings are cut",
			units.Format(par.Span, units.Velocity, "km/s"), units.Format(4*par.Doppler, units.Velocity, "km/s")))
	}
	return nil
}

func value(s *spec, x float64, text string) Value {
	n := x
	if s.typ == tQuantity {
		// Round off the ulps of the unit round trip (30 deg -> rad -> deg)
		// so that summary columns read as written; Params keep every bit.
		n, _ = strconv.ParseFloat(strconv.FormatFloat(units.In(x, s.kind, s.unit), 'g', 13, 64), 64)
	}
	return Value{Key: s.path(), Column: s.column, Number: n, Text: text}
}

// paramKeys maps transfer.Params fields (as transfer.ParamError names them)
// to config keys.
var paramKeys = map[string]string{
	"Field": "field.strength", "Theta": "field.theta", "Chi": "field.chi",
	"Doppler": "line.doppler", "Temperature": "line.temperature", "Turbulence": "line.turbulence",
	"Channels": "line.channels", "Span": "line.span",
	"GammaUpper": "rates.gamma_upper", "GammaLower": "rates.gamma_lower", "BeamSolid": "beam.solid_angle",
	"Pump.Kind": "pump.kind", "Pump.Alignment": "pump.alignment", "Pump.LowerPump": "pump.lower_ratio",
	"Seed.Tb": "seed.tb", "Seed.LinearFraction": "seed.linear", "Seed.CircularFraction": "seed.circular",
	"Seed": "seed.linear", "Seed.Angle": "seed.angle",
	"ElectronDensity": "faraday.electron_density", "GainLength": "faraday.gain_length",
	"Saturation": "column.saturation", "Gain": "column.gain", "CheckpointsPerDecade": "column.checkpoints_per_decade",
	"FirstCheckpoint": "column.first_checkpoint", "Tolerance": "column.tolerance",
	"Population": "populations.model", "CoherenceThreshold": "populations.coherence_threshold",
}

func defaultName(file string) string {
	base := strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))
	if file == "" || !validName(base) {
		return "study"
	}
	return base
}

func indexOf(xs []string, x string) int {
	for i, y := range xs {
		if y == x {
			return i
		}
	}
	return -1
}

func sortedF(w map[float64]float64) []float64 {
	fs := make([]float64, 0, len(w))
	for f := range w {
		fs = append(fs, f)
	}
	sort.Float64s(fs)
	return fs
}
