package runs

import (
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"golang.org/x/term"
)

// progress reports finished models: a bar on a terminal, one line per
// model otherwise (log files, job schedulers).
type progress struct {
	w          io.Writer
	bar        *bar
	n, total   int // finished so far, out of total in the shard
	start      time.Time
	inThisSess int
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

func newProgress(w io.Writer, todo, already, total int) *progress {
	p := &progress{w: w, n: already, total: total, start: time.Now(), inThisSess: todo}
	if w == nil {
		return p
	}
	if already > 0 {
		fmt.Fprintf(w, "maserpol: %d of %s already finished; running %d\n", already, models(total), todo)
	}
	if todo == 0 {
		return p
	}
	if isTerminal(w) {
		p.bar = &bar{w: w, max: todo, start: p.start}
		p.bar.render(p.start)
	} else {
		fmt.Fprintf(w, "maserpol: running %s\n", models(todo))
	}
	return p
}

func (p *progress) done(name string, err error, secs float64) {
	p.n++
	if p.w == nil {
		return
	}
	if p.bar != nil {
		if err != nil {
			p.bar.clear()
			fmt.Fprintf(p.w, "maserpol: %s failed: %v\n", name, err)
			p.bar.last = time.Time{} // redraw at once below the message
		}
		p.bar.add(time.Now())
		return
	}
	status := "done"
	if err != nil {
		status = "failed: " + err.Error()
	}
	fmt.Fprintf(p.w, "maserpol: [%d/%d] %s %s (%.2f s)\n", p.n, p.total, name, status, secs)
}

func (p *progress) finish() {
	if p.w == nil || p.inThisSess == 0 {
		return
	}
	if p.bar != nil {
		if p.bar.drawnN != p.bar.n { // the last count was throttled
			p.bar.render(time.Now())
		}
		fmt.Fprintln(p.w)
	}
	fmt.Fprintf(p.w, "maserpol: %d of %s finished (%.1f s)\n", p.n, models(p.total), time.Since(p.start).Seconds())
}

// bar is the terminal progress bar of the models of a session, rewritten
// in place at most every barEvery:
//
//	models  50% |████████████████████                    | (1/2) [2s:2s]
//
// with the elapsed and the expected remaining time in brackets. It is ours
// rather than a library's: the one used before pulled net/http and cgo
// into the program, which cost more start-up time than a small study's
// models.
type bar struct {
	w          io.Writer
	n, max     int
	start      time.Time
	last       time.Time // last drawn
	drawnN     int       // count of the last line drawn
	drawnWidth int       // characters of the last line drawn, to blank its rest
}

const (
	barWidth = 40
	barEvery = 100 * time.Millisecond
)

func (b *bar) add(now time.Time) {
	b.n++
	if b.n >= b.max || now.Sub(b.last) >= barEvery {
		b.render(now)
	}
}

// line is the text of the bar at now, without the carriage return.
func (b *bar) line(now time.Time) string {
	frac := 0.0
	if b.max > 0 {
		frac = min(float64(b.n)/float64(b.max), 1)
	}
	fill := int(frac * barWidth)
	elapsed := now.Sub(b.start)
	s := fmt.Sprintf("models %3d%% |%s%s| (%d/%d) [%s", int(frac*100), strings.Repeat("█", fill), strings.Repeat(" ", barWidth-fill), b.n, b.max, elapsed.Truncate(time.Second))
	if b.n > 0 && b.n < b.max {
		left := time.Duration(float64(elapsed) / float64(b.n) * float64(b.max-b.n))
		s += ":" + left.Truncate(time.Second).String()
	}
	return s + "]"
}

func (b *bar) render(now time.Time) {
	s := b.line(now)
	width := len([]rune(s))
	pad := max(b.drawnWidth-width, 0)
	fmt.Fprintf(b.w, "\r%s%s", s, strings.Repeat(" ", pad))
	b.drawnWidth, b.drawnN, b.last = width, b.n, now
}

// clear blanks the bar's line so that a message can take its place.
func (b *bar) clear() {
	if b.drawnWidth > 0 {
		fmt.Fprintf(b.w, "\r%s\r", strings.Repeat(" ", b.drawnWidth))
		b.drawnWidth = 0
	}
}

// models writes "1 model" or "n models".
func models(n int) string {
	if n == 1 {
		return "1 model"
	}
	return fmt.Sprintf("%d models", n)
}
