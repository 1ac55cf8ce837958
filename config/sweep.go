package config

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/samplemv"

	"maserpol/config/units"
)

// form is how a numeric key was written.
type form int

const (
	fScalar form = iota // one value
	fList               // [a, b, c]
	fRange              // { from, to, steps, spacing }
	fRandom             // { dist, n, seed, from, to }
)

// param is one numeric key as written and as expanded.
type param struct {
	spec   *spec
	form   form
	raw    any       // as decoded, for the resolved config
	values []float64 // scalar, list and range values in internal units
	texts  []string  // the values as a user would write them

	// range and random
	from, to       float64
	fromRaw, toRaw any
	steps          int
	spacing        string
	dist           string
	n              int
	seed           uint64
	seedGiven      bool
}

func (p *param) swept() bool { return p.form != fScalar }

// lhsStream is the second PCG word of the Latin-hypercube stream ("maserpol");
// the first is the user's seed.
const lhsStream = 0x6d61736572706f6c

// number converts one decoded TOML value of a numeric key to internal units.
func (ps *parser) number(s *spec, key string, v any) (float64, *Error) {
	var x float64
	switch s.typ {
	case tQuantity:
		y, err := units.Value(v, s.kind, s.plain)
		if err != nil {
			// The allowed clause of the error names the units and the
			// range; the units' own list would repeat it.
			msg := strings.TrimSuffix(err.Error(), " (allowed: "+units.Allowed(s.kind)+")")
			return 0, ps.err(key, s.allowed(), "%s", msg)
		}
		x = y
	case tNumber:
		var err error
		switch v := v.(type) {
		case int64:
			x = float64(v)
		case float64:
			x = v
		case string:
			x, err = units.Parse(v, units.Dimensionless)
		default:
			err = fmt.Errorf("expected a number, got %s", tomlType(v))
		}
		if err != nil {
			return 0, ps.err(key, s.allowed(), "%v", err)
		}
	case tInt:
		switch v := v.(type) {
		case int64:
			x = float64(v)
		case float64:
			if v != math.Trunc(v) {
				return 0, ps.err(key, s.allowed(), "%v is not an integer", v)
			}
			x = v
		default:
			return 0, ps.err(key, s.allowed(), "expected an integer, got %s", tomlType(v))
		}
	}
	if !s.inRange(x) {
		return 0, ps.err(key, s.allowed(), "value %s is out of range", writtenText(s, v))
	}
	return x, nil
}

// writtenText renders a decoded value as the user wrote it.
func writtenText(s *spec, v any) string {
	switch v := v.(type) {
	case string:
		return v
	case int64:
		t := strconv.FormatInt(v, 10)
		if s.plain != "" {
			t += " " + s.plain
		}
		return t
	case float64:
		t := strconv.FormatFloat(v, 'g', -1, 64)
		if s.plain != "" {
			t += " " + s.plain
		}
		return t
	}
	return fmt.Sprint(v)
}

// genText renders a generated value (range or random) in the unit the user
// wrote for from, else in the key's unit.
func genText(s *spec, x float64, like any) string {
	switch s.typ {
	case tInt:
		return strconv.FormatInt(int64(math.Round(x)), 10)
	case tNumber:
		return strconv.FormatFloat(x, 'g', 6, 64)
	}
	u := s.unit
	if str, ok := like.(string); ok {
		if w := unitOf(str); w != "" {
			if _, err := units.Parse("1 "+w, s.kind); err == nil {
				u = w
			}
		}
	}
	return strconv.FormatFloat(units.In(x, s.kind, u), 'g', 6, 64) + " " + u
}

// unitOf returns the unit part of "25 mG".
func unitOf(s string) string {
	t := strings.TrimSpace(s)
	i := strings.IndexFunc(t, func(r rune) bool {
		return !(r >= '0' && r <= '9' || r == '.' || r == '+' || r == '-' || r == 'e' || r == 'E')
	})
	if i < 0 {
		return ""
	}
	// An exponent 'e' directly followed by a letter is the unit's start.
	for i > 0 && (t[i-1] == 'e' || t[i-1] == 'E') {
		i--
	}
	return strings.TrimSpace(t[i:])
}

// param reads a numeric key in any of its forms.
func (ps *parser) param(s *spec, v any) (*param, *Error) {
	key := s.path()
	p := &param{spec: s, raw: v}
	switch v := v.(type) {
	case []any:
		p.form = fList
		if len(v) == 0 {
			return nil, ps.err(key, "a non-empty list", "empty list")
		}
		for i, e := range v {
			x, err := ps.number(s, fmt.Sprintf("%s[%d]", key, i), e)
			if err != nil {
				err.Key = key
				err.Msg = fmt.Sprintf("list element %d: %s", i+1, err.Msg)
				return nil, err
			}
			p.values = append(p.values, x)
			p.texts = append(p.texts, writtenText(s, e))
		}
	case map[string]any:
		if _, ok := v["dist"]; ok {
			if err := ps.random(p, v); err != nil {
				return nil, err
			}
		} else if err := ps.rangeOf(p, v); err != nil {
			return nil, err
		}
	default:
		x, err := ps.number(s, key, v)
		if err != nil {
			return nil, err
		}
		p.values = []float64{x}
		p.texts = []string{writtenText(s, v)}
	}
	return p, nil
}

func (ps *parser) checkKeys(key string, t map[string]any, known []string) *Error {
	for _, k := range sortedKeys(t) {
		if !slices.Contains(known, k) {
			return ps.unknown(key+"."+k, k, known)
		}
	}
	return nil
}

func (ps *parser) rangeOf(p *param, t map[string]any) *Error {
	s := p.spec
	key := s.path()
	p.form = fRange
	if err := ps.checkKeys(key, t, rangeKeys); err != nil {
		err.Allowed = "a range { from, to, steps, spacing } or a random draw { dist, n, seed, from, to }"
		return err
	}
	for _, k := range []string{"from", "to", "steps"} {
		if _, ok := t[k]; !ok {
			return ps.err(key+"."+k, "{ from = ..., to = ..., steps = N, spacing = \"lin\" | \"log\" }", "range without %q", k)
		}
	}
	var err *Error
	p.fromRaw, p.toRaw = t["from"], t["to"]
	if p.from, err = ps.number(s, key+".from", t["from"]); err != nil {
		return err
	}
	if p.to, err = ps.number(s, key+".to", t["to"]); err != nil {
		return err
	}
	n, ok := t["steps"].(int64)
	if !ok || n < 2 || n > maxSamples {
		return ps.err(key+".steps", fmt.Sprintf("an integer >= 2 and <= %d", maxSamples), "bad steps %v", t["steps"])
	}
	p.steps = int(n)
	p.spacing = "lin"
	if sp, ok := t["spacing"]; ok {
		str, _ := sp.(string)
		if !slices.Contains(spacings, str) {
			return ps.err(key+".spacing", quoteList(spacings), "unknown spacing %v", sp)
		}
		p.spacing = str
	}
	if p.spacing == "log" && (p.from <= 0 || p.to <= 0) {
		return ps.err(key, "from > 0 and to > 0 for spacing = \"log\"", "log spacing needs positive limits")
	}
	for i := 0; i < p.steps; i++ {
		f := float64(i) / float64(p.steps-1)
		var x float64
		switch {
		case i == 0:
			x = p.from
		case i == p.steps-1:
			x = p.to // exact end point
		case p.spacing == "log":
			x = p.from * math.Pow(p.to/p.from, f)
		default:
			x = p.from + (p.to-p.from)*f
		}
		if s.typ == tInt {
			r := math.Round(x)
			if math.Abs(r-x) > 1e-9*math.Max(1, math.Abs(x)) {
				return ps.err(key, "a range whose steps land on integers", "range value %g is not an integer", x)
			}
			x = r
		}
		p.values = append(p.values, x)
		p.texts = append(p.texts, genText(s, x, p.fromRaw))
	}
	return nil
}

func (ps *parser) random(p *param, t map[string]any) *Error {
	s := p.spec
	key := s.path()
	p.form = fRandom
	if err := ps.checkKeys(key, t, randomKeys); err != nil {
		err.Allowed = "a random draw { dist, n, seed, from, to }"
		return err
	}
	if s.typ == tInt {
		return ps.err(key, "a list or a range", "integer keys cannot be drawn at random")
	}
	d, _ := t["dist"].(string)
	if !slices.Contains(dists, d) {
		return ps.err(key+".dist", quoteList(dists), "unknown distribution %v", t["dist"])
	}
	p.dist = d
	nv, given := t["n"]
	n, ok := nv.(int64)
	switch {
	case !given:
		return ps.err(key+".n", fmt.Sprintf("an integer >= 1 and <= %d", maxSamples), "random draw without a sample count n")
	case !ok:
		return ps.err(key+".n", fmt.Sprintf("an integer >= 1 and <= %d", maxSamples), "sample count n is %s, not an integer", tomlType(nv))
	case n < 1 || n > maxSamples:
		return ps.err(key+".n", fmt.Sprintf("an integer >= 1 and <= %d", maxSamples), "sample count n = %d out of range", n)
	}
	p.n = int(n)
	p.seed = 1
	if sv, ok := t["seed"]; ok {
		si, ok := sv.(int64)
		if !ok || si < 0 {
			return ps.err(key+".seed", "an integer >= 0", "bad seed %v", sv)
		}
		p.seed, p.seedGiven = uint64(si), true
	}
	if d == "isotropic-angle" {
		if s.typ != tQuantity || s.kind != units.Angle {
			return ps.err(key+".dist", `"uniform", "loguniform"`, "isotropic-angle is for angles only")
		}
		if _, ok := t["from"]; !ok {
			t["from"] = "0 deg"
		}
		if _, ok := t["to"]; !ok {
			t["to"] = "180 deg"
		}
	}
	for _, k := range []string{"from", "to"} {
		if _, ok := t[k]; !ok {
			return ps.err(key+"."+k, "{ dist, n, seed, from, to }", "random draw without %q", k)
		}
	}
	var err *Error
	p.fromRaw, p.toRaw = t["from"], t["to"]
	if p.from, err = ps.number(s, key+".from", t["from"]); err != nil {
		return err
	}
	if p.to, err = ps.number(s, key+".to", t["to"]); err != nil {
		return err
	}
	if !(p.from < p.to) {
		return ps.err(key, "from < to", "empty interval from %s to %s", writtenText(s, p.fromRaw), writtenText(s, p.toRaw))
	}
	if d == "loguniform" && p.from <= 0 {
		return ps.err(key+".from", "from > 0 for loguniform", "loguniform needs positive limits")
	}
	if d == "isotropic-angle" && (p.from < 0 || p.to > math.Pi) {
		return ps.err(key, "0 deg <= from < to <= 180 deg", "isotropic-angle limits out of range")
	}
	return nil
}

// quantile maps a uniform p in [0, 1) to the draw's distribution.
func (p *param) quantile(u float64) float64 {
	var x float64
	switch p.dist {
	case "loguniform":
		x = math.Exp(math.Log(p.from) + u*(math.Log(p.to)-math.Log(p.from)))
	case "isotropic-angle":
		// cos(theta) uniform between cos(from) and cos(to): directions
		// uniform on the sphere.
		c0, c1 := math.Cos(p.from), math.Cos(p.to)
		x = math.Acos(math.Max(-1, math.Min(1, c0+u*(c1-c0))))
	default:
		x = p.from + u*(p.to-p.from)
	}
	return math.Max(p.from, math.Min(p.to, x))
}

// jointQuantile is the distmv.Quantiler of a group of independent draws.
type jointQuantile []*param

func (q jointQuantile) Quantile(x, u []float64) []float64 {
	if x == nil {
		x = make([]float64, len(u))
	}
	for i, p := range q {
		x[i] = p.quantile(u[i])
	}
	return x
}

// axis is one dimension of the study product: a list or range of one key,
// or a Latin-hypercube group of random draws sharing n.
type axis struct {
	params []*param
	n      int
	values [][]float64 // values[j][i]: sample i of params[j]
	texts  [][]string
}

// axes builds the product axes from the swept params, in reference order.
// Random draws with the same n form one Latin-hypercube axis at the place
// of their first member; they must share one seed.
func (ps *parser) axes(params []*param) ([]*axis, *Error) {
	var out []*axis
	groups := map[int]*axis{}
	for _, p := range params {
		switch p.form {
		case fList, fRange:
			out = append(out, &axis{params: []*param{p}, n: len(p.values),
				values: [][]float64{p.values}, texts: [][]string{p.texts}})
		case fRandom:
			a, ok := groups[p.n]
			if !ok {
				a = &axis{n: p.n}
				groups[p.n] = a
				out = append(out, a)
			}
			a.params = append(a.params, p)
		}
	}
	for _, a := range out {
		if a.params[0].form != fRandom {
			continue
		}
		// One seed per group: the first one written; all written must agree.
		var seed uint64 = 1
		var by *param
		for _, p := range a.params {
			if !p.seedGiven {
				continue
			}
			if by == nil {
				seed, by = p.seed, p
			} else if p.seed != seed {
				return nil, ps.err(p.spec.path()+".seed", fmt.Sprintf("the seed of %s (%d) or no seed", by.spec.path(), seed),
					"random draws with the same n = %d form one Latin hypercube and share one seed", p.n)
			}
		}
		for _, p := range a.params {
			p.seed = seed
		}
		batch := mat.NewDense(a.n, len(a.params), nil)
		samplemv.LatinHypercube{
			Q:   jointQuantile(a.params),
			Src: rand.NewPCG(seed, lhsStream),
		}.Sample(batch)
		for j, p := range a.params {
			v := make([]float64, a.n)
			t := make([]string, a.n)
			for i := range v {
				v[i] = batch.At(i, j)
				t[i] = genText(p.spec, v[i], p.fromRaw)
			}
			a.values = append(a.values, v)
			a.texts = append(a.texts, t)
		}
	}
	total := 1
	for _, a := range out {
		if total > ps.maxModels/a.n {
			return nil, ps.err(a.params[0].spec.path(), fmt.Sprintf("at most %d models", ps.maxModels), "the study expands to too many models")
		}
		total *= a.n
	}
	return out, nil
}

// digits splits a model index into one position per axis; the first axis
// varies slowest, the last fastest (nested loops in reference order).
func digits(index int, axes []*axis, pos []int) {
	for k := len(axes) - 1; k >= 0; k-- {
		pos[k] = index % axes[k].n
		index /= axes[k].n
	}
}

func sortedKeys(m map[string]any) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func tomlType(v any) string {
	switch v.(type) {
	case string:
		return "a string"
	case int64:
		return "an integer"
	case float64:
		return "a float"
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
