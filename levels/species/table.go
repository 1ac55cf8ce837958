package species

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"maserpol/config/tomlpos"
	"maserpol/config/units"
	"maserpol/levels"
)

// The component-table form of a species file: instead of [[spin]] and
// [[coupling]] (a Hamiltonian), a [components] table carries a published
// hyperfine component table as text, one component per row:
//
//	[components]
//	spins = ["3/2", "1/2"]   # optional: I of the spin coupled to J (F1), then to F1 (F)
//	table = """
//	F1u  Fu   F1l  Fl   offset_kHz  strength  gFu     gFl
//	6.5  7    5.5  6    -1.17       0.1591    0.0770  0.0811
//	"""
//
// Columns (any order, whitespace-separated; "#" starts a comment line):
// Fu, Fl (required); F1u, F1l (with two spins); offset_<unit> (any
// frequency unit, e.g. offset_kHz); strength (relative) or A (s^-1), one of
// the two; gFu, gFl (g_F of the upper and the lower F level, in units of
// the species magneton). F values may be written "7/2".

var (
	tableTopKeys   = []string{"name", "frequency", "einstein_a", "mass", "magneton", "unverified", "sources", "typical", "upper", "lower", "components"}
	tableLevelKeys = []string{"J", "label"}
	componentsKeys = []string{"spins", "table"}
	tableColumns   = []string{"Fu", "Fl", "F1u", "F1l", "offset_<unit>", "strength", "A", "gFu", "gFl"}
)

// parseTable reads a component-table species; raw is the decoded file.
func (p *parser) parseTable(raw map[string]any, data []byte, sp *levels.Species) error {
	if err := p.checkKeys("", raw, tableTopKeys); err != nil {
		if e, ok := err.(*Error); ok && (e.Key == "spin" || e.Key == "coupling") {
			e.Msg = "[[" + e.Key + "]] belongs to the Hamiltonian form; a species with [components] gives g_F per component instead"
			e.Suggest = ""
		}
		return err
	}
	var jj [2]float64
	hasJ := [2]bool{}
	for i, key := range []string{"upper", "lower"} {
		v, ok := raw[key]
		if !ok {
			continue
		}
		t, ok := v.(map[string]any)
		if !ok {
			return p.err(key, "a table with optional J and label", "must be a table, got %s", typeName(v))
		}
		if err := p.checkKeys(key, t, tableLevelKeys); err != nil {
			if e, ok := err.(*Error); ok && e.Key == key+".g" {
				e.Msg = "a component-table level has no rotational g: give g_F per component (columns gFu, gFl)"
				e.Suggest = ""
			}
			return err
		}
		if _, ok := t["J"]; ok {
			j, err := p.angmom(t, "J", key, "rotational")
			if err != nil {
				return err
			}
			jj[i], hasJ[i] = j, true
		}
		if _, err := p.str(t, "label", "", false, key); err != nil {
			return err
		}
	}
	v := raw["components"]
	ct, ok := v.(map[string]any)
	if !ok {
		return p.err("components", "a table with the key table (and optional spins)", "must be a table, got %s", typeName(v))
	}
	if err := p.checkKeys("components", ct, componentsKeys); err != nil {
		return err
	}
	var spins []float64
	if sv, ok := ct["spins"]; ok {
		list, isL := sv.([]any)
		if !isL || len(list) == 0 || len(list) > 2 {
			return p.err("components.spins", "one or two spins, e.g. [\"3/2\", \"1/2\"]", "must be an array of one or two angular momenta")
		}
		for i, x := range list {
			I, err := p.angmom(map[string]any{"I": x}, "I", "components.spins", "spin")
			if err != nil {
				e := err.(*Error)
				e.Key = fmt.Sprintf("components.spins[%d]", i)
				e.Line = p.pos.Line("components.spins")
				return e
			}
			spins = append(spins, I)
		}
	}
	text, err := p.str(ct, "table", "", true, "components")
	if err != nil {
		return err
	}
	first := p.tableFirstLine(data)
	rows, lineOf, hasA, err := p.tableRows(text, first, len(spins) == 2)
	if err != nil {
		return err
	}
	rowErr := func(i int, col, format string, a ...any) *Error {
		e := p.err("components.table", "", format, a...)
		if i >= 0 && i < len(lineOf) {
			e.Line = lineOf[i]
			e.Msg = fmt.Sprintf("row %d, column %s: %s", i+1, col, e.Msg)
		}
		return e
	}
	// F labels against J and the spins, where they are given.
	for i, r := range rows {
		for k, lv := range []struct {
			f, f1 float64
			cf    string
			cf1   string
		}{{r.Fu, r.F1u, "Fu", "F1u"}, {r.Fl, r.F1l, "Fl", "F1l"}} {
			if !hasJ[k] || len(spins) == 0 {
				continue
			}
			if len(spins) == 1 {
				if al := couple(jj[k], spins[0]); !containsHalf(al, lv.f) {
					e := rowErr(i, lv.cf, "unknown F = %s: J = %s with I = %s allows none such", half(lv.f), half(jj[k]), half(spins[0]))
					e.Allowed = halves(al)
					return e
				}
				continue
			}
			if al := couple(jj[k], spins[0]); !containsHalf(al, lv.f1) {
				e := rowErr(i, lv.cf1, "unknown F1 = %s: J = %s with I1 = %s allows none such", half(lv.f1), half(jj[k]), half(spins[0]))
				e.Allowed = halves(al)
				return e
			}
			if al := couple(lv.f1, spins[1]); !containsHalf(al, lv.f) {
				e := rowErr(i, lv.cf, "unknown F = %s: F1 = %s with I2 = %s allows none such (triangle rule)", half(lv.f), half(lv.f1), half(spins[1]))
				e.Allowed = halves(al)
				return e
			}
		}
	}
	up, lo, lines, notes, err := levels.TableFromComponents(rows, hasA)
	if err != nil {
		var re *levels.RowError
		if errors.As(err, &re) {
			col := re.Column
			if col == "strength" && hasA {
				col = "A"
			}
			return rowErr(re.Row, col, "%s", re.Msg)
		}
		return err
	}
	sp.Upper = levels.Level{J: jj[0], Magneton: sp.Magneton, Table: up}
	sp.Lower = levels.Level{J: jj[1], Magneton: sp.Magneton, Table: lo}
	for _, I := range spins {
		s := levels.Spin{I: I}
		sp.Upper.Spins = append(sp.Upper.Spins, s)
		sp.Lower.Spins = append(sp.Lower.Spins, s)
	}
	sp.TableLines = lines
	sp.Notes = append(sp.Notes, notes...)
	if sp.EinsteinA == 0 {
		if !hasA {
			return p.err("einstein_a", "> 0 s^-1 (required unless the table has an A column)", "missing")
		}
		// The (2F+1)-weighted mean total decay rate of the upper F levels.
		tot := make([]float64, len(up))
		for i, ln := range lines {
			tot[ln.Upper] += rows[i].Strength
		}
		num, den := 0.0, 0.0
		for k, x := range up {
			num += (2*x.F + 1) * tot[k]
			den += 2*x.F + 1
		}
		sp.EinsteinA = num / den
		sp.Notes = append(sp.Notes, fmt.Sprintf("Einstein A %.4g s^-1: (2F+1)-weighted mean of the summed component A of each upper F level", sp.EinsteinA))
	}
	if err := sp.Validate(); err != nil {
		return p.err("components.table", "", "%v", err)
	}
	return nil
}

// tableFirstLine returns the file line of the first text line of
// components.table (a multi-line string starts on the next line when """
// ends its line).
func (p *parser) tableFirstLine(data []byte) int {
	l := p.pos.Line("components.table")
	if l <= 0 {
		return 0
	}
	lines := strings.Split(string(data), "\n")
	if l-1 < len(lines) {
		s := lines[l-1]
		for _, q := range []string{`"""`, `'''`} {
			if i := strings.Index(s, q); i >= 0 && strings.TrimSpace(s[i+3:]) == "" {
				return l + 1
			}
		}
	}
	return l
}

// tableRows reads the rows of the table text. first is the file line of
// its first line (0 if unknown).
func (p *parser) tableRows(text string, first int, twoSpins bool) (rows []levels.ComponentRow, lineOf []int, hasA bool, err error) {
	lineNo := func(k int) int {
		if first <= 0 {
			return 0
		}
		return first + k
	}
	errAt := func(k int, format string, a ...any) *Error {
		e := p.err("components.table", "", format, a...)
		e.Line = lineNo(k)
		return e
	}
	var cols []string
	colIdx := map[string]int{}
	offUnit := ""
	for k, ln := range strings.Split(text, "\n") {
		s := strings.TrimSpace(ln)
		if s == "" || strings.HasPrefix(s, "#") {
			continue
		}
		fields := strings.Fields(s)
		if cols == nil {
			cols = fields
			for c, name := range cols {
				if u, ok := strings.CutPrefix(name, "offset_"); ok {
					if _, err := units.Parse("1 "+u, units.Frequency); err != nil {
						e := errAt(k, "column %q: unknown frequency unit %q", name, u)
						e.Allowed = "offset_<unit> with a unit of " + units.Allowed(units.Frequency)
						return nil, nil, false, e
					}
					offUnit = u
					name = "offset"
				} else if !slices.Contains(tableColumns, name) {
					e := errAt(k, "unknown column %q", name)
					e.Allowed = strings.Join(tableColumns, ", ")
					e.Suggest = tomlpos.Closest(name, tableColumns)
					return nil, nil, false, e
				}
				if _, dup := colIdx[name]; dup {
					return nil, nil, false, errAt(k, "column %q appears twice", name)
				}
				colIdx[name] = c
			}
			need := []string{"Fu", "Fl", "offset", "gFu", "gFl"}
			if twoSpins {
				need = append(need, "F1u", "F1l")
			}
			for _, n := range need {
				if _, ok := colIdx[n]; !ok {
					what := "missing column " + n
					if n == "gFu" || n == "gFl" {
						what += ": the g_F of every F level is needed for its Zeeman splitting"
					}
					if n == "offset" {
						n = "offset_<unit>"
					}
					e := errAt(k, "%s", what)
					e.Allowed = "header with " + strings.Join(need, ", ") + " and strength or A"
					return nil, nil, false, e
				}
			}
			_, hs := colIdx["strength"]
			_, hasA = colIdx["A"]
			if hs == hasA {
				e := errAt(k, "give exactly one of the columns strength and A")
				e.Allowed = "strength (relative) or A (s^-1)"
				return nil, nil, false, e
			}
			continue
		}
		i := len(rows)
		if len(fields) != len(cols) {
			return nil, nil, false, errAt(k, "row %d has %d cells, the header %d", i+1, len(fields), len(cols))
		}
		var r levels.ComponentRow
		cell := func(name string, angmom bool, dst *float64) error {
			c, ok := colIdx[name]
			if !ok {
				return nil
			}
			s := fields[c]
			col := cols[c]
			if s == "-" || s == "" {
				return errAt(k, "row %d, column %s: missing value", i+1, col)
			}
			if angmom {
				n, d, isFrac := strings.Cut(s, "/")
				a, e1 := strconv.ParseFloat(n, 64)
				b := 1.0
				var e2 error
				if isFrac {
					b, e2 = strconv.ParseFloat(d, 64)
				}
				if e1 != nil || e2 != nil || b == 0 {
					e := errAt(k, "row %d, column %s: cannot read %q as an angular momentum", i+1, col, s)
					e.Allowed = "0, 1/2, 1, 3/2, ..."
					return e
				}
				*dst = a / b
				return nil
			}
			x, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				e := errAt(k, "row %d, column %s: cannot read %q as a number", i+1, col, s)
				e.Allowed = "a finite number"
				return e
			}
			*dst = x
			return nil
		}
		for _, c := range []struct {
			name   string
			angmom bool
			dst    *float64
		}{{"Fu", true, &r.Fu}, {"F1u", true, &r.F1u}, {"Fl", true, &r.Fl}, {"F1l", true, &r.F1l},
			{"offset", false, &r.Offset}, {"strength", false, &r.Strength}, {"A", false, &r.Strength},
			{"gFu", false, &r.GU}, {"gFl", false, &r.GL}} {
			if err := cell(c.name, c.angmom, c.dst); err != nil {
				return nil, nil, false, err
			}
		}
		if _, ok := colIdx["F1u"]; !ok {
			r.F1u = r.Fu
		}
		if _, ok := colIdx["F1l"]; !ok {
			r.F1l = r.Fl
		}
		off, _ := units.Parse(strconv.FormatFloat(r.Offset, 'g', -1, 64)+" "+offUnit, units.Frequency)
		r.Offset = off
		rows = append(rows, r)
		lineOf = append(lineOf, lineNo(k))
	}
	if cols == nil || len(rows) == 0 {
		return nil, nil, false, p.err("components.table", "a header line and one row per component", "the table has no rows")
	}
	return rows, lineOf, hasA, nil
}

// couple lists the angular momenta of a+b, from |a-b| to a+b.
func couple(a, b float64) []float64 {
	var out []float64
	for f := math.Abs(a - b); f <= a+b+1e-9; f++ {
		out = append(out, f)
	}
	return out
}

func containsHalf(xs []float64, x float64) bool {
	for _, y := range xs {
		if math.Abs(x-y) < 1e-9 {
			return true
		}
	}
	return false
}

func halves(xs []float64) string {
	s := make([]string, len(xs))
	for i, x := range xs {
		s[i] = half(x)
	}
	return strings.Join(s, ", ")
}
