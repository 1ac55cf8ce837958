package runs

import (
	"bytes"
	"errors"
	"strings"
	"testing"
)

// TestProgressBar draws the terminal bar into a buffer: it reaches the
// full count, a failed model's message stands on its own line, and the
// session's summary line follows the bar.
func TestProgressBar(t *testing.T) {
	var out bytes.Buffer
	p := newProgressMode(&out, 3, 0, 3, true)
	p.done("m1", nil, 0.1)
	p.done("m2", errors.New("step size collapsed"), 0.1)
	p.done("m3", nil, 0.1)
	p.finish()
	s := out.String()
	for _, want := range []string{"models", "(3/3)", "100 %", "maserpol: m2 failed: step size collapsed\n", "maserpol: 3 of 3 models finished"} {
		if !strings.Contains(s, want) {
			t.Errorf("bar output lacks %q:\n%q", want, s)
		}
	}
	if i, j := strings.LastIndex(s, "(3/3)"), strings.Index(s, "maserpol: 3 of 3"); i > j {
		t.Errorf("summary line before the final bar:\n%q", s)
	}
}

// TestProgressLines: without a terminal, one line per model.
func TestProgressLines(t *testing.T) {
	var out bytes.Buffer
	p := newProgressMode(&out, 2, 1, 3, false)
	p.done("m2", nil, 0.5)
	p.done("m3", errors.New("bad"), 0.25)
	p.finish()
	want := "maserpol: 1 of 3 models already finished; running 2\n" +
		"maserpol: running 2 models\n" +
		"maserpol: [2/3] m2 done (0.50 s)\n" +
		"maserpol: [3/3] m3 failed: bad (0.25 s)\n"
	if s := out.String(); !strings.HasPrefix(s, want) || !strings.Contains(s, "maserpol: 3 of 3 models finished") {
		t.Errorf("got\n%s\nwant a start of\n%s", s, want)
	}
}
