package ecsv

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Datatypes accepted in a Column. They are the ECSV 1.0 names.
const (
	Float64 = "float64"
	Int64   = "int64"
	Bool    = "bool"
	String  = "string"
)

// Column describes one column of a table.
type Column struct {
	Name        string
	Unit        string // astropy unit string; empty for dimensionless
	Datatype    string // Float64, Int64, Bool or String
	Description string
}

// Meta is one item of table metadata; order is kept.
type Meta struct {
	Key, Value string
}

// Writer writes an ECSV table row by row. The header is written by the
// first call to Write (or by Flush for an empty table).
type Writer struct {
	w      *bufio.Writer
	cols   []Column
	meta   []Meta
	header bool
	buf    []byte
	ncell  int // cells of the row being built by Float, Int, ...
	plain  bool
	digits int // significant digits of Float; 0 = shortest exact form
	err    error
}

// NewWriter returns a Writer for the given columns and metadata. It panics
// on an unknown datatype or an empty or repeated column name: column sets
// are chosen by the program, not by users.
func NewWriter(w io.Writer, cols []Column, meta []Meta) *Writer {
	return newWriter(bufio.NewWriter(w), cols, meta)
}

func newWriter(w *bufio.Writer, cols []Column, meta []Meta) *Writer {
	seen := map[string]bool{}
	for _, c := range cols {
		switch c.Datatype {
		case Float64, Int64, Bool, String:
		default:
			panic("ecsv: column " + c.Name + ": unknown datatype " + strconv.Quote(c.Datatype))
		}
		if c.Name == "" || seen[c.Name] {
			panic("ecsv: empty or repeated column name " + strconv.Quote(c.Name))
		}
		seen[c.Name] = true
	}
	return &Writer{w: w, cols: cols, meta: meta}
}

// BufferSize is the buffer of NewWriterSize for large tables: 64 KiB, so
// that a spectra table or a summary reaches the file in few system calls
// (bufio's default is 4 KiB).
const BufferSize = 64 << 10

// NewWriterSize is NewWriter with a buffer of size bytes (BufferSize for
// large tables). If w is already a *bufio.Writer at least that large, it
// is used as is.
func NewWriterSize(w io.Writer, size int, cols []Column, meta []Meta) *Writer {
	return newWriter(bufio.NewWriterSize(w, size), cols, meta)
}

// NewPlainWriter returns a Writer of plain CSV: a header row of column
// names and the rows, formatted as in ECSV (booleans True and False), with
// no units, descriptions or metadata. It is the export for readers that do
// not know ECSV; the program writes it only when asked for a .csv file.
func NewPlainWriter(w io.Writer, cols []Column) *Writer {
	wr := NewWriter(w, cols, nil)
	wr.plain = true
	return wr
}

func (w *Writer) writeHeader() {
	w.header = true
	b := w.w
	if w.plain {
		w.writeNames()
		return
	}
	b.WriteString("# %ECSV 1.0\n# ---\n# delimiter: ','\n# datatype:\n")
	for _, c := range w.cols {
		b.WriteString("# - {name: ")
		b.WriteString(yamlScalar(c.Name))
		if c.Unit != "" {
			b.WriteString(", unit: ")
			b.WriteString(yamlScalar(c.Unit))
		}
		b.WriteString(", datatype: ")
		b.WriteString(c.Datatype)
		if c.Description != "" {
			b.WriteString(", description: ")
			b.WriteString(yamlQuote(c.Description))
		}
		b.WriteString("}\n")
	}
	if len(w.meta) > 0 {
		b.WriteString("# meta: !!omap\n")
		for _, m := range w.meta {
			b.WriteString("# - {")
			b.WriteString(yamlScalar(m.Key))
			b.WriteString(": ")
			b.WriteString(yamlQuote(m.Value))
			b.WriteString("}\n")
		}
	}
	b.WriteString("# schema: astropy-2.0\n")
	w.writeNames()
}

// writeNames writes the row of column names.
func (w *Writer) writeNames() {
	b := w.w
	for i, c := range w.cols {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(csvField(c.Name))
	}
	b.WriteByte('\n')
}

// Write writes one row. Values must match the column datatypes: float64
// (or float32) for Float64, any integer type for Int64, bool for Bool and
// string for String.
func (w *Writer) Write(values ...any) error {
	if w.err != nil {
		return w.err
	}
	if len(values) != len(w.cols) {
		w.err = fmt.Errorf("ecsv: row has %d values for %d columns", len(values), len(w.cols))
		return w.err
	}
	if !w.header {
		w.writeHeader()
	}
	w.buf = w.buf[:0]
	for i, v := range values {
		if i > 0 {
			w.buf = append(w.buf, ',')
		}
		var err error
		w.buf, err = appendValue(w.buf, w.cols[i], v)
		if err != nil {
			w.err = err
			return err
		}
	}
	w.buf = append(w.buf, '\n')
	_, w.err = w.w.Write(w.buf)
	return w.err
}

// Flush writes the header if no row was written and flushes the buffer.
func (w *Writer) Flush() error {
	if w.err != nil {
		return w.err
	}
	if !w.header {
		w.writeHeader()
	}
	w.err = w.w.Flush()
	return w.err
}

func appendValue(b []byte, c Column, v any) ([]byte, error) {
	bad := func() ([]byte, error) {
		return b, fmt.Errorf("ecsv: column %s (%s): cannot write %T", c.Name, c.Datatype, v)
	}
	switch c.Datatype {
	case Float64:
		var x float64
		switch t := v.(type) {
		case float64:
			x = t
		case float32:
			x = float64(t)
		default:
			return bad()
		}
		return AppendFloat(b, x), nil
	case Int64:
		switch t := v.(type) {
		case int:
			return strconv.AppendInt(b, int64(t), 10), nil
		case int64:
			return strconv.AppendInt(b, t, 10), nil
		case int32:
			return strconv.AppendInt(b, int64(t), 10), nil
		case uint64:
			return strconv.AppendUint(b, t, 10), nil
		}
		return bad()
	case Bool:
		t, ok := v.(bool)
		if !ok {
			return bad()
		}
		if t {
			return append(b, "True"...), nil
		}
		return append(b, "False"...), nil
	case String:
		t, ok := v.(string)
		if !ok {
			return bad()
		}
		return append(b, csvField(t)...), nil
	}
	return bad()
}

// AppendFloat appends the shortest round-trip form of x; NaN and the
// infinities are written as nan, inf and -inf, which numpy and astropy read.
func AppendFloat(b []byte, x float64) []byte {
	switch {
	case math.IsNaN(x):
		return append(b, "nan"...)
	case math.IsInf(x, 1):
		return append(b, "inf"...)
	case math.IsInf(x, -1):
		return append(b, "-inf"...)
	}
	return strconv.AppendFloat(b, x, 'g', -1, 64)
}

// csvField quotes s as CSV requires (RFC 4180) when it holds the delimiter,
// a quote, a newline, leading or trailing space, or is empty (an empty
// unquoted field would read as a missing value).
func csvField(s string) string {
	if s != "" && !strings.ContainsAny(s, ",\"\n\r") && strings.TrimSpace(s) == s && s[0] != '#' {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

// yamlScalar writes s plain when YAML would read it back unchanged as a
// string inside a flow mapping, else double-quoted.
func yamlScalar(s string) string {
	if s == "" || strings.ContainsAny(s, ",:{}[]#&*!|>'\"%@`\\\n\t") || strings.TrimSpace(s) != s || s[0] == '-' || s[0] == '?' {
		return yamlQuote(s)
	}
	switch strings.ToLower(s) {
	case "true", "false", "yes", "no", "on", "off", "null", "~":
		return yamlQuote(s)
	}
	if _, err := strconv.ParseFloat(s, 64); err == nil {
		return yamlQuote(s)
	}
	return s
}

// yamlQuote writes s as a YAML double-quoted scalar.
func yamlQuote(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch r {
		case '"':
			b.WriteString(`\"`)
		case '\\':
			b.WriteString(`\\`)
		case '\n':
			b.WriteString(`\n`)
		case '\t':
			b.WriteString(`\t`)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('"')
	return b.String()
}

// WriteCells writes one row of cells already in text form, as Table.Rows
// holds them; String cells are quoted as needed, others written as is.
// It is how tables are concatenated without reformatting numbers.
func (w *Writer) WriteCells(cells []string) error {
	if w.err != nil {
		return w.err
	}
	if len(cells) != len(w.cols) {
		w.err = fmt.Errorf("ecsv: row has %d cells for %d columns", len(cells), len(w.cols))
		return w.err
	}
	if !w.header {
		w.writeHeader()
	}
	w.buf = w.buf[:0]
	for i, c := range cells {
		if i > 0 {
			w.buf = append(w.buf, ',')
		}
		if w.cols[i].Datatype == String {
			w.buf = append(w.buf, csvField(c)...)
		} else {
			if strings.ContainsAny(c, ",\"\n") {
				w.err = fmt.Errorf("ecsv: column %s: bad cell %q", w.cols[i].Name, c)
				return w.err
			}
			w.buf = append(w.buf, c...)
		}
	}
	w.buf = append(w.buf, '\n')
	_, w.err = w.w.Write(w.buf)
	return w.err
}

// Float, Int, Bool and String append one cell to the current row without
// allocating; End writes the row. They are the fast path for large tables
// (Write boxes every value). A cell of the wrong datatype or count is
// reported by End.
func (w *Writer) Float(x float64) *Writer {
	if w.cell(Float64) {
		w.buf = w.AppendFloatCell(w.buf, x)
	}
	return w
}

// AppendFloatCell appends x to dst as Float writes it (with the digits
// of SetDigits), for FloatText: a value repeated on many rows (a
// checkpoint's saturation, a channel's velocity) is then formatted once.
func (w *Writer) AppendFloatCell(dst []byte, x float64) []byte {
	if w.digits > 0 && !math.IsNaN(x) && !math.IsInf(x, 0) {
		return strconv.AppendFloat(dst, x, 'g', w.digits, 64)
	}
	return AppendFloat(dst, x)
}

// FloatText appends a Float64 cell formatted by AppendFloatCell.
func (w *Writer) FloatText(b []byte) *Writer {
	if w.cell(Float64) {
		w.buf = append(w.buf, b...)
	}
	return w
}

// SetDigits makes Float write n significant digits (0: the shortest form
// that reads back exactly, the default). Large tables of model spectra
// use 7: far below any measurement's precision, and half the bytes.
func (w *Writer) SetDigits(n int) *Writer {
	w.digits = n
	return w
}

// Int appends an Int64 cell.
func (w *Writer) Int(x int) *Writer {
	if w.cell(Int64) {
		w.buf = strconv.AppendInt(w.buf, int64(x), 10)
	}
	return w
}

// Bool appends a Bool cell.
func (w *Writer) Bool(x bool) *Writer {
	if w.cell(Bool) {
		if x {
			w.buf = append(w.buf, "True"...)
		} else {
			w.buf = append(w.buf, "False"...)
		}
	}
	return w
}

// String appends a String cell.
func (w *Writer) String(x string) *Writer {
	if w.cell(String) {
		w.buf = append(w.buf, csvField(x)...)
	}
	return w
}

func (w *Writer) cell(dt string) bool {
	if w.err != nil {
		return false
	}
	if w.ncell == 0 {
		w.buf = w.buf[:0]
	} else {
		w.buf = append(w.buf, ',')
	}
	if w.ncell >= len(w.cols) {
		w.err = fmt.Errorf("ecsv: row has more than %d cells", len(w.cols))
		return false
	}
	if c := w.cols[w.ncell]; c.Datatype != dt {
		w.err = fmt.Errorf("ecsv: column %s (%s): cannot write a %s cell", c.Name, c.Datatype, dt)
		return false
	}
	w.ncell++
	return true
}

// End writes the row built by Float, Int, Bool and String.
func (w *Writer) End() error {
	if w.err != nil {
		return w.err
	}
	if w.ncell != len(w.cols) {
		w.err = fmt.Errorf("ecsv: row has %d cells for %d columns", w.ncell, len(w.cols))
		return w.err
	}
	w.ncell = 0
	if !w.header {
		w.writeHeader()
	}
	w.buf = append(w.buf, '\n')
	_, w.err = w.w.Write(w.buf)
	return w.err
}
