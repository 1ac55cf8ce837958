package species

import (
	"bytes"
	"embed"
	"errors"
	"fmt"
	"math"
	"os"
	"path"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"maserpol/config/tomlpos"
	"maserpol/config/units"
	"maserpol/levels"
)

//go:embed presets/*.toml
var presetFS embed.FS

// Error is a species-file error that names where it is; it is the same
// type as maserpol/config.Error.
type Error = tomlpos.Error

// Names returns the preset names, sorted.
func Names() []string {
	ents, _ := presetFS.ReadDir("presets")
	var out []string
	for _, e := range ents {
		if n, ok := strings.CutSuffix(e.Name(), ".toml"); ok {
			out = append(out, n)
		}
	}
	sort.Strings(out)
	return out
}

// Preset returns a built-in species by name.
func Preset(name string) (*levels.Species, error) {
	data, err := presetFS.ReadFile(path.Join("presets", name+".toml"))
	if err != nil {
		return nil, &Error{File: "preset " + name, Msg: "no such species preset",
			Allowed: strings.Join(Names(), ", "), Suggest: tomlpos.Closest(name, Names())}
	}
	return Parse(data, "preset "+name)
}

// PresetSource returns the TOML text of a preset, for users who want to copy
// and edit it.
func PresetSource(name string) ([]byte, error) {
	data, err := presetFS.ReadFile(path.Join("presets", name+".toml"))
	if err != nil {
		return nil, &Error{File: "preset " + name, Msg: "no such species preset",
			Allowed: strings.Join(Names(), ", "), Suggest: tomlpos.Closest(name, Names())}
	}
	return data, nil
}

// Load reads a species file.
func Load(file string) (*levels.Species, error) {
	data, err := os.ReadFile(file)
	if err != nil {
		return nil, &Error{File: file, Msg: err.Error()}
	}
	return Parse(data, file)
}

// Resolve returns the preset of that name if there is one, else loads the
// file at that path.
func Resolve(nameOrPath string) (*levels.Species, error) {
	for _, n := range Names() {
		if n == nameOrPath {
			return Preset(n)
		}
	}
	if _, err := os.Stat(nameOrPath); err != nil {
		return nil, &Error{File: nameOrPath, Msg: "neither a species preset nor a readable species file",
			Allowed: "a preset (" + strings.Join(Names(), ", ") + ") or a species file path",
			Suggest: tomlpos.Closest(nameOrPath, Names())}
	}
	return Load(nameOrPath)
}

type parser struct {
	file string
	pos  *tomlpos.Positions
}

func (p *parser) err(key, allowed, format string, a ...any) *Error {
	return &Error{File: p.file, Line: p.pos.Line(key), Key: key, Msg: fmt.Sprintf(format, a...), Allowed: allowed}
}

var (
	topKeys      = []string{"name", "frequency", "einstein_a", "mass", "magneton", "unverified", "sources", "typical", "upper", "lower", "spin", "coupling"}
	levelKeys    = []string{"J", "g", "label"}
	spinKeys     = []string{"name", "I", "g", "shielding"}
	couplingKeys = []string{"kind", "level", "spins", "value", "source"}
	kindNames    = map[string]levels.CouplingKind{
		"spin-rotation":    levels.SpinRotation,
		"spin-spin":        levels.SpinSpin,
		"spin-spin-tensor": levels.SpinSpinTensor,
		"quadrupole":       levels.Quadrupole,
	}
	kindList = "spin-rotation, spin-spin, spin-spin-tensor, quadrupole"
)

// checkKeys reports the first key of m (in sorted order) not in allowed.
func (p *parser) checkKeys(prefix string, m map[string]any, allowed []string) error {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		ok := false
		for _, a := range allowed {
			ok = ok || a == k
		}
		if !ok {
			e := p.err(join(prefix, k), strings.Join(allowed, ", "), "unknown key")
			e.Suggest = tomlpos.Closest(k, allowed)
			return e
		}
	}
	return nil
}

func join(prefix, k string) string {
	if prefix == "" {
		return k
	}
	return prefix + "." + k
}

// Parse reads a species from TOML data; filename is used in errors.
func Parse(data []byte, filename string) (*levels.Species, error) {
	p := &parser{file: filename, pos: tomlpos.Index(data)}
	var raw map[string]any
	if _, err := toml.Decode(string(data), &raw); err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			e := &Error{File: filename, Line: pe.Position.Line, Key: pe.LastKey, Msg: "malformed TOML: " + pe.Message}
			if st := pe.Position.Start; st > 0 && st <= len(data) {
				// Counted from the byte offset: the decoder puts an error at
				// a newline on the next line.
				e.Line = 1 + bytes.Count(data[:st], []byte{'\n'})
			}
			tomlpos.Locate(e, data)
			return nil, e
		}
		return nil, &Error{File: filename, Msg: "TOML: " + err.Error()}
	}
	_, isTable := raw["components"]
	if !isTable {
		if err := p.checkKeys("", raw, topKeys); err != nil {
			return nil, err
		}
	}
	if len(raw) == 0 {
		return nil, &Error{File: filename, Line: 1, Key: "name", Msg: "the species file is empty (or holds only comments)",
			Allowed: "a species: name, frequency, einstein_a, mass, [upper] and [lower] tables, optional [[spin]] and [[coupling]]"}
	}
	sp := &levels.Species{}
	var err error
	if sp.Name, err = p.str(raw, "name", "", true); err != nil {
		return nil, err
	}
	if sp.Frequency, err = p.quantity(raw, "frequency", units.Frequency, "", true); err != nil {
		return nil, err
	}
	if !(sp.Frequency > 0) {
		return nil, p.err("frequency", "> 0", "rest frequency must be positive")
	}
	if sp.EinsteinA, err = p.quantity(raw, "einstein_a", units.Rate, "s^-1", !isTable); err != nil {
		return nil, err
	}
	if _, given := raw["einstein_a"]; given && !(sp.EinsteinA > 0) {
		return nil, p.err("einstein_a", "> 0", "Einstein A must be positive")
	}
	if sp.Mass, err = p.quantity(raw, "mass", units.Mass, "amu", true); err != nil {
		return nil, err
	}
	if !(sp.Mass > 0) {
		return nil, p.err("mass", "> 0", "mass must be positive")
	}
	mag, err := p.str(raw, "magneton", "nuclear", false)
	if err != nil {
		return nil, err
	}
	switch mag {
	case "nuclear":
		sp.Magneton = levels.Nuclear
	case "bohr":
		sp.Magneton = levels.Bohr
	default:
		e := p.err("magneton", "nuclear, bohr", "unknown magneton %q", mag)
		e.Suggest = tomlpos.Closest(mag, []string{"nuclear", "bohr"})
		return nil, e
	}
	if v, ok := raw["unverified"]; ok {
		const allowed = "true, false, or an array naming the unchecked values"
		switch x := v.(type) {
		case bool:
			sp.Unverified = x
		case []any:
			for i, e := range x {
				s, isS := e.(string)
				if !isS || strings.TrimSpace(s) == "" {
					return nil, p.err("unverified", allowed, "entry %d is %s, not a non-empty string", i, typeName(e))
				}
				sp.UnverifiedValues = append(sp.UnverifiedValues, s)
			}
			sp.Unverified = len(sp.UnverifiedValues) > 0
		default:
			return nil, p.err("unverified", allowed, "must be a boolean or an array of strings, got %s", typeName(v))
		}
	}
	if v, ok := raw["sources"]; ok {
		list, isL := v.([]any)
		if !isL {
			return nil, p.err("sources", "an array of strings", "must be an array of strings, got %s", typeName(v))
		}
		for i, x := range list {
			s, isS := x.(string)
			if !isS {
				return nil, p.err("sources", "an array of strings", "entry %d is %s, not a string", i, typeName(x))
			}
			sp.Notes = append(sp.Notes, s)
		}
	}
	if err := p.typical(raw, sp); err != nil {
		return nil, err
	}
	sp.Upper.Magneton, sp.Lower.Magneton = sp.Magneton, sp.Magneton
	if isTable {
		if err := p.parseTable(raw, data, sp); err != nil {
			return nil, err
		}
		return sp, nil
	}
	for _, lv := range []struct {
		key string
		dst *levels.Level
	}{{"upper", &sp.Upper}, {"lower", &sp.Lower}} {
		if err := p.level(raw, lv.key, lv.dst); err != nil {
			return nil, err
		}
	}

	// Spins, shared by both levels.
	spinTabs, err := p.tables(raw, "spin")
	if err != nil {
		return nil, err
	}
	var spins []levels.Spin
	var spinNames []string
	for i, t := range spinTabs {
		pre := fmt.Sprintf("spin[%d]", i)
		if err := p.checkKeys(pre, t, spinKeys); err != nil {
			return nil, err
		}
		var s levels.Spin
		if s.Name, err = p.str(t, "name", "", true, pre); err != nil {
			return nil, err
		}
		for _, n := range spinNames {
			if n == s.Name {
				return nil, p.err(pre+".name", "a name not used by another spin", "duplicate spin name %q", s.Name)
			}
		}
		if s.I, err = p.angmom(t, "I", pre, "spin"); err != nil {
			return nil, err
		}
		if s.G, err = p.number(t, "g", pre, true, 0); err != nil {
			return nil, err
		}
		if s.Shielding, err = p.number(t, "shielding", pre, false, 0); err != nil {
			return nil, err
		}
		spins = append(spins, s)
		spinNames = append(spinNames, s.Name)
	}
	sp.Upper.Spins = spins
	sp.Lower.Spins = append([]levels.Spin(nil), spins...)
	// Bound the structure before anything is built from it.
	if err := sp.CheckSize(); err != nil {
		var se *levels.SizeError
		if errors.As(err, &se) {
			return nil, p.err(se.Key, SizeAllowed(), "%s", strings.TrimPrefix(err.Error(), "levels: "))
		}
		return nil, err
	}

	// Couplings.
	coupTabs, err := p.tables(raw, "coupling")
	if err != nil {
		return nil, err
	}
	for i, t := range coupTabs {
		pre := fmt.Sprintf("coupling[%d]", i)
		if err := p.checkKeys(pre, t, couplingKeys); err != nil {
			return nil, err
		}
		kn, err := p.str(t, "kind", "", true, pre)
		if err != nil {
			return nil, err
		}
		kind, ok := kindNames[kn]
		if !ok {
			e := p.err(pre+".kind", kindList, "unknown coupling kind %q", kn)
			e.Suggest = tomlpos.Closest(kn, strings.Split(kindList, ", "))
			return nil, e
		}
		lvName, err := p.str(t, "level", "", true, pre)
		if err != nil {
			return nil, err
		}
		var targets []*levels.Level
		switch lvName {
		case "upper":
			targets = []*levels.Level{&sp.Upper}
		case "lower":
			targets = []*levels.Level{&sp.Lower}
		case "both":
			targets = []*levels.Level{&sp.Upper, &sp.Lower}
		default:
			e := p.err(pre+".level", "upper, lower, both", "unknown level %q", lvName)
			e.Suggest = tomlpos.Closest(lvName, []string{"upper", "lower", "both"})
			return nil, e
		}
		idx, err := p.spinRefs(t, pre, spinNames)
		if err != nil {
			return nil, err
		}
		want := 1
		if kind == levels.SpinSpin || kind == levels.SpinSpinTensor {
			want = 2
		}
		if len(idx) != want {
			return nil, p.err(pre+".spins", fmt.Sprintf("%d spin name(s) for %s", want, kn), "%s needs %d spin(s), got %d", kn, want, len(idx))
		}
		if want == 2 && idx[0] == idx[1] {
			return nil, p.err(pre+".spins", "two different spins", "%s couples spin %q with itself", kn, spinNames[idx[0]])
		}
		val, err := p.quantity(t, "value", units.Frequency, "", true, pre)
		if err != nil {
			return nil, err
		}
		if kind == levels.Quadrupole && spins[idx[0]].I < 1 {
			return nil, p.err(pre+".spins", "a spin with I >= 1", "quadrupole on spin %q with I = %s", spinNames[idx[0]], half(spins[idx[0]].I))
		}
		for _, lv := range targets {
			if (kind == levels.Quadrupole || kind == levels.SpinSpinTensor) && lv.J < 1 {
				return nil, p.err(pre+".level", "a level with J >= 1", "%s in a level with J = %s (J = 0 and 1/2 have no rank-2 hyperfine term)", kn, half(lv.J))
			}
			lv.Couplings = append(lv.Couplings, levels.Coupling{Kind: kind, Spins: idx, Value: val})
		}
		if src, ok := t["source"]; ok {
			s, isS := src.(string)
			if !isS {
				return nil, p.err(pre+".source", "a string", "must be a string, got %s", typeName(src))
			}
			sp.Notes = append(sp.Notes, fmt.Sprintf("%s %s (%s): %s", kn, strings.Join(namesOf(idx, spinNames), "-"), lvName, s))
		}
	}
	if err := sp.Validate(); err != nil {
		return nil, p.err("lower.J", "|J_u - J_l| <= 1, integer, not 0 -> 0", "%v", err)
	}
	return sp, nil
}

// SizeAllowed states the size limits of a species (package levels).
func SizeAllowed() string {
	return fmt.Sprintf("at most %d basis states per level, %d dipole components, %s of level structure",
		levels.MaxDim, levels.MaxLines, levels.BytesText(levels.MaxBytes))
}

func namesOf(idx []int, names []string) []string {
	out := make([]string, len(idx))
	for i, k := range idx {
		out[i] = names[k]
	}
	return out
}

func (p *parser) level(raw map[string]any, key string, dst *levels.Level) error {
	v, ok := raw[key]
	if !ok {
		return p.err(key, "a table with J and g", "missing [%s] table", key)
	}
	t, ok := v.(map[string]any)
	if !ok {
		return p.err(key, "a table with J and g", "must be a table, got %s", typeName(v))
	}
	if err := p.checkKeys(key, t, levelKeys); err != nil {
		return err
	}
	var err error
	if dst.J, err = p.angmom(t, "J", key, "rotational"); err != nil {
		return err
	}
	if dst.G, err = p.number(t, "g", key, true, 0); err != nil {
		return err
	}
	if _, err = p.str(t, "label", "", false, key); err != nil {
		return err
	}
	return nil
}

func (p *parser) tables(raw map[string]any, key string) ([]map[string]any, error) {
	v, ok := raw[key]
	if !ok {
		return nil, nil
	}
	switch x := v.(type) {
	case []map[string]any:
		return x, nil
	case []any:
		out := make([]map[string]any, len(x))
		for i, e := range x {
			m, ok := e.(map[string]any)
			if !ok {
				return nil, p.err(key, "an array of tables [["+key+"]]", "entry %d is %s", i, typeName(e))
			}
			out[i] = m
		}
		return out, nil
	}
	return nil, p.err(key, "an array of tables [["+key+"]]", "must be an array of tables, got %s", typeName(v))
}

func (p *parser) spinRefs(t map[string]any, pre string, names []string) ([]int, error) {
	key := pre + ".spins"
	v, ok := t["spins"]
	if !ok {
		return nil, p.err(key, "an array of spin names", "required key is missing")
	}
	var list []string
	switch x := v.(type) {
	case string:
		list = []string{x}
	case []any:
		for _, e := range x {
			s, ok := e.(string)
			if !ok {
				return nil, p.err(key, "an array of spin names", "entry %v is %s, not a string", e, typeName(e))
			}
			list = append(list, s)
		}
	default:
		return nil, p.err(key, "an array of spin names", "must be an array of spin names, got %s", typeName(v))
	}
	var idx []int
	for _, s := range list {
		k := -1
		for i, n := range names {
			if n == s {
				k = i
			}
		}
		if k < 0 {
			allowed := strings.Join(names, ", ")
			if allowed == "" {
				allowed = "none: the file has no [[spin]] tables"
			}
			e := p.err(key, allowed, "unknown spin %q", s)
			e.Suggest = tomlpos.Closest(s, names)
			return nil, e
		}
		idx = append(idx, k)
	}
	return idx, nil
}

func (p *parser) str(t map[string]any, key, def string, required bool, prefix ...string) (string, error) {
	full := key
	if len(prefix) > 0 {
		full = join(prefix[0], key)
	}
	v, ok := t[key]
	if !ok {
		if required {
			return "", p.err(full, "a string", "required key is missing")
		}
		return def, nil
	}
	s, ok := v.(string)
	if !ok {
		return "", p.err(full, "a string", "must be a string, got %s", typeName(v))
	}
	return s, nil
}

func (p *parser) number(t map[string]any, key, prefix string, required bool, def float64) (float64, error) {
	full := join(prefix, key)
	v, ok := t[key]
	if !ok {
		if required {
			return 0, p.err(full, "a number", "required key is missing")
		}
		return def, nil
	}
	switch x := v.(type) {
	case int64:
		return float64(x), nil
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return 0, p.err(full, "a finite number", "not finite")
		}
		return x, nil
	}
	return 0, p.err(full, "a number", "must be a number, got %s", typeName(v))
}

func (p *parser) quantity(t map[string]any, key string, k units.Kind, plain string, required bool, prefix ...string) (float64, error) {
	full := key
	if len(prefix) > 0 {
		full = join(prefix[0], key)
	}
	v, ok := t[key]
	if !ok {
		if required {
			return 0, p.err(full, unitHint(k, plain), "required key is missing")
		}
		return 0, nil
	}
	x, err := units.Value(v, k, plain)
	if err != nil {
		// The unit list goes into Allowed once, not twice.
		msg := strings.TrimSuffix(err.Error(), " (allowed: "+units.Allowed(k)+")")
		return 0, p.err(full, unitHint(k, plain), "%s", msg)
	}
	return x, nil
}

func unitHint(k units.Kind, plain string) string {
	s := "a " + k.String() + " with a unit (" + units.Allowed(k) + ")"
	if plain != "" {
		s += " or a number in " + plain
	}
	return s
}

// angmom reads J or I: a number or a string "n/2", a non-negative multiple of 1/2.
func (p *parser) angmom(t map[string]any, key, prefix, what string) (float64, error) {
	full := join(prefix, key)
	allowed := "0, 1/2, 1, 3/2, ... (a non-negative multiple of 1/2; number or string \"3/2\")"
	v, ok := t[key]
	if !ok {
		return 0, p.err(full, allowed, "missing %s angular momentum", what)
	}
	var x float64
	switch y := v.(type) {
	case int64:
		x = float64(y)
	case float64:
		x = y
	case string:
		n, d, isFrac := strings.Cut(strings.TrimSpace(y), "/")
		a, err1 := strconv.ParseFloat(strings.TrimSpace(n), 64)
		b := 1.0
		var err2 error
		if isFrac {
			b, err2 = strconv.ParseFloat(strings.TrimSpace(d), 64)
		}
		if err1 != nil || err2 != nil || b == 0 {
			return 0, p.err(full, allowed, "cannot read %q as an angular momentum", y)
		}
		x = a / b
	default:
		return 0, p.err(full, allowed, "must be a number, got %s", typeName(v))
	}
	if x < 0 || math.IsNaN(x) || math.IsInf(x, 0) || math.Abs(2*x-math.Round(2*x)) > 1e-9 {
		return 0, p.err(full, allowed, "%s = %v is not a non-negative multiple of 1/2", key, v)
	}
	return math.Round(2*x) / 2, nil
}

func half(x float64) string {
	if t := int(math.Round(2 * x)); t%2 != 0 {
		return strconv.Itoa(t) + "/2"
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

func typeName(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64, float64:
		return "a number"
	case bool:
		return "a boolean"
	case []any, []map[string]any:
		return "an array"
	case map[string]any:
		return "a table"
	case time.Time:
		return "a date-time"
	}
	return "a value of another type"
}

// typical reads the optional [typical] table: conditions typical of
// observed masers of the line, used by starter configs.
func (p *parser) typical(raw map[string]any, sp *levels.Species) error {
	v, ok := raw["typical"]
	if !ok {
		return nil
	}
	t, ok := v.(map[string]any)
	if !ok {
		return p.err("typical", "a table with field, fwhm and theta", "must be a table, got %s", typeName(v))
	}
	if err := p.checkKeys("typical", t, []string{"field", "fwhm", "theta"}); err != nil {
		return err
	}
	var err error
	if sp.Typical.Field, err = p.quantity(t, "field", units.Field, "", false, "typical"); err != nil {
		return err
	}
	fwhm, err := p.quantity(t, "fwhm", units.Velocity, "", false, "typical")
	if err != nil {
		return err
	}
	if _, given := t["fwhm"]; given && !(fwhm > 0) {
		return p.err("typical.fwhm", "> 0 km/s", "line width must be positive")
	}
	sp.Typical.Doppler = fwhm / (2 * math.Sqrt(math.Ln2))
	if sp.Typical.Theta, err = p.quantity(t, "theta", units.Angle, "", false, "typical"); err != nil {
		return err
	}
	if sp.Typical.Theta < 0 || sp.Typical.Theta > math.Pi {
		return p.err("typical.theta", "0 .. 180 deg", "angle out of range")
	}
	return nil
}
