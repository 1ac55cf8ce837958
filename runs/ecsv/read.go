package ecsv

import (
	"bufio"
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"unsafe"
)

// Table is a table read from an ECSV or plain CSV file. Cells are kept as
// text; Floats and Strings convert whole columns. The cells share the
// memory of the whole file: a string kept long after the table (a name)
// is best copied with strings.Clone.
type Table struct {
	File    string
	ECSV    bool // false for a plain CSV file with a header row
	Columns []Column
	Meta    []Meta
	Rows    [][]string
	lines   []int // 1-based file line of each row, for error messages
}

// ReadFile reads the table in path.
func ReadFile(path string) (*Table, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return read(bytesString(data), path)
}

// bytesString is data as a string without a copy: data is ours and never
// written again, so the string stays immutable.
func bytesString(data []byte) string {
	if len(data) == 0 {
		return ""
	}
	return unsafe.String(&data[0], len(data))
}

// Read reads an ECSV 1.0 table, or a plain CSV/whitespace-separated table
// whose first non-comment line is a header row. name is used in errors.
func Read(r io.Reader, name string) (*Table, error) {
	data, err := io.ReadAll(r)
	if err != nil {
		return nil, fmt.Errorf("%s: %v", name, err)
	}
	return read(bytesString(data), name)
}

// maxLine is the longest line read (a bound against reading a binary file
// as one line).
const maxLine = 16 * 1024 * 1024

// nextLine splits the first line off data as bufio.ScanLines does: up to
// a newline, which is dropped with a carriage return before it; a last
// line without newline counts.
func nextLine(data string) (line, rest string) {
	i := strings.IndexByte(data, '\n')
	if i < 0 {
		line, rest = data, ""
	} else {
		line, rest = data[:i], data[i+1:]
	}
	return strings.TrimSuffix(line, "\r"), rest
}

// read reads the table in data. The whole file is one string: lines and
// cells are slices of it, and the cells of all rows share one backing
// array, so a table costs a few allocations rather than two per row
// (reading the spectra of a study's figures allocated as much as
// drawing them).
func read(data, name string) (*Table, error) {
	t := &Table{File: name}
	var header []string // comment lines with "# " removed
	nl := strings.Count(data, "\n") + 1
	body := make([]string, 0, nl)
	bodyLines := make([]int, 0, nl)
	line := 0
	for rest := data; rest != ""; {
		var s string
		s, rest = nextLine(rest)
		if len(s) > maxLine {
			return nil, fmt.Errorf("%s: %v", name, bufio.ErrTooLong)
		}
		line++
		s = strings.TrimRight(s, "\r")
		if line == 1 {
			s = strings.TrimPrefix(s, "\ufeff")
		}
		if strings.HasPrefix(s, "#") {
			if len(body) == 0 {
				header = append(header, strings.TrimPrefix(strings.TrimPrefix(s, "#"), " "))
			}
			continue
		}
		if strings.TrimSpace(s) == "" {
			continue
		}
		body = append(body, s)
		bodyLines = append(bodyLines, line)
	}
	delim := byte(0)
	if len(header) > 0 && strings.HasPrefix(strings.TrimSpace(header[0]), "%ECSV") {
		t.ECSV = true
		d, err := t.parseHeader(header)
		if err != nil {
			return nil, err
		}
		delim = d
	}
	if len(body) == 0 {
		return nil, fmt.Errorf("%s: no header row", name)
	}
	if delim == 0 {
		switch {
		case strings.Contains(body[0], ","):
			delim = ','
		case strings.Contains(body[0], "\t"):
			delim = '\t'
		default:
			delim = ' '
		}
	}
	split := func(s string, ln int) ([]string, error) {
		if !strings.Contains(s, `"`) { // no quoting: split directly
			if delim == ' ' {
				return strings.Fields(s), nil
			}
			return strings.Split(s, string(delim)), nil
		}
		cr := csv.NewReader(strings.NewReader(s))
		cr.Comma = rune(delim)
		cr.FieldsPerRecord = -1
		cr.LazyQuotes = false
		rec, err := cr.Read()
		if err != nil {
			return nil, fmt.Errorf("%s:%d: %v", name, ln, err)
		}
		if delim == ' ' { // repeated blanks separate, not empty cells
			out := rec[:0]
			for _, f := range rec {
				if f != "" {
					out = append(out, f)
				}
			}
			rec = out
		}
		return rec, nil
	}
	names, err := split(body[0], bodyLines[0])
	if err != nil {
		return nil, err
	}
	if t.ECSV {
		if len(names) != len(t.Columns) {
			return nil, fmt.Errorf("%s:%d: header row has %d names, the ECSV header declares %d columns", name, bodyLines[0], len(names), len(t.Columns))
		}
		for i, n := range names {
			if strings.TrimSpace(n) != t.Columns[i].Name {
				return nil, fmt.Errorf("%s:%d: column %d is %q in the header row but %q in the ECSV header", name, bodyLines[0], i+1, n, t.Columns[i].Name)
			}
		}
	} else {
		seen := map[string]bool{}
		for _, n := range names {
			c := plainColumn(strings.TrimSpace(n))
			if c.Name == "" || seen[c.Name] {
				return nil, fmt.Errorf("%s:%d: empty or repeated column name %q", name, bodyLines[0], n)
			}
			seen[c.Name] = true
			t.Columns = append(t.Columns, c)
		}
	}
	ncol := len(t.Columns)
	t.Rows = make([][]string, 0, len(body)-1)
	t.lines = make([]int, 0, len(body)-1)
	var cells []string // backing array of the rows split in place
	for i, s := range body[1:] {
		ln := bodyLines[i+1]
		var rec []string
		if delim != ' ' && !strings.Contains(s, `"`) {
			// As strings.Split, into the shared backing array.
			if n := strings.Count(s, string(delim)) + 1; n != ncol {
				return nil, fmt.Errorf("%s:%d: row has %d values, expected %d", name, ln, n, ncol)
			}
			if cap(cells)-len(cells) < ncol {
				cells = make([]string, 0, ncol*(len(body)-1-i))
			}
			k := len(cells)
			for j := 1; j < ncol; j++ {
				c := strings.IndexByte(s, delim)
				cells = append(cells, s[:c])
				s = s[c+1:]
			}
			cells = append(cells, s)
			rec = cells[k:len(cells):len(cells)]
		} else {
			var err error
			if rec, err = split(s, ln); err != nil {
				return nil, err
			}
		}
		if len(rec) != ncol {
			return nil, fmt.Errorf("%s:%d: row has %d values, expected %d", name, ln, len(rec), ncol)
		}
		t.Rows = append(t.Rows, rec)
		t.lines = append(t.lines, ln)
	}
	if !t.ECSV {
		t.inferTypes()
	}
	return t, nil
}

// plainColumn splits a header cell such as "velocity [km/s]" or
// "flux (Jy)" into name and unit.
func plainColumn(cell string) Column {
	c := Column{Name: cell, Datatype: String}
	for _, p := range [][2]string{{"[", "]"}, {"(", ")"}} {
		if strings.HasSuffix(cell, p[1]) {
			if i := strings.LastIndex(cell, p[0]); i > 0 {
				c.Name = strings.TrimSpace(cell[:i])
				c.Unit = strings.TrimSpace(cell[i+1 : len(cell)-1])
				break
			}
		}
	}
	return c
}

func (t *Table) inferTypes() {
	for j := range t.Columns {
		isFloat, isInt := true, true
		for _, r := range t.Rows {
			v := strings.TrimSpace(r[j])
			if v == "" {
				continue
			}
			if _, err := strconv.ParseInt(v, 10, 64); err != nil {
				isInt = false
			}
			if _, err := parseFloat(v); err != nil {
				isFloat = false
			}
		}
		switch {
		case len(t.Rows) == 0:
		case isInt:
			t.Columns[j].Datatype = Int64
		case isFloat:
			t.Columns[j].Datatype = Float64
		}
	}
}

func parseFloat(v string) (float64, error) {
	switch strings.ToLower(v) {
	case "nan":
		return math.NaN(), nil
	case "inf", "+inf":
		return math.Inf(1), nil
	case "-inf":
		return math.Inf(-1), nil
	}
	return strconv.ParseFloat(v, 64)
}

// Index returns the position of the named column, or -1.
func (t *Table) Index(name string) int {
	for i, c := range t.Columns {
		if c.Name == name {
			return i
		}
	}
	return -1
}

// Column returns the named column's description.
func (t *Table) Column(name string) (Column, bool) {
	if i := t.Index(name); i >= 0 {
		return t.Columns[i], true
	}
	return Column{}, false
}

// MetaValue returns the value of a metadata key.
func (t *Table) MetaValue(key string) (string, bool) {
	for _, m := range t.Meta {
		if m.Key == key {
			return m.Value, true
		}
	}
	return "", false
}

// Floats returns a numeric column; empty cells read as NaN.
func (t *Table) Floats(name string) ([]float64, error) {
	j := t.Index(name)
	if j < 0 {
		return nil, fmt.Errorf("%s: no column %q (columns: %s)", t.File, name, t.names())
	}
	out := make([]float64, len(t.Rows))
	for i, r := range t.Rows {
		v := strings.TrimSpace(r[j])
		if v == "" {
			out[i] = math.NaN()
			continue
		}
		x, err := parseFloat(v)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: column %s: %q is not a number", t.File, t.lines[i], name, v)
		}
		out[i] = x
	}
	return out, nil
}

// Bools returns a Bool column (True/False, also true/false/1/0).
func (t *Table) Bools(name string) ([]bool, error) {
	j := t.Index(name)
	if j < 0 {
		return nil, fmt.Errorf("%s: no column %q (columns: %s)", t.File, name, t.names())
	}
	out := make([]bool, len(t.Rows))
	for i, r := range t.Rows {
		switch strings.ToLower(strings.TrimSpace(r[j])) {
		case "true", "1":
			out[i] = true
		case "false", "0":
		default:
			return nil, fmt.Errorf("%s:%d: column %s: %q is not True or False", t.File, t.lines[i], name, r[j])
		}
	}
	return out, nil
}

// Strings returns a column as text.
func (t *Table) Strings(name string) ([]string, error) {
	j := t.Index(name)
	if j < 0 {
		return nil, fmt.Errorf("%s: no column %q (columns: %s)", t.File, name, t.names())
	}
	out := make([]string, len(t.Rows))
	for i, r := range t.Rows {
		out[i] = r[j]
	}
	return out, nil
}

func (t *Table) names() string {
	n := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		n[i] = c.Name
	}
	return strings.Join(n, ", ")
}

// parseHeader reads the YAML subset that ECSV writers produce: top-level
// scalars (delimiter, schema), the datatype list in flow or block style,
// and meta as an omap or a flat mapping. Nested meta values are kept as
// their raw text.
func (t *Table) parseHeader(h []string) (byte, error) {
	delim := byte(' ')
	errf := func(i int, f string, a ...any) error {
		return fmt.Errorf("%s:%d: ECSV header: %s", t.File, i+1, fmt.Sprintf(f, a...))
	}
	section := ""
	var cur map[string]string // block-style datatype item being read
	flush := func() {
		if cur != nil {
			t.Columns = append(t.Columns, columnFrom(cur))
			cur = nil
		}
	}
	for i := 1; i < len(h); i++ {
		s := h[i]
		if strings.TrimSpace(s) == "---" || strings.TrimSpace(s) == "" {
			continue
		}
		indent := len(s) - len(strings.TrimLeft(s, " "))
		ts := strings.TrimSpace(s)
		if indent == 0 && !strings.HasPrefix(ts, "- ") {
			flush()
			k, v, ok := strings.Cut(ts, ":")
			if !ok {
				return 0, errf(i, "expected key: value, got %q", ts)
			}
			section = strings.TrimSpace(k)
			v = strings.TrimSpace(v)
			switch section {
			case "delimiter":
				d, err := unquote(v)
				if err != nil || len(d) != 1 {
					return 0, errf(i, "bad delimiter %q", v)
				}
				delim = d[0]
			case "meta":
				if strings.HasPrefix(v, "{") {
					m, err := parseFlow(v)
					if err != nil {
						return 0, errf(i, "%v", err)
					}
					t.Meta = append(t.Meta, m...)
				}
			}
			continue
		}
		switch section {
		case "datatype":
			if strings.HasPrefix(ts, "- ") {
				flush()
				item := strings.TrimSpace(ts[2:])
				if strings.HasPrefix(item, "{") {
					m, err := parseFlow(item)
					if err != nil {
						return 0, errf(i, "%v", err)
					}
					cur = map[string]string{}
					for _, kv := range m {
						cur[kv.Key] = kv.Value
					}
					flush()
					continue
				}
				cur = map[string]string{}
				ts = item
			}
			if cur == nil {
				return 0, errf(i, "unexpected %q", ts)
			}
			k, v, ok := strings.Cut(ts, ":")
			if !ok {
				return 0, errf(i, "expected key: value, got %q", ts)
			}
			uv, err := unquote(strings.TrimSpace(v))
			if err != nil {
				return 0, errf(i, "%v", err)
			}
			cur[strings.TrimSpace(k)] = uv
		case "meta":
			if strings.HasPrefix(ts, "- {") {
				m, err := parseFlow(strings.TrimSpace(ts[2:]))
				if err != nil {
					return 0, errf(i, "%v", err)
				}
				t.Meta = append(t.Meta, m...)
			} else if indent > 0 && !strings.HasPrefix(ts, "- ") {
				if k, v, ok := strings.Cut(ts, ":"); ok && indent <= 2 {
					uv, err := unquote(strings.TrimSpace(v))
					if err != nil {
						uv = strings.TrimSpace(v)
					}
					t.Meta = append(t.Meta, Meta{strings.TrimSpace(k), uv})
				}
			}
		}
	}
	flush()
	if len(t.Columns) == 0 {
		return 0, fmt.Errorf("%s: ECSV header declares no columns", t.File)
	}
	for _, c := range t.Columns {
		if c.Name == "" {
			return 0, fmt.Errorf("%s: ECSV header has a column without a name", t.File)
		}
	}
	return delim, nil
}

func columnFrom(m map[string]string) Column {
	c := Column{Name: m["name"], Unit: m["unit"], Datatype: m["datatype"], Description: m["description"]}
	if c.Datatype == "" {
		c.Datatype = String
	}
	return c
}

// parseFlow parses a one-line YAML flow mapping {k: v, k: "v", ...}.
func parseFlow(s string) ([]Meta, error) {
	s = strings.TrimSpace(s)
	if !strings.HasPrefix(s, "{") || !strings.HasSuffix(s, "}") {
		return nil, fmt.Errorf("bad flow mapping %q", s)
	}
	s = s[1 : len(s)-1]
	var out []Meta
	for len(strings.TrimSpace(s)) > 0 {
		k, rest, err := flowToken(s, ':')
		if err != nil {
			return nil, err
		}
		v, rest2, err := flowToken(rest, ',')
		if err != nil {
			return nil, err
		}
		out = append(out, Meta{k, v})
		s = rest2
	}
	return out, nil
}

// flowToken reads a scalar up to the unquoted stop byte and returns it and
// the rest after the stop byte.
func flowToken(s string, stop byte) (string, string, error) {
	s = strings.TrimLeft(s, " ")
	if len(s) > 0 && (s[0] == '"' || s[0] == '\'') {
		q := s[0]
		i := 1
		for ; i < len(s); i++ {
			if s[i] == '\\' && q == '"' {
				i++
				continue
			}
			if s[i] == q {
				if q == '\'' && i+1 < len(s) && s[i+1] == '\'' {
					i++
					continue
				}
				break
			}
		}
		if i >= len(s) {
			return "", "", fmt.Errorf("unterminated quote in %q", s)
		}
		v, err := unquote(s[:i+1])
		if err != nil {
			return "", "", err
		}
		rest := strings.TrimLeft(s[i+1:], " ")
		if len(rest) > 0 {
			if rest[0] != stop {
				return "", "", fmt.Errorf("expected %q after %s", stop, s[:i+1])
			}
			rest = rest[1:]
		}
		return v, rest, nil
	}
	depth := 0
	for i := 0; i < len(s); i++ {
		switch s[i] {
		case '{', '[':
			depth++
		case '}', ']':
			depth--
		}
		// ": " separates keys in YAML; a bare ':' inside a value (a URL) does not.
		if depth == 0 && s[i] == stop && (stop != ':' || i+1 == len(s) || s[i+1] == ' ') {
			return strings.TrimSpace(s[:i]), s[i+1:], nil
		}
	}
	return strings.TrimSpace(s), "", nil
}

// unquote removes YAML single or double quotes.
func unquote(v string) (string, error) {
	if len(v) >= 2 && v[0] == '"' && v[len(v)-1] == '"' {
		var b bytes.Buffer
		in := v[1 : len(v)-1]
		for i := 0; i < len(in); i++ {
			c := in[i]
			if c != '\\' {
				b.WriteByte(c)
				continue
			}
			i++
			if i >= len(in) {
				return "", fmt.Errorf("bad escape in %s", v)
			}
			switch in[i] {
			case 'n':
				b.WriteByte('\n')
			case 't':
				b.WriteByte('\t')
			case '"', '\\', '/':
				b.WriteByte(in[i])
			default:
				b.WriteByte('\\')
				b.WriteByte(in[i])
			}
		}
		return b.String(), nil
	}
	if len(v) >= 2 && v[0] == '\'' && v[len(v)-1] == '\'' {
		return strings.ReplaceAll(v[1:len(v)-1], "''", "'"), nil
	}
	return v, nil
}
