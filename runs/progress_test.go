package runs

import (
	"bytes"
	"strings"
	"testing"
	"time"
)

// TestBar checks the terminal bar: fill, count, elapsed and remaining
// time, the final line without a remaining time, and that a shorter line
// blanks what is left of a longer one.
func TestBar(t *testing.T) {
	t0 := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	cases := []struct {
		n, max int
		at     time.Duration
		want   string
	}{
		{0, 4, 0, "models   0% |" + strings.Repeat(" ", 40) + "| (0/4) [0s]"},
		{1, 4, 3 * time.Second, "models  25% |" + strings.Repeat("█", 10) + strings.Repeat(" ", 30) + "| (1/4) [3s:9s]"},
		{4, 4, 12500 * time.Millisecond, "models 100% |" + strings.Repeat("█", 40) + "| (4/4) [12s]"},
	}
	for _, c := range cases {
		b := &bar{n: c.n, max: c.max, start: t0}
		if got := b.line(t0.Add(c.at)); got != c.want {
			t.Errorf("%d/%d at %v:\n got %q\nwant %q", c.n, c.max, c.at, got, c.want)
		}
	}

	var out bytes.Buffer
	b := &bar{w: &out, max: 2, start: t0}
	b.render(t0.Add(90 * time.Minute)) // [1h30m0s]: the longest line here
	long := b.drawnWidth
	out.Reset()
	b.add(t0.Add(90*time.Minute + 50*time.Millisecond)) // throttled: nothing drawn
	if out.Len() != 0 {
		t.Errorf("drawn again within %v: %q", barEvery, out.String())
	}
	b.n = 0
	b.render(t0.Add(time.Second))
	if got := len([]rune(strings.TrimPrefix(out.String(), "\r"))); got != long {
		t.Errorf("redrawn line is %d characters, the one before %d: its rest is not blanked", got, long)
	}
}
