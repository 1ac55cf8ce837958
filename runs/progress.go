package runs

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/vbauerster/mpb/v8"
	"github.com/vbauerster/mpb/v8/decor"
	"golang.org/x/term"
)

// progress reports finished models: a bar on a terminal, one line per
// model otherwise (log files, job schedulers).
type progress struct {
	w          io.Writer
	pr         *mpb.Progress // the terminal bar's container, nil without one
	bar        *mpb.Bar
	n, total   int // finished so far, out of total in the shard
	start      time.Time
	inThisSess int
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}

func newProgress(w io.Writer, todo, already, total int) *progress {
	return newProgressMode(w, todo, already, total, isTerminal(w))
}

// barEvery is the terminal bar's refresh interval.
const barEvery = 100 * time.Millisecond

// newProgressMode is newProgress with the terminal bar chosen by the
// caller (tests draw it into a buffer).
func newProgressMode(w io.Writer, todo, already, total int, bar bool) *progress {
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
	if !bar {
		fmt.Fprintf(w, "maserpol: running %s\n", models(todo))
		return p
	}
	// vbauerster/mpb: it links statically and initializes a handful of
	// packages (the bar used before pulled net/http and cgo in, which cost
	// more start-up time than a small study's models).
	p.pr = mpb.New(mpb.WithOutput(w), mpb.WithAutoRefresh(), mpb.WithRefreshRate(barEvery), mpb.WithWidth(60))
	p.bar = p.pr.AddBar(int64(todo),
		mpb.PrependDecorators(decor.Name("models "), decor.Percentage(decor.WCSyncSpace)),
		mpb.AppendDecorators(decor.CountersNoUnit(" (%d/%d) "), decor.Elapsed(decor.ET_STYLE_GO),
			decor.OnComplete(decor.AverageETA(decor.ET_STYLE_GO, decor.WCSyncSpace), "")))
	return p
}

func (p *progress) done(name string, err error, secs float64) {
	p.n++
	if p.w == nil {
		return
	}
	if p.bar != nil {
		if err != nil {
			fmt.Fprintf(p.pr, "maserpol: %s failed: %v\n", name, err) // above the bar
		}
		p.bar.Increment()
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
		// A session that stops early (cancelled, or a model's error ends
		// it) leaves the bar short: it is drawn as it stands.
		if !p.bar.Completed() {
			p.bar.Abort(false)
		}
		p.pr.Wait()
	}
	fmt.Fprintf(p.w, "maserpol: %d of %s finished (%.1f s)\n", p.n, models(p.total), time.Since(p.start).Seconds())
}

// models writes "1 model" or "n models".
func models(n int) string {
	if n == 1 {
		return "1 model"
	}
	return fmt.Sprintf("%d models", n)
}
