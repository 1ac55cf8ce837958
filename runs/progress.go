package runs

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// progress reports finished models: a bar on a terminal, one line per
// model otherwise (log files, job schedulers).
type progress struct {
	w          io.Writer
	bar        *progressbar.ProgressBar
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
		p.bar = progressbar.NewOptions(todo,
			progressbar.OptionSetWriter(w),
			progressbar.OptionSetDescription("models"),
			progressbar.OptionShowCount(),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionSetElapsedTime(true),
			progressbar.OptionThrottle(100*time.Millisecond),
			progressbar.OptionOnCompletion(func() { fmt.Fprintln(w) }),
		)
		p.bar.RenderBlank()
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
			p.bar.Clear()
			fmt.Fprintf(p.w, "maserpol: %s failed: %v\n", name, err)
		}
		p.bar.Add(1)
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
		p.bar.Exit()
		fmt.Fprintln(p.w)
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
