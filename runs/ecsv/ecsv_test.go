package ecsv

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
)

func TestRoundTrip(t *testing.T) {
	cols := []Column{
		{Name: "model", Datatype: String, Description: "model name"},
		{Name: "checkpoint", Datatype: Int64, Description: "checkpoint index, 0 first"},
		{Name: "velocity_kms", Unit: "km / s", Datatype: Float64, Description: "channel velocity: LSR, radio"},
		{Name: "valid", Datatype: Bool, Description: `R/(g Omega) <= 0.1, "populations only"`},
	}
	meta := []Meta{{"program", "maserpol 0.1.0"}, {"config_hash", "ab12"}}
	rows := [][]any{
		{"m0000", 0, 0.1, true},
		{"a, b", 1, -1.0 / 3, false},
		{`say "hi"`, 2, math.NaN(), true},
		{"", 3, 1e-300, false},
	}
	var buf bytes.Buffer
	w := NewWriter(&buf, cols, meta)
	for _, r := range rows {
		if err := w.Write(r...); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	first := buf.String()
	if !strings.HasPrefix(first, "# %ECSV 1.0\n# ---\n") {
		t.Fatalf("missing ECSV preamble:\n%s", first)
	}
	tab, err := Read(strings.NewReader(first), "x.ecsv")
	if err != nil {
		t.Fatal(err)
	}
	if !tab.ECSV || len(tab.Columns) != len(cols) {
		t.Fatalf("got %+v", tab.Columns)
	}
	for i, c := range cols {
		if tab.Columns[i] != c {
			t.Errorf("column %d: got %+v want %+v", i, tab.Columns[i], c)
		}
	}
	if len(tab.Meta) != 2 || tab.Meta[0] != meta[0] || tab.Meta[1] != meta[1] {
		t.Errorf("meta: got %+v", tab.Meta)
	}
	names, _ := tab.Strings("model")
	for i, r := range rows {
		if names[i] != r[0].(string) {
			t.Errorf("row %d: model %q want %q", i, names[i], r[0])
		}
	}
	v, err := tab.Floats("velocity_kms")
	if err != nil {
		t.Fatal(err)
	}
	if v[1] != -1.0/3 || !math.IsNaN(v[2]) || v[3] != 1e-300 {
		t.Errorf("floats do not round-trip: %v", v)
	}
	b, err := tab.Bools("valid")
	if err != nil || !b[0] || b[1] {
		t.Errorf("bools: %v %v", b, err)
	}
	// Writing what was read gives the same bytes.
	var again bytes.Buffer
	w2 := NewWriter(&again, tab.Columns, tab.Meta)
	ck, _ := tab.Floats("checkpoint")
	for i := range tab.Rows {
		w2.Write(names[i], int(ck[i]), v[i], b[i])
	}
	w2.Flush()
	if again.String() != first {
		t.Errorf("rewrite differs:\n%s\n---\n%s", first, again.String())
	}
}

func TestWriteTypeMismatch(t *testing.T) {
	w := NewWriter(&bytes.Buffer{}, []Column{{Name: "x", Datatype: Float64}}, nil)
	if err := w.Write("1"); err == nil {
		t.Error("string into float64 column accepted")
	}
	w = NewWriter(&bytes.Buffer{}, []Column{{Name: "x", Datatype: Float64}}, nil)
	if err := w.Write(1.0, 2.0); err == nil {
		t.Error("row with too many values accepted")
	}
}

// astropyBlock is a table in the layout astropy 5 writes by default
// (space delimiter, one flow mapping per column, omap meta); the layout is
// the one documented for the ECSV 1.0 standard (astropy APE 6). The
// file testdata/astropy.ecsv is written by astropy itself (script beside it).
const astropyBlock = `# %ECSV 1.0
# ---
# datatype:
# - {name: v, unit: km / s, datatype: float64, description: LSR velocity}
# - {name: flux, unit: Jy, datatype: float64}
# - name: label
#   datatype: string
#   description: 'a label: with colon'
# meta: !!omap
# - {observer: 'O''Brien'}
# - telescope: Pico Falso
# schema: astropy-2.0
v flux label
-1.5 0.25 "two words"
-1.0 0.5 one
`

func TestReadAstropyLayout(t *testing.T) {
	tab, err := Read(strings.NewReader(astropyBlock), "a.ecsv")
	if err != nil {
		t.Fatal(err)
	}
	if len(tab.Columns) != 3 || tab.Columns[0].Unit != "km / s" || tab.Columns[2].Description != "a label: with colon" {
		t.Fatalf("columns %+v", tab.Columns)
	}
	lab, _ := tab.Strings("label")
	if lab[0] != "two words" || lab[1] != "one" {
		t.Errorf("labels %q", lab)
	}
	if v, _ := tab.MetaValue("observer"); v != "O'Brien" {
		t.Errorf("meta observer %q", v)
	}
	f, _ := tab.Floats("flux")
	if f[0] != 0.25 || f[1] != 0.5 {
		t.Errorf("flux %v", f)
	}
}

func TestReadPlainCSV(t *testing.T) {
	for _, src := range []string{
		"# exported spectrum\nvelocity [km/s],I (Jy)\n-1,2\n0,3.5\n",
		"velocity [km/s]\tI (Jy)\n-1\t2\n0\t3.5\n",
	} {
		tab, err := Read(strings.NewReader(src), "obs.csv")
		if err != nil {
			t.Fatal(err)
		}
		if tab.ECSV || tab.Columns[0].Name != "velocity" || tab.Columns[0].Unit != "km/s" || tab.Columns[1].Name != "I" || tab.Columns[1].Unit != "Jy" {
			t.Fatalf("columns %+v", tab.Columns)
		}
		if tab.Columns[1].Datatype != Float64 || tab.Columns[0].Datatype != Int64 {
			t.Errorf("inferred types %+v", tab.Columns)
		}
		i, _ := tab.Floats("I")
		if i[1] != 3.5 {
			t.Errorf("I %v", i)
		}
	}
	tab, err := Read(strings.NewReader("v  I\n 1   2\n3 4\n"), "ws.txt")
	if err != nil || len(tab.Rows) != 2 || tab.Rows[0][1] != "2" {
		t.Fatalf("whitespace table: %v %+v", err, tab)
	}
}

func TestReadErrors(t *testing.T) {
	cases := map[string]string{
		"ragged":   "a,b\n1,2\n3\n",
		"empty":    "# only a comment\n",
		"mismatch": "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: float64}\nb\n1\n",
	}
	for name, src := range cases {
		if _, err := Read(strings.NewReader(src), name+".csv"); err == nil {
			t.Errorf("%s: no error", name)
		} else if !strings.Contains(err.Error(), name+".csv") {
			t.Errorf("%s: error does not name the file: %v", name, err)
		}
	}
	tab, _ := Read(strings.NewReader("a,b\n1,x\n"), "bad.csv")
	if _, err := tab.Floats("b"); err == nil || !strings.Contains(err.Error(), "bad.csv:2") {
		t.Errorf("non-number error should name file and line: %v", err)
	}
}

func ExampleWriter() {
	var buf bytes.Buffer
	w := NewWriter(&buf, []Column{
		{Name: "velocity_kms", Unit: "km / s", Datatype: Float64, Description: "channel velocity"},
		{Name: "I", Unit: "K", Datatype: Float64, Description: "Stokes I brightness temperature"},
	}, []Meta{{"source", "Hydra W4"}})
	w.Write(-0.5, 12.5)
	w.Write(0.0, 40.0)
	w.Flush()
	fmt.Print(buf.String())
	// Output:
	// # %ECSV 1.0
	// # ---
	// # delimiter: ','
	// # datatype:
	// # - {name: velocity_kms, unit: km / s, datatype: float64, description: "channel velocity"}
	// # - {name: I, unit: K, datatype: float64, description: "Stokes I brightness temperature"}
	// # meta: !!omap
	// # - {source: "Hydra W4"}
	// # schema: astropy-2.0
	// velocity_kms,I
	// -0.5,12.5
	// 0,40
}

// TestReadAstropyFiles reads tables written by astropy 5.2 itself
// (testdata/make_astropy.py), an outside implementation of ECSV 1.0.
func TestReadAstropyFiles(t *testing.T) {
	for _, f := range []string{"testdata/astropy.ecsv", "testdata/astropy_comma.ecsv"} {
		tab, err := ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		want := []Column{
			{Name: "velocity", Unit: "km / s", Datatype: Float64, Description: "LSR velocity, radio convention"},
			{Name: "I", Unit: "K", Datatype: Float64, Description: "Stokes I: brightness temperature"},
			{Name: "label", Datatype: String},
			{Name: "valid", Datatype: Bool},
			{Name: "n", Datatype: Int64},
		}
		if len(tab.Columns) != len(want) {
			t.Fatalf("%s: columns %+v", f, tab.Columns)
		}
		for i := range want {
			if tab.Columns[i] != want[i] {
				t.Errorf("%s: column %d %+v want %+v", f, i, tab.Columns[i], want[i])
			}
		}
		v, _ := tab.Floats("velocity")
		i, _ := tab.Floats("I")
		l, _ := tab.Strings("label")
		b, _ := tab.Bools("valid")
		if v[0] != -1.25 || i[2] != 1e-3 || l[1] != "peak: main" || l[2] != "two words" || b[1] {
			t.Errorf("%s: values %v %v %q %v", f, v, i, l, b)
		}
		if s, _ := tab.MetaValue("source"); s != "Hydra W4" {
			t.Errorf("%s: meta source %q", f, s)
		}
	}
}

func TestTypedRowsMatchWrite(t *testing.T) {
	cols := []Column{{Name: "k", Datatype: Int64}, {Name: "x", Datatype: Float64}, {Name: "ok", Datatype: Bool}, {Name: "s", Datatype: String}}
	var a, b bytes.Buffer
	wa, wb := NewWriter(&a, cols, nil), NewWriter(&b, cols, nil)
	wa.Write(3, 0.1, true, "a,b")
	wb.Int(3).Float(0.1).Bool(true).String("a,b").End()
	wa.Flush()
	wb.Flush()
	if a.String() != b.String() {
		t.Errorf("typed row differs:\n%s\n%s", a.String(), b.String())
	}
	if err := NewWriter(&b, cols, nil).Int(1).Int(2).End(); err == nil {
		t.Error("Int into a float64 column accepted")
	}
	if err := NewWriter(&b, cols, nil).Int(1).End(); err == nil {
		t.Error("short row accepted")
	}
	if n := testing.AllocsPerRun(100, func() { wb.Int(3).Float(0.1).Bool(true).String("s").End() }); n > 0 {
		t.Errorf("typed row allocates %g times", n)
	}
}

// TestAstropyUnitStrings reads testdata/astropy_units.ecsv, written by
// astropy 5.2 (make_astropy.py): the composite units maserpol declares
// ("K sr", "m / (G s)", "1 / G", "1 / s") are spelled as astropy spells
// them, and nan and booleans read back.
func TestAstropyUnitStrings(t *testing.T) {
	tab, err := ReadFile("testdata/astropy_units.ecsv")
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]string{"B_mG": "mG", "TbdOmega_Ksr": "K sr", "factor_ms_per_G": "m / (G s)", "pv_per_G": "1 / G", "rate": "1 / s", "valid": "", "q": ""}
	for name, u := range want {
		i := tab.Index(name)
		if i < 0 || tab.Columns[i].Unit != u {
			t.Errorf("column %s: %+v, want unit %q", name, tab.Columns, u)
		}
	}
	tb, _ := tab.Floats("TbdOmega_Ksr")
	b, _ := tab.Bools("valid")
	q, _ := tab.Floats("q")
	if tb[0] != 1.5e9 || !math.IsNaN(tb[1]) || b[0] || !b[1] || q[0] != -1 {
		t.Errorf("values %v %v %v", tb, b, q)
	}
	// Our writer spells the same units the same way.
	var buf bytes.Buffer
	w := NewWriter(&buf, []Column{{Name: "f", Unit: "m / (G s)", Datatype: Float64}}, nil)
	w.Float(1).End()
	w.Flush()
	if !strings.Contains(buf.String(), "unit: m / (G s),") {
		t.Errorf("writer spells the unit differently:\n%s", buf.String())
	}
}

// TestSetDigits: with SetDigits(7) floats read back within half a unit
// of the seventh digit (at most 5e-7 relative), NaN and infinities as before.
func TestSetDigits(t *testing.T) {
	var b strings.Builder
	w := NewWriter(&b, []Column{{Name: "x", Datatype: Float64}}, nil).SetDigits(7)
	xs := []float64{math.Pi, -1.234567891e-20, 6.02214076e23, 0, math.NaN(), math.Inf(1)}
	for _, x := range xs {
		if err := w.Float(x).End(); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Flush(); err != nil {
		t.Fatal(err)
	}
	tab, err := Read(strings.NewReader(b.String()), "digits.ecsv")
	if err != nil {
		t.Fatal(err)
	}
	got, err := tab.Floats("x")
	if err != nil {
		t.Fatal(err)
	}
	for i, x := range xs {
		switch {
		case math.IsNaN(x):
			if !math.IsNaN(got[i]) {
				t.Errorf("NaN read as %g", got[i])
			}
		case math.IsInf(x, 0) || x == 0:
			if got[i] != x {
				t.Errorf("%g read as %g", x, got[i])
			}
		case math.Abs(got[i]/x-1) > 5e-7:
			t.Errorf("%g read as %g", x, got[i])
		}
	}
	if strings.Contains(b.String(), "3.14159265") {
		t.Errorf("more than 7 digits written:\n%s", b.String())
	}
}

// countWriter counts the writes that reach it.
type countWriter struct {
	bytes.Buffer
	writes int
}

func (c *countWriter) Write(p []byte) (int, error) { c.writes++; return c.Buffer.Write(p) }

// TestNewWriterSize: the same bytes as NewWriter, in writes of BufferSize
// (a 64 KiB buffer, not bufio's 4 KiB default).
func TestNewWriterSize(t *testing.T) {
	cols := []Column{{Name: "x", Datatype: Float64}, {Name: "y", Datatype: Float64}}
	fill := func(w *Writer) {
		for i := 0; i < 20000; i++ {
			if err := w.Float(float64(i) / 3).Float(float64(i) * 1e-7).End(); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
	}
	var small, large countWriter
	fill(NewWriter(&small, cols, nil))
	fill(NewWriterSize(&large, BufferSize, cols, nil))
	if !bytes.Equal(small.Bytes(), large.Bytes()) {
		t.Fatal("NewWriterSize writes other bytes than NewWriter")
	}
	if want := large.Len()/BufferSize + 1; large.writes > want {
		t.Errorf("%d writes for %d bytes, want at most %d", large.writes, large.Len(), want)
	}
	if small.writes <= large.writes {
		t.Errorf("4 KiB buffer: %d writes, 64 KiB: %d", small.writes, large.writes)
	}
}

// TestFloatText: a cell formatted once by AppendFloatCell and written by
// FloatText gives the same bytes as Float, at the default digits and at 7;
// FloatText in a column of another datatype is an error.
func TestFloatText(t *testing.T) {
	xs := []float64{math.Pi, -1.234567891e-20, 6.02214076e23, 0, math.Copysign(0, -1), math.NaN(), math.Inf(1), math.Inf(-1), 2.725003}
	cols := []Column{{Name: "x", Datatype: Float64}}
	for _, digits := range []int{0, 7} {
		var a, b strings.Builder
		wa := NewWriter(&a, cols, nil).SetDigits(digits)
		wb := NewWriter(&b, cols, nil).SetDigits(digits)
		for _, x := range xs {
			if err := wa.Float(x).End(); err != nil {
				t.Fatal(err)
			}
			if err := wb.FloatText(wb.AppendFloatCell(nil, x)).End(); err != nil {
				t.Fatal(err)
			}
		}
		if err := errors.Join(wa.Flush(), wb.Flush()); err != nil {
			t.Fatal(err)
		}
		if a.String() != b.String() {
			t.Errorf("digits %d: FloatText wrote\n%s\nFloat wrote\n%s", digits, b.String(), a.String())
		}
	}
	var c strings.Builder
	w := NewWriter(&c, []Column{{Name: "n", Datatype: Int64}}, nil)
	if err := w.FloatText([]byte("1.5")).End(); err == nil {
		t.Error("FloatText in an int64 column accepted")
	}
}

// readLines lists the lines of data as read splits them.
func readLines(data string) []string {
	var out []string
	for rest := data; rest != ""; {
		var s string
		s, rest = nextLine(rest)
		out = append(out, s)
	}
	return out
}

// scannerLines lists the lines of data as bufio.Scanner gives them, which
// is how tables were read before the whole file was read at once.
func scannerLines(data string) []string {
	var out []string
	sc := bufio.NewScanner(strings.NewReader(data))
	sc.Buffer(make([]byte, 64), 1<<20)
	for sc.Scan() {
		out = append(out, sc.Text())
	}
	return out
}

func FuzzLines(f *testing.F) {
	for _, s := range []string{"", "a", "a\n", "a\r\n", "\r", "\n\n", "a\n\nb", "a\r\rb\r\n", "x,y\r\n1,2"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data string) {
		if got, want := readLines(data), scannerLines(data); !slices.Equal(got, want) {
			t.Errorf("%q: lines %q, bufio.Scanner %q", data, got, want)
		}
	})
}

// TestReadRows checks rows split in place against strings.Split, with
// quoted rows, CRLF, a byte-order mark and no final newline mixed in.
func TestReadRows(t *testing.T) {
	cases := []struct {
		data string
		want [][]string
	}{
		{"\ufeffa,b\r\n1,2\r\n\r\n3,4", [][]string{{"1", "2"}, {"3", "4"}}},
		{"a,b,c\n1,,3\n\"x,y\",2,3\n,,\n", [][]string{{"1", "", "3"}, {"x,y", "2", "3"}, {"", "", ""}}},
		{"a\tb\n1\t2\n", [][]string{{"1", "2"}}},
		{"a b\n1   2\n", [][]string{{"1", "2"}}},
	}
	for _, c := range cases {
		tab, err := Read(strings.NewReader(c.data), "t.csv")
		if err != nil {
			t.Errorf("%q: %v", c.data, err)
			continue
		}
		if !slices.EqualFunc(tab.Rows, c.want, slices.Equal) {
			t.Errorf("%q: rows %q, want %q", c.data, tab.Rows, c.want)
		}
		for i := range tab.Rows {
			if i+1 < len(tab.Rows) {
				tab.Rows[i] = append(tab.Rows[i], "extra") // must not overwrite the next row
			}
		}
		if len(tab.Rows) > 1 && tab.Rows[1][0] != c.want[1][0] {
			t.Errorf("%q: appending to a row changed the next one", c.data)
		}
	}
	if _, err := Read(strings.NewReader("a,b\n1,2,3\n"), "t.csv"); err == nil || !strings.Contains(err.Error(), "t.csv:2: row has 3 values, expected 2") {
		t.Errorf("row too long: error %v", err)
	}
}
