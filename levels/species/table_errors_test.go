package species

import (
	"errors"
	"strings"
	"testing"
)

const tableHead = `name = "test"
frequency = "10 GHz"
einstein_a = 1e-8
mass = "30 amu"
[upper]
J = 1
[lower]
J = 0
[components]
spins = [1]
table = """
`

func TestTableErrors(t *testing.T) {
	good := "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 0.4\n1 1 -1.2 3 0.2 0.4\n0 1 2.3 1 0 0.4\n"
	if _, err := Parse([]byte(tableHead+good+`"""`), "t.toml"); err != nil {
		t.Fatalf("good table: %v", err)
	}
	// Each bad table: the error names the file, the line of the row, the
	// row and the column.
	for _, c := range []struct {
		name, table string
		line        int
		want        []string
		noSpins     bool // without spins = [...], F labels are not checked against J
	}{
		{"unknown F", "Fu Fl offset_kHz strength gFu gFl\n3 1 0.2 5 0.1 0.4\n", 13, []string{"row 1, column Fu", "unknown F = 3", "allowed: 0, 1, 2"}, false},
		{"strength zero", "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 0.4\n1 1 -1.2 0 0.2 0.4\n", 14, []string{"row 2, column strength", "> 0"}, false},
		{"negative A", "Fu Fl offset_kHz A gFu gFl\n2 1 0.2 -5 0.1 0.4\n", 13, []string{"row 1, column A", "> 0"}, false},
		{"g_F column missing", "Fu Fl offset_kHz strength gFu\n2 1 0.2 5 0.1\n", 12, []string{"missing column gFl", "g_F"}, false},
		{"g_F cell missing", "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 -\n", 13, []string{"row 1, column gFl", "missing value"}, false},
		{"duplicate", "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 0.4\n# comment\n2 1 0.2 5 0.1 0.4\n", 15, []string{"row 2, column Fu", "repeats row 1"}, false},
		{"triangle", "Fu Fl offset_kHz strength gFu gFl\n2 0 0.2 5 0.1 0.4\n", 12, []string{"row 1, column Fl", "triangle"}, true},
		{"inconsistent g_F", "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 0.4\n1 1 -1.2 3 0.2 0.5\n", 14, []string{"row 2, column gFl", "earlier row"}, false},
		{"inconsistent offsets", "Fu Fl offset_kHz strength gFu gFl\n2 1 0.2 5 0.1 0.4\n1 1 -1.2 3 0.2 0.4\n2 2 0.9 1 0.1 0.3\n1 2 -1.2 1 0.2 0.3\n", 0, []string{"column offset", "disagrees"}, true},
		{"unknown column", "Fu Fl offset_kHz strenght gFu gFl\n2 1 0.2 5 0.1 0.4\n", 12, []string{"unknown column", `did you mean strength`}, false},
		{"bad unit", "Fu Fl offset_kG strength gFu gFl\n2 1 0.2 5 0.1 0.4\n", 12, []string{"unknown frequency unit"}, false},
	} {
		head := tableHead
		if c.noSpins {
			head = strings.Replace(head, "spins = [1]\n", "", 1)
		}
		_, err := Parse([]byte(head+c.table+`"""`), "t.toml")
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("%s: got %v, want a species error", c.name, err)
			continue
		}
		msg := e.Error()
		if !strings.HasPrefix(msg, "t.toml:") || (c.line > 0 && e.Line != c.line) {
			t.Errorf("%s: %q: want file t.toml, line %d", c.name, msg, c.line)
		}
		for _, w := range c.want {
			if !strings.Contains(msg, w) {
				t.Errorf("%s: %q lacks %q", c.name, msg, w)
			}
		}
	}
	// Hamiltonian keys in a table species are refused by name.
	_, err := Parse([]byte(strings.Replace(tableHead, "[upper]\nJ = 1", "[upper]\nJ = 1\ng = 0.1", 1)+good+`"""`), "t.toml")
	if err == nil || !strings.Contains(err.Error(), "g_F per component") {
		t.Errorf("rotational g in a table species: %v", err)
	}
}
