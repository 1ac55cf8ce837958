package runs

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"

	"maserpol/runs/ecsv"
	"maserpol/runs/figures"

	"gonum.org/v1/gonum/stat"
)

// maxCurves is the most curves a figure carries before it is split, so
// that every curve has a legend entry (figures.DefaultMaxLegend).
const maxCurves = figures.DefaultMaxLegend

// PlotOptions say how Plot draws.
type PlotOptions struct {
	// Formats of the figure files; default png and svg.
	Formats []string
	// Titles adds a title above each figure. Journal figures carry none
	// (the caption says what they show), so the default is without; what
	// a title said (model, saturation, validity) is in the legends.
	Titles bool
	// Note, if not nil, is told about figures skipped.
	Note func(string)
	// Models draws the per-model figures (<model>_spectra, _evolution)
	// for any study; by default only studies of at most MaxModelFigures
	// models get them (a large study would write two files per model).
	Models bool
	// Workers draw figures at once; 0 = one per CPU core. The files do
	// not depend on it.
	Workers int
	// Progress, if not nil, gets a progress line per figure drawn
	// ("maserpol: figures [k/n]"), rewritten in place on a terminal.
	Progress io.Writer
	// saved, if not nil, sees every figure after it is written (tests);
	// calls are serialized but, with several workers, not in order.
	saved func(fig *figures.Stack, paths []string)
}

// MaxModelFigures is the largest study that gets per-model figures by
// default (project choice: a dozen models is about what one looks at one
// by one; the study figures show the rest).
const MaxModelFigures = 16

// Plot draws the figures of a run directory from its tables alone
// (summary.ecsv and spectra/), into dir/plots. It returns the files
// written. A figure with nothing to draw is skipped, and opt.Note is told
// so.
//
//	plots/<model>_spectra.*   I, Q, U, V at the last checkpoint, K
//	plots/<model>_evolution.* I, Q, U, V over I_peak at up to three checkpoints
//	                          (these two for studies of at most MaxModelFigures
//	                          models, or with PlotOptions.Models)
//	plots/saturation[_<tag>][_k].*
//	                          m_l and signed P_V against saturation, one curve
//	                          per model; with more than six models, one figure
//	                          per value of the first varying parameter, named
//	                          by it (e.g. saturation_B3G), split further into
//	                          figures of at most six curves (_1, _2, ...)
//	plots/saturation_spread.* for studies with random draws instead: the
//	                          median, 16-84 % and full range of m_l and signed
//	                          P_V over all models against saturation
//	plots/theta[_k].*         m_l and EVPA (when chi is fixed; else the field-
//	                          frame Q/I) against theta at the last checkpoint,
//	                          one curve per value of the other parameters, or
//	                          one set of points for random draws (only when
//	                          theta varies)
//
// P_V is signed: positive when V is positive on the low-velocity side of
// the line, i.e. when V = A dI/dv has A > 0 (see signOfV), so that the
// field direction shows.
func Plot(dir string, opt PlotOptions) ([]string, error) {
	return PlotContext(context.Background(), dir, opt)
}

// PlotContext is Plot that stops before the next figure when ctx is
// cancelled and returns ctx.Err(); the figures drawn so far stay.
func PlotContext(ctx context.Context, dir string, opt PlotOptions) ([]string, error) {
	formats := opt.Formats
	if len(formats) == 0 {
		formats = []string{"png", "svg"}
	}
	sum, err := ecsv.ReadFile(SummaryPath(dir))
	if err != nil {
		return nil, err
	}
	models, err := readSummary(sum)
	if err != nil {
		return nil, err
	}
	if len(models) == 0 {
		return nil, fmt.Errorf("%s: no finished models to plot", sum.File)
	}
	random := false
	if man, err := ReadManifest(dir); err == nil {
		random = len(man.Seeds) > 0
	}
	pd := filepath.Join(dir, "plots")
	if err := os.MkdirAll(pd, 0o755); err != nil {
		return nil, err
	}
	removeTemps(pd)
	removeOwnFigures(pd, formats)
	d := &drawer{ctx: ctx, pd: pd, formats: formats, opt: opt}
	d.workers = opt.Workers
	if d.workers <= 0 {
		d.workers = runtime.NumCPU()
	}
	var out []string
	perModel := len(models) <= MaxModelFigures || opt.Models
	if perModel {
		// Per-model figures first: they also find the sign of P_V that
		// the study figures draw (summaryModel.pvSign). Each job touches
		// only its own model.
		n := 0
		for _, m := range models {
			n += 1 + min(1, len(m.sat)-1)
		}
		p, err := d.run(n, len(models), func(i int, save saver) error { return plotSpectra(dir, models[i], save) })
		out = append(out, p...)
		if err != nil {
			return out, err
		}
	}
	// The study figures are cheap to build and costly to draw: built in
	// order, drawn on the pool, one job per figure and format. The theta
	// figures need no sign of P_V, so they are drawn while the pool reads
	// the signs from the spectra (when no per-model figures did): that
	// pass is then hidden behind drawing instead of standing before it.
	var theta, sat []figJob
	collect := func(jobs *[]figJob) saver {
		return func(fig *figures.Stack, name string) error {
			*jobs = append(*jobs, figJob{fig, name})
			return nil
		}
	}
	if err := plotTheta(models, random, collect(&theta)); err != nil {
		return out, err
	}
	fr := d.newFigRun()
	var signs func(i int) error
	nsign := 0
	if !perModel {
		// Each sign job touches only its own model (its pvSign, which
		// the theta figures do not read).
		nsign = len(models)
		signs = func(i int) error { return plotSpectra(dir, models[i], nil) }
	}
	thetaFiles, thetaNotes, err := fr.draw(theta, nsign, signs, true)
	if err != nil {
		return out, err
	}
	if !perModel && opt.Note != nil {
		opt.Note(fmt.Sprintf("per-model figures skipped for %d models (drawn for at most %d; maserpol plot --models draws them)", len(models), MaxModelFigures))
	}
	if random {
		err = plotSpread(models, collect(&sat))
	} else {
		err = plotSaturation(models, collect(&sat))
	}
	if err != nil {
		return out, err
	}
	fr.total(len(theta) + len(sat))
	satFiles, satNotes, err := fr.draw(sat, 0, nil, false)
	d.progressEnd(fr.done)
	// Files and notes in the order of a serial draw: saturation, then theta.
	for _, n := range append(satNotes, thetaNotes...) {
		if opt.Note != nil {
			opt.Note(n)
		}
	}
	out = append(out, satFiles...)
	if err != nil {
		return out, err
	}
	return append(out, thetaFiles...), nil
}

// figJob is a study figure waiting to be drawn.
type figJob struct {
	fig  *figures.Stack
	name string
}

// drawer draws figures on a pool of workers. The figures of each job are
// collected in the job's slot and joined in job order, so the files
// written, the list returned and the notes are those of a serial draw
// whatever the number of workers.
type drawer struct {
	ctx     context.Context
	pd      string
	formats []string
	opt     PlotOptions
	workers int

	mu   sync.Mutex // guards done, opt.saved and the progress writer
	done int
}

// jobResult is what one job wrote.
type jobResult struct {
	paths []string
	notes []string
	err   error
}

// run does jobs 0..njobs-1, which draw about nfig figures in total (the
// progress count), and returns the files written in job order and the
// error of the first failing job.
func (d *drawer) run(nfig, njobs int, job func(i int, save saver) error) ([]string, error) {
	res := make([]jobResult, njobs)
	d.done = 0
	next := make(chan int)
	var failed atomic.Bool // a serial draw stops at the first error
	var wg sync.WaitGroup
	for w := 0; w < min(d.workers, njobs); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				r := &res[i]
				r.err = job(i, func(fig *figures.Stack, name string) error { return d.save(r, nfig, fig, name) })
				if r.err != nil {
					failed.Store(true)
				}
			}
		}()
	}
	for i := 0; i < njobs; i++ {
		if d.ctx.Err() != nil {
			res[i].err = d.ctx.Err()
			break
		}
		if failed.Load() {
			break
		}
		next <- i
	}
	close(next)
	wg.Wait()
	d.progressEnd(nfig)
	var out []string
	var first error
	for _, r := range res {
		out = append(out, r.paths...)
		for _, n := range r.notes {
			if d.opt.Note != nil {
				d.opt.Note(n)
			}
		}
		if r.err != nil && first == nil {
			first = r.err
		}
	}
	return out, first
}

// figRun draws study figures with one job per figure and format, so that
// the workers share a handful of figures as evenly as the formats allow
// (an SVG costs a few per cent of a PNG). Each job draws its own shallow
// copy of the figure (Save sets DataAreas and Size on it; the panels are
// only read), and a figure counts as drawn, for the progress line and
// opt.saved, when its last format is written. Progress lines of a draw
// made before the total is known (total) are held until it is.
type figRun struct {
	d      *drawer
	nf     int
	n      int      // total figures, 0 while unknown
	done   int      // figures drawn; guarded by d.mu
	held   []string // names of figures drawn before n was known
	holdOn bool
}

func (d *drawer) newFigRun() *figRun {
	d.done = 0
	return &figRun{d: d, nf: len(d.formats)}
}

// total sets the number of figures and prints the progress lines held.
func (fr *figRun) total(n int) {
	fr.n = n
	fr.d.mu.Lock()
	defer fr.d.mu.Unlock()
	for i, name := range fr.held {
		fr.d.done = i + 1
		fr.d.progress(n, name)
	}
	fr.held = nil
}

// fileResult is what one study-figure job (a figure in one format) wrote.
type fileResult struct {
	fig   figures.Stack // the job's copy, as drawn
	paths []string
	err   error
}

// draw draws jobs, and runs extra(0..nextra-1) on the same pool after
// the figure jobs are handed out; hold keeps the progress lines until
// total. It returns the files in job and format order, the notes of
// figures without data, and the first error in job order (figures, then
// extra jobs), as a serial draw would.
func (fr *figRun) draw(jobs []figJob, nextra int, extra func(i int) error, hold bool) ([]string, []string, error) {
	d, nf := fr.d, fr.nf
	fr.holdOn = hold
	for _, j := range jobs {
		if !d.opt.Titles {
			j.fig.Title = ""
		}
	}
	nfile := len(jobs) * nf
	res := make([]fileResult, nfile)
	extraErr := make([]error, nextra)
	left := make([]int, len(jobs)) // formats still to draw, guarded by d.mu
	for k := range left {
		left[k] = nf
	}
	// The figures are handed out format by format, PNG first: a PNG
	// costs 20-50 times an SVG, and with the long jobs first the short
	// ones (SVGs, then the extra jobs) fill the workers' ends evenly
	// (longest-job-first list scheduling).
	order := formatOrder(d.formats)
	var next atomic.Int64
	var failed atomic.Bool // a serial draw stops at the first error
	var wg sync.WaitGroup
	for w := 0; w < min(d.workers, nfile+nextra); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				i := int(next.Add(1) - 1)
				if i >= nfile+nextra || failed.Load() {
					return
				}
				if i >= nfile {
					e := &extraErr[i-nfile]
					if *e = d.ctx.Err(); *e == nil {
						*e = extra(i - nfile)
					}
					if *e != nil {
						failed.Store(true)
					}
					continue
				}
				f, k := order[i/len(jobs)], i%len(jobs)
				r := &res[k*nf+f]
				if r.err = d.ctx.Err(); r.err == nil {
					r.fig = *jobs[k].fig
					r.paths, r.err = r.fig.Save(filepath.Join(d.pd, jobs[k].name), d.formats[f:f+1])
				}
				if r.err != nil && !errors.Is(r.err, figures.ErrNoData) {
					failed.Store(true)
				}
				d.mu.Lock()
				if left[k]--; left[k] == 0 {
					fr.figureDone(jobs[k].name, res[k*nf:(k+1)*nf])
				}
				d.mu.Unlock()
			}
		}()
	}
	wg.Wait()
	var out, notes []string
	for k, j := range jobs {
		for f := 0; f < nf; f++ {
			r := res[k*nf+f]
			if errors.Is(r.err, figures.ErrNoData) {
				if f == 0 {
					notes = append(notes, fmt.Sprintf("figure %s skipped: %v", j.name, r.err))
				}
				continue
			}
			if r.err != nil {
				return out, notes, r.err
			}
			out = append(out, r.paths...)
		}
	}
	for _, err := range extraErr {
		if err != nil {
			return out, notes, err
		}
	}
	return out, notes, nil
}

// formatOrder lists the indices of formats with the raster format (png)
// first, the others in their order.
func formatOrder(formats []string) []int {
	var order []int
	for pass := 0; pass < 2; pass++ {
		for i, f := range formats {
			if (strings.ToLower(f) == "png") == (pass == 0) {
				order = append(order, i)
			}
		}
	}
	return order
}

// figureDone counts a study figure whose formats are all done and shows
// it to opt.saved (the first format's copy, every path in format order)
// when all of them were written. d.mu is held.
func (fr *figRun) figureDone(name string, files []fileResult) {
	d := fr.d
	var paths []string
	ok := true
	for _, r := range files {
		if r.err != nil {
			ok = false
			if !errors.Is(r.err, figures.ErrNoData) {
				return
			}
			break
		}
		paths = append(paths, r.paths...)
	}
	if ok && d.opt.saved != nil {
		d.opt.saved(&files[0].fig, paths)
	}
	fr.done++
	if fr.holdOn {
		fr.held = append(fr.held, name)
		return
	}
	d.done = fr.done
	d.progress(fr.n, name)
}

// save draws one figure of a job.
func (d *drawer) save(r *jobResult, nfig int, fig *figures.Stack, name string) error {
	if err := d.ctx.Err(); err != nil {
		return err
	}
	if !d.opt.Titles {
		fig.Title = ""
	}
	p, err := fig.Save(filepath.Join(d.pd, name), d.formats)
	r.paths = append(r.paths, p...)
	d.mu.Lock()
	if d.opt.saved != nil && err == nil {
		d.opt.saved(fig, p)
	}
	d.done++
	d.progress(nfig, name)
	d.mu.Unlock()
	if errors.Is(err, figures.ErrNoData) {
		r.notes = append(r.notes, fmt.Sprintf("figure %s skipped: %v", name, err))
		return nil
	}
	return err
}

// progress reports a drawn figure in the style of the model progress: a
// line rewritten in place on a terminal, one line per figure otherwise
// (log files, job schedulers). d.mu is held.
func (d *drawer) progress(nfig int, name string) {
	w := d.opt.Progress
	if w == nil {
		return
	}
	n := max(nfig, d.done)
	if isTerminal(w) {
		fmt.Fprintf(w, "\rmaserpol: figures [%d/%d]", d.done, n)
		return
	}
	fmt.Fprintf(w, "maserpol: figures [%d/%d] %s\n", d.done, n, name)
}

func (d *drawer) progressEnd(nfig int) {
	if w := d.opt.Progress; w != nil && d.done > 0 && isTerminal(w) {
		fmt.Fprintln(w)
	}
}

// saver writes one figure under a base name in plots/.
type saver func(fig *figures.Stack, name string) error

// ownFigure matches the names Plot writes, so that a redraw removes
// figures of an earlier layout (e.g. saturation_3 when there are now two)
// and leaves other files alone. It is compiled when first needed, not at
// every start of the program.
var ownFigure = sync.OnceValue(func() *regexp.Regexp {
	return regexp.MustCompile(`^(m\d+_(spectra|evolution)|saturation(_[A-Za-z0-9.+-]+)?|theta(_\d+)?)\.(png|svg|pdf|eps)$`)
})

// removeOwnFigures removes the figures Plot draws in the formats about to
// be drawn, and only those: a redraw in PDF keeps the PNG files.
func removeOwnFigures(pd string, formats []string) {
	ents, _ := os.ReadDir(pd)
	for _, e := range ents {
		ext := strings.ToLower(strings.TrimPrefix(filepath.Ext(e.Name()), "."))
		if ownFigure().MatchString(e.Name()) && slices.Contains(formats, ext) {
			os.Remove(filepath.Join(pd, e.Name()))
		}
	}
}

// summaryModel is one model's rows of summary.ecsv.
type summaryModel struct {
	name, species string
	params        []param // parameter columns in table order
	sat, ml, pv   []float64
	evpa, qb      []float64
	valid         []bool
	// pvSign is the sign of V = A dI/dv at each checkpoint, from the
	// spectra (0 where V vanishes); set by plotSpectra.
	pvSign []float64
}

// signedPV is P_V with the sign of A in V = A dI/dv.
func (m *summaryModel) signedPV() []float64 {
	out := make([]float64, len(m.pv))
	for i, x := range m.pv {
		s := 1.0
		if i < len(m.pvSign) {
			s = m.pvSign[i]
		}
		out[i] = s * x
	}
	return out
}

type param struct {
	col   ecsv.Column
	value float64
}

func (m *summaryModel) value(col string) (float64, bool) {
	for _, p := range m.params {
		if p.col.Name == col {
			return p.value, true
		}
	}
	return math.NaN(), false
}

func readSummary(t *ecsv.Table) ([]*summaryModel, error) {
	names, err := t.Strings("model")
	if err != nil {
		return nil, err
	}
	species, err := t.Strings("species")
	if err != nil {
		return nil, err
	}
	get := func(c string) []float64 {
		if err != nil {
			return nil
		}
		var x []float64
		x, err = t.Floats(c)
		return x
	}
	sat, ml, pv, evpa, qb := get("saturation"), get("ml"), get("pv"), get("evpa_deg"), get("qb")
	if err != nil {
		return nil, err
	}
	valid, err := t.Bools("valid")
	if err != nil {
		return nil, err
	}
	// Parameter columns lie between species and checkpoint.
	lo, hi := t.Index("species")+1, t.Index("checkpoint")
	if lo <= 0 || hi < lo {
		return nil, fmt.Errorf("%s: not a maserpol summary table (no species ... checkpoint columns)", t.File)
	}
	pcols := make([][]float64, hi-lo)
	for j := lo; j < hi; j++ {
		if pcols[j-lo], err = t.Floats(t.Columns[j].Name); err != nil {
			return nil, err
		}
	}
	var out []*summaryModel
	var cur *summaryModel
	for i, n := range names {
		if cur == nil || cur.name != n {
			// Copies: the cells share the memory of the whole table.
			cur = &summaryModel{name: strings.Clone(n), species: strings.Clone(species[i])}
			for j := lo; j < hi; j++ {
				cur.params = append(cur.params, param{t.Columns[j], pcols[j-lo][i]})
			}
			out = append(out, cur)
		}
		cur.sat = append(cur.sat, sat[i])
		cur.ml = append(cur.ml, ml[i])
		cur.pv = append(cur.pv, pv[i])
		cur.evpa = append(cur.evpa, evpa[i])
		cur.qb = append(cur.qb, qb[i])
		cur.valid = append(cur.valid, valid[i])
	}
	return out, nil
}

// symbols for parameter labels, in the markup of figures.Scripts.
var symbols = map[string]string{
	"B_mG": "B", "theta_deg": "θ", "chi_deg": "χ", "doppler_kms": "v_D", "T_K": "T", "turb_kms": "v_{turb}",
	"tb_K": "T_{seed}", "dOmega_sr": "ΔΩ", "gamma_upper_per_s": "Γ_u", "gamma_lower_per_s": "Γ_l",
	"ne_cm3": "n_e", "seed_linear": "m_{l,seed}", "seed_circular": "(V/I)_{seed}", "seed_angle_deg": "χ_{seed}",
	"gain_length_au": "L_g", "span_kms": "span",
}

// unitText writes an astropy unit string for a figure.
func unitText(u string) string {
	switch u {
	case "km / s":
		return "km/s"
	case "1 / s":
		return "s^{-1}"
	case "cm-3":
		return "cm^{-3}"
	}
	return u
}

func paramLabel(p param) string {
	sym, ok := symbols[p.col.Name]
	if !ok {
		sym = p.col.Name
		for _, u := range unitSuffixes {
			sym = strings.TrimSuffix(sym, u.suffix)
		}
		sym = figures.Escape(sym)
	}
	u := unitText(p.col.Unit)
	x := p.value
	if u == "mG" && math.Abs(x) >= 1000 {
		x, u = x/1000, "G"
	}
	if u == "deg" {
		return sym + " = " + rounded(x, 3) + "°"
	}
	s := sym + " = " + rounded(x, 3)
	if u != "" {
		s += " " + u
	}
	return s
}

// number writes x with at most four significant digits, without an
// exponent in the usual range of parameters (file names).
func number(x float64) string {
	if x == 0 || math.Abs(x) >= 1e-3 && math.Abs(x) < 1e6 {
		r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 4, 64), 64)
		return strconv.FormatFloat(r, 'f', -1, 64)
	}
	return strconv.FormatFloat(x, 'g', 4, 64)
}

// rounded writes x to the given significant digits, without an exponent
// between 1e-3 and 1e6 and with a superscript power of ten outside
// (figure text): R/Γ = 0.9999 reads as 1, 99.98 as 100 with two digits.
func rounded(x float64, digits int) string {
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', digits, 64), 64)
	if r == 0 || math.Abs(r) >= 1e-3 && math.Abs(r) < 1e6 {
		return strconv.FormatFloat(r, 'f', -1, 64)
	}
	m, e, _ := strings.Cut(strconv.FormatFloat(r, 'e', -1, 64), "e")
	ex, _ := strconv.Atoi(e)
	if m == "1" {
		return "10^{" + strconv.Itoa(ex) + "}"
	}
	return m + "×10^{" + strconv.Itoa(ex) + "}"
}

// satText is a saturation for a legend, to two significant digits.
func satText(x float64) string { return "R/Γ = " + rounded(x, 2) }

// varying lists the parameter columns (and species) that differ between
// models; labels name only those.
func varying(models []*summaryModel) (cols []string, species bool) {
	for k := range models[0].params {
		for _, m := range models[1:] {
			if m.params[k].value != models[0].params[k].value {
				cols = append(cols, models[0].params[k].col.Name)
				break
			}
		}
	}
	for _, m := range models[1:] {
		if m.species != models[0].species {
			species = true
		}
	}
	return cols, species
}

func label(m *summaryModel, cols []string, species bool, skip string) string {
	var parts []string
	if species {
		parts = append(parts, figures.Escape(m.species))
	}
	for _, p := range m.params {
		if p.col.Name != skip && slices.Contains(cols, p.col.Name) {
			parts = append(parts, paramLabel(p))
		}
	}
	return strings.Join(parts, ", ")
}

// paramTag is a parameter value for a file name: ASCII symbol, value and
// unit without spaces, e.g. "B3G", "theta30deg".
func paramTag(p param) string {
	sym, ok := tagSymbols[p.col.Name]
	if !ok {
		sym = p.col.Name
		for _, u := range unitSuffixes {
			sym = strings.TrimSuffix(sym, u.suffix)
		}
	}
	x, u := p.value, p.col.Unit
	if u == "mG" && math.Abs(x) >= 1000 {
		x, u = x/1000, "G"
	}
	return strings.Map(func(r rune) rune {
		if r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '.' || r == '-' || r == '+' {
			return r
		}
		return -1
	}, sym+number(x)+u)
}

var tagSymbols = map[string]string{"B_mG": "B", "theta_deg": "theta", "chi_deg": "chi", "doppler_kms": "vD", "T_K": "T", "tb_K": "Tseed", "dOmega_sr": "dOmega"}

// roundoffNote says why a panel of round-off (Stokes or polarization
// name) was drawn as zero, when the parameters of every model give the
// reason by symmetry: V vanishes at theta = 90 deg, Q and U at theta = 0,
// U when the projected field lies along a Q axis (chi = 0 or 90 deg), Q
// when it lies at 45 deg to them.
func roundoffNote(name string, ms []*summaryModel) string {
	all := func(col string, ok func(x float64) bool) (float64, bool) {
		var x float64
		for i, m := range ms {
			v, found := m.value(col)
			if !found || !ok(v) || i > 0 && v != x {
				return 0, false
			}
			x = v
		}
		return x, len(ms) > 0
	}
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-9 }
	mod := func(x, m float64) float64 { return math.Mod(math.Mod(x, m)+m, m) }
	if name == "V" || name == "P_V" {
		if th, ok := all("theta_deg", func(x float64) bool { return near(mod(x, 180), 90) }); ok {
			return name + " = 0 (θ = " + number(th) + " deg)"
		}
	} else {
		if th, ok := all("theta_deg", func(x float64) bool { return near(mod(x, 180), 0) }); ok {
			return name + " = 0 (θ = " + number(th) + " deg)"
		}
		want := 0.0 // U = 0 for chi = 0, 90 deg
		if name == "Q" {
			want = 45
		}
		if chi, ok := all("chi_deg", func(x float64) bool { return near(mod(x, 90), want) }); ok {
			return name + " = 0 (χ = " + number(chi) + " deg)"
		}
	}
	return name + " = 0 (below 1e-9 of the peak of I)"
}

// plotSpectra draws the per-model figures of m and finds the sign of its
// P_V at every checkpoint (m.pvSign); with a nil save it finds the signs
// only.
func plotSpectra(dir string, m *summaryModel, save saver) error {
	t, err := ecsv.ReadFile(filepath.Join(dir, "spectra", m.name+".ecsv"))
	if err != nil {
		return err
	}
	ck, err := t.Floats("checkpoint")
	if err != nil {
		return err
	}
	cols := map[string][]float64{}
	for _, c := range []string{"saturation", "velocity_kms", "I", "Q", "U", "V"} {
		if cols[c], err = t.Floats(c); err != nil {
			return err
		}
	}
	// Split the long-form table by checkpoint.
	type block struct {
		sat          float64
		cp, from, to int
	}
	var blocks []block
	for i := range ck {
		if i == 0 || ck[i] != ck[i-1] {
			blocks = append(blocks, block{sat: cols["saturation"][i], cp: int(ck[i]), from: i})
		}
		blocks[len(blocks)-1].to = i + 1
	}
	if len(blocks) == 0 {
		return fmt.Errorf("%s: no rows", t.File)
	}
	last := blocks[len(blocks)-1]
	vel := cols["velocity_kms"][last.from:last.to]
	// The sign of V at each checkpoint of the summary. With spectra at a
	// subset of checkpoints (output.spectra = "decades") a checkpoint
	// without its spectrum takes the sign of the nearest one written: the
	// sign follows that of B cos theta (V = A dI/dv), which does not
	// change along the column.
	if len(blocks) <= len(m.sat) {
		m.pvSign = make([]float64, len(m.sat))
		signs := make([]float64, len(blocks))
		for k, b := range blocks {
			signs[k] = signOfV(cols["velocity_kms"][b.from:b.to], cols["I"][b.from:b.to], cols["V"][b.from:b.to])
		}
		for i := range m.pvSign {
			best := 0
			for k, b := range blocks {
				if math.Abs(float64(b.cp-i)) < math.Abs(float64(blocks[best].cp-i)) {
					best = k
				}
			}
			m.pvSign[i] = signs[best]
		}
	}
	if save == nil { // signs only (per-model figures not drawn)
		return nil
	}
	stokes := func(b block, norm bool) figures.Stokes {
		s := figures.Stokes{Label: satText(b.sat)}
		scale := 1.0
		if norm {
			peak := 0.0
			for _, x := range cols["I"][b.from:b.to] {
				peak = math.Max(peak, x)
			}
			if peak > 0 {
				scale = 1 / peak
			}
		}
		for k, dst := range []*[]float64{&s.I, &s.Q, &s.U, &s.V} {
			src := cols[[]string{"I", "Q", "U", "V"}[k]][b.from:b.to]
			*dst = make([]float64, len(src))
			for i, x := range src {
				(*dst)[i] = x * scale
			}
		}
		return s
	}
	var params []string
	for _, p := range m.params[:min(3, len(m.params))] {
		params = append(params, paramLabel(p))
	}
	renote := func(fig *figures.Stack) {
		for i := 1; i < len(fig.Panels); i++ {
			if pn := &fig.Panels[i]; pn.Zeroed {
				pn.Note = roundoffNote([]string{"I", "Q", "U", "V"}[i], []*summaryModel{m})
			}
		}
	}
	head := figures.Escape(m.name+" ("+m.species+")") + ", " + satText(last.sat)
	outside := false
	if n := len(m.valid); n > 0 && !m.valid[n-1] {
		head += ", outside R/gΩ ≤ 0.1"
		outside = true
	}
	fig := figures.Spectra(head+"\n"+strings.Join(params, ", "), vel, []figures.Stokes{stokes(last, false)})
	renote(fig)
	// Without a title the legend says what the figure shows.
	fig.Panels[0].Legend = true
	fig.Panels[0].Curves[0].Label = m.name + ", " + satText(last.sat)
	fig.Panels[0].Extra = []string{strings.Join(params, ", ")}
	if outside {
		fig.Panels[0].Extra = append(fig.Panels[0].Extra, "outside R/gΩ ≤ 0.1")
	}
	if err := save(fig, m.name+"_spectra"); err != nil || len(blocks) < 2 {
		return err
	}
	// Evolution: the last checkpoint and those nearest to saturation 1 and
	// 0.01, normalised by their own peak so that the shapes compare.
	picked := []block{last}
	for _, target := range []float64{1, 0.01} {
		best := -1
		for i, b := range blocks {
			if best < 0 || math.Abs(math.Log(b.sat/target)) < math.Abs(math.Log(blocks[best].sat/target)) {
				best = i
			}
		}
		dup := false
		for _, p := range picked {
			if p.from == blocks[best].from {
				dup = true
			}
		}
		if !dup {
			picked = append(picked, blocks[best])
		}
	}
	var sts []figures.Stokes
	for _, b := range picked {
		sts = append(sts, stokes(b, true))
	}
	ev := figures.Spectra(figures.Escape(m.name+" ("+m.species+")")+"\n"+strings.Join(params, ", "), vel, sts)
	renote(ev)
	ev.Panels[0].Extra = []string{m.name + ": " + strings.Join(params, ", ")}
	for i, p := range []string{"I/I_{peak}", "Q/I_{peak}", "U/I_{peak}", "V/I_{peak}"} {
		ev.Panels[i].YLabel = p
	}
	return save(ev, m.name+"_evolution")
}

// signOfV is the sign of A in a least-squares fit V = A dI/dv, i.e. of
// the sum of V dI/dv over the line: +1 when V is positive on the rising
// (low-velocity) side of I, -1 when negative, 0 when V vanishes there.
// It gives P_V, which is a magnitude, the sign of the field's projection
// on the line of sight (positive B cos theta gives A > 0 for g < 0 in
// nuclear magnetons, e.g. SiO; see the README's conventions).
func signOfV(v, i, V []float64) float64 {
	s := 0.0
	for k := 1; k+1 < len(v); k++ {
		if dv := v[k+1] - v[k-1]; dv != 0 {
			s += V[k] * (i[k+1] - i[k-1]) / dv
		}
	}
	switch {
	case s > 0:
		return 1
	case s < 0:
		return -1
	}
	return 0
}

// splitCurves splits each model's curve into its valid part (line) and
// its part outside the validity regime (line with markers, no legend).
func splitCurves(x, y []float64, valid []bool, lab string, style int) []figures.Curve {
	var a, b figures.Curve
	a = figures.Curve{Label: lab, Style: style}
	b = figures.Curve{Style: style, Points: true}
	for i := range x {
		if valid[i] {
			a.X, a.Y = append(a.X, x[i]), append(a.Y, y[i])
		} else {
			// Overlap by one point so that the curve is continuous.
			if len(b.X) == 0 && i > 0 && valid[i-1] {
				b.X, b.Y = append(b.X, x[i-1]), append(b.Y, y[i-1])
			}
			b.X, b.Y = append(b.X, x[i]), append(b.Y, y[i])
		}
	}
	var out []figures.Curve
	if len(a.X) > 0 {
		out = append(out, a)
	}
	if len(b.X) > 0 {
		if len(a.X) == 0 {
			b.Label = lab
		}
		out = append(out, b)
	}
	return out
}

func chunks[T any](xs []T, n int) [][]T {
	var out [][]T
	for len(xs) > n {
		out = append(out, xs[:n])
		xs = xs[n:]
	}
	return append(out, xs)
}

func plotSaturation(models []*summaryModel, save saver) error {
	cols, sp := varying(models)
	// With many models, one figure per value of the first varying
	// parameter, curves for the others; then chunks of maxCurves.
	type group struct {
		title, tag string
		ms         []*summaryModel
	}
	groups := []*group{{ms: models}}
	if len(models) > maxCurves && len(cols) > 1 {
		groups = nil
		idx := map[float64]*group{}
		for _, m := range models {
			v, _ := m.value(cols[0])
			g, ok := idx[v]
			if !ok {
				p := param{value: v}
				for _, q := range m.params {
					if q.col.Name == cols[0] {
						p = q
					}
				}
				g = &group{title: paramLabel(p), tag: "_" + paramTag(p)}
				idx[v] = g
				groups = append(groups, g)
			}
			g.ms = append(g.ms, m)
		}
		cols = cols[1:]
	}
	for _, g := range groups {
		// Models with the same curves (e.g. theta and 180 deg - theta for
		// m_l) share one curve and one legend entry, so that no entry
		// names a curve hidden under another.
		type entry struct {
			m      *summaryModel
			labels []string
		}
		var es []*entry
		for _, m := range g.ms {
			lab := label(m, cols, sp, "")
			if lab == "" {
				lab = m.name
			}
			dup := false
			for _, e := range es {
				if sameCurves(e.m, m) {
					e.labels = append(e.labels, lab)
					dup = true
					break
				}
			}
			if !dup {
				es = append(es, &entry{m, []string{lab}})
			}
		}
		parts := chunks(es, maxCurves)
		for k, part := range parts {
			var ml, pv []figures.Curve
			var ms []*summaryModel
			anyInvalid := false
			for i, e := range part {
				m := e.m
				ms = append(ms, m)
				lab := strings.Join(e.labels, "; ")
				// P_V below 1e-9 is round-off (theta = 90 deg).
				p := m.signedPV()
				for j, x := range p {
					if math.Abs(x) <= figures.RoundoffLevel { // keeps NaN
						p[j] = 0
					}
				}
				ml = append(ml, splitCurves(m.sat, m.ml, m.valid, lab, i)...)
				pv = append(pv, splitCurves(m.sat, p, m.valid, "", i)...)
				for _, v := range m.valid {
					anyInvalid = anyInvalid || !v
				}
			}
			title := "polarization against saturation"
			if g.title != "" {
				title += ", " + g.title
			}
			fig := figures.Saturation(title, ml, pv)
			if g.title != "" {
				fig.Panels[0].Extra = append(fig.Panels[0].Extra, "all: "+g.title)
			}
			if anyInvalid {
				fig.Panels[0].Extra = append(fig.Panels[0].Extra, "markers: R/gΩ > 0.1")
			}
			figures.ZeroRoundoff(&fig.Panels[1], 0, roundoffNote("P_V", ms))
			name := "saturation" + g.tag
			if len(parts) > 1 {
				name += "_" + strconv.Itoa(k+1)
			}
			if err := save(fig, name); err != nil {
				return err
			}
		}
	}
	return nil
}

// sameCurves reports whether two models have the same m_l and P_V
// against saturation, to drawing precision.
func sameCurves(a, b *summaryModel) bool {
	if len(a.sat) != len(b.sat) {
		return false
	}
	pa, pb := a.signedPV(), b.signedPV()
	for i := range a.sat {
		if a.sat[i] != b.sat[i] || math.Abs(a.ml[i]-b.ml[i]) > 1e-6 || math.Abs(pa[i]-pb[i]) > 1e-6*math.Max(1e-3, math.Abs(pa[i])) {
			return false
		}
	}
	return true
}

func plotTheta(models []*summaryModel, random bool, save saver) error {
	cols, sp := varying(models)
	if !slices.Contains(cols, "theta_deg") {
		return nil
	}
	// The EVPA is a sky angle: against theta it means something only when
	// chi is the same for every model. Otherwise the second panel is the
	// field-frame Q/I, whose sign tells parallel from perpendicular.
	evpa := !slices.Contains(cols, "chi_deg")
	second := func(m *summaryModel, n int) float64 {
		if evpa {
			return m.evpa[n]
		}
		return m.qb[n]
	}
	// Group by everything but theta; order groups by first appearance.
	// Random draws form one group of points: every model differs in
	// something, and a legend entry per point says nothing.
	type group struct {
		label string
		ms    []*summaryModel
	}
	var gs []*group
	idx := map[string]*group{}
	for _, m := range models {
		lab := label(m, cols, sp, "theta_deg")
		if random {
			lab = ""
		}
		g, ok := idx[lab]
		if !ok {
			g = &group{label: lab}
			idx[lab] = g
			gs = append(gs, g)
		}
		g.ms = append(g.ms, m)
	}
	parts := chunks(gs, maxCurves)
	for k, part := range parts {
		var ml, ev []figures.Curve
		anyInvalid := false
		satLo, satHi := math.Inf(1), math.Inf(-1)
		for i, g := range part {
			sort.SliceStable(g.ms, func(a, b int) bool {
				ta, _ := g.ms[a].value("theta_deg")
				tb, _ := g.ms[b].value("theta_deg")
				return ta < tb
			})
			c1 := figures.Curve{Label: g.label, Style: i, Points: true, NoLine: random}
			c2 := figures.Curve{Style: i, Points: true, NoLine: random}
			bad1 := figures.Curve{Style: i + 1, Points: true, NoLine: true}
			bad2 := figures.Curve{Style: i + 1, Points: true, NoLine: true}
			for _, m := range g.ms {
				th, _ := m.value("theta_deg")
				n := len(m.sat) - 1
				if random && !m.valid[n] {
					bad1.X, bad1.Y = append(bad1.X, th), append(bad1.Y, m.ml[n])
					bad2.X, bad2.Y = append(bad2.X, th), append(bad2.Y, second(m, n))
				} else {
					c1.X, c1.Y = append(c1.X, th), append(c1.Y, m.ml[n])
					c2.X, c2.Y = append(c2.X, th), append(c2.Y, second(m, n))
				}
				anyInvalid = anyInvalid || !m.valid[n]
				satLo, satHi = math.Min(satLo, m.sat[n]), math.Max(satHi, m.sat[n])
			}
			if c1.Label == "" {
				c1.Label = "all models"
				if random {
					c1.Label = "R/gΩ ≤ 0.1 (" + strconv.Itoa(len(c1.X)) + " models)"
					bad1.Label = "R/gΩ > 0.1 (" + strconv.Itoa(len(bad1.X)) + ")"
				}
			}
			merged := false
			for j := range ml {
				if sameXY(ml[j], c1) && sameXY(ev[j], c2) {
					ml[j].Label += "; " + c1.Label // drawn once, named once
					merged = true
					break
				}
			}
			if !merged {
				ml, ev = append(ml, c1), append(ev, c2)
			}
			if len(bad1.X) > 0 {
				ml, ev = append(ml, bad1), append(ev, bad2)
			}
		}
		at := "last checkpoint, " + satText(satHi)
		if satHi > satLo*1.01 {
			at = "last checkpoint, R/Γ = " + rounded(satLo, 2) + " to " + rounded(satHi, 2)
		}
		title := "at the " + at
		if anyInvalid && !random {
			title += "\nsome points outside R/gΩ ≤ 0.1"
		}
		name := "theta"
		if len(parts) > 1 {
			name += "_" + strconv.Itoa(k+1)
		}
		fig := figures.Theta(title, ml, ev)
		fig.Panels[0].Extra = append(fig.Panels[0].Extra, at)
		if anyInvalid && !random {
			fig.Panels[0].Extra = append(fig.Panels[0].Extra, "some points R/gΩ > 0.1")
		}
		if !evpa {
			fig.Panels[1].YLabel = "Q/I, field frame"
			for i := range fig.Panels[1].Curves {
				fig.Panels[1].Curves[i].BreakAbove = 0
			}
			fig.Panels[1].ZeroLine = true
		}
		if err := save(fig, name); err != nil {
			return err
		}
	}
	return nil
}

// sameXY reports whether two curves coincide to drawing precision.
func sameXY(a, b figures.Curve) bool {
	if len(a.X) != len(b.X) || len(a.X) == 0 {
		return false
	}
	for i := range a.X {
		if a.X[i] != b.X[i] || math.Abs(a.Y[i]-b.Y[i]) > 1e-4*math.Max(1, math.Abs(a.Y[i])) {
			return false
		}
	}
	return true
}

// plotSpread draws, for a study of random draws, the spread of m_l and
// signed P_V over all models against saturation: the median, the central
// 68 % (16th to 84th percentile) and the full range at each saturation,
// each model interpolated (in log R/Γ) onto a common grid of eight points
// per decade. It replaces figures of a handful of arbitrary curves.
func plotSpread(models []*summaryModel, save saver) error {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, m := range models {
		for _, x := range m.sat {
			if x > 0 && !math.IsInf(x, 0) {
				lo, hi = math.Min(lo, x), math.Max(hi, x)
			}
		}
	}
	if !(lo < hi) {
		return plotSaturation(models, save)
	}
	const perDecade = 8
	n := int(math.Ceil(math.Log10(hi/lo)*perDecade)) + 1
	grid := make([]float64, n)
	for i := range grid {
		grid[i] = math.Min(hi, lo*math.Pow(10, float64(i)/perDecade))
	}
	invalid, total := 0, 0
	panel := func(y func(*summaryModel) []float64) figures.Panel {
		var x, q0, q16, q50, q84, q100 []float64
		vals := make([]float64, 0, len(models))
		for _, s := range grid {
			vals = vals[:0]
			for _, m := range models {
				if v, ok := interpLog(m.sat, y(m), s); ok {
					vals = append(vals, v)
				}
			}
			// A grid point that few models reach would make the
			// quantiles jump: at least half of them, and three.
			if len(vals) < max(3, (len(models)+1)/2) && len(vals) < len(models) {
				continue
			}
			sort.Float64s(vals)
			x = append(x, s)
			q0, q100 = append(q0, vals[0]), append(q100, vals[len(vals)-1])
			q16 = append(q16, stat.Quantile(0.16, stat.LinInterp, vals, nil))
			q50 = append(q50, stat.Quantile(0.5, stat.LinInterp, vals, nil))
			q84 = append(q84, stat.Quantile(0.84, stat.LinInterp, vals, nil))
		}
		return figures.Panel{
			Bands: []figures.Band{
				{Label: "full range", X: x, Lo: q0, Hi: q100, Style: 0, Alpha: 0.15},
				{Label: "16–84 %", X: x, Lo: q16, Hi: q84, Style: 0, Alpha: 0.35},
			},
			Curves: []figures.Curve{{Label: "median", X: x, Y: q50, Style: 0}},
		}
	}
	for _, m := range models {
		for _, v := range m.valid {
			total++
			if !v {
				invalid++
			}
		}
	}
	mlp := panel(func(m *summaryModel) []float64 { return m.ml })
	mlp.YLabel, mlp.Legend = "m_l", true
	mlp.Extra = []string{strconv.Itoa(len(models)) + " models"}
	if invalid > 0 {
		mlp.Extra = append(mlp.Extra, rounded(100*float64(invalid)/float64(total), 2)+" % of points R/gΩ > 0.1")
	}
	pvp := panel(func(m *summaryModel) []float64 { return m.signedPV() })
	pvp.YLabel, pvp.ZeroLine, pvp.AutoLogY = "signed P_V", true, true
	fig := &figures.Stack{Title: "spread over " + strconv.Itoa(len(models)) + " random models", XLabel: "saturation R/Γ", LogX: true,
		Panels: []figures.Panel{mlp, pvp}}
	return save(fig, "saturation_spread")
}

// interpLog interpolates y(x) linearly in log x at x0; ok is false outside
// the model's range or at a NaN.
func interpLog(x, y []float64, x0 float64) (float64, bool) {
	// Within 3 % beyond either end a model counts as reaching x0: a column
	// ends at R/Gamma = 99.98 for a target of 100.
	if n := len(x); n > 0 {
		switch {
		case x0 > x[n-1] && x0 <= x[n-1]*1.03:
			return y[n-1], !math.IsNaN(y[n-1])
		case x0 < x[0] && x0 >= x[0]/1.03:
			return y[0], !math.IsNaN(y[0])
		}
	}
	for i := 1; i < len(x); i++ {
		a, b := x[i-1], x[i]
		if a > 0 && b > a && x0 >= a && x0 <= b {
			t := math.Log(x0/a) / math.Log(b/a)
			v := y[i-1] + t*(y[i]-y[i-1])
			return v, !math.IsNaN(v)
		}
	}
	if len(x) > 0 && x0 == x[0] {
		return y[0], !math.IsNaN(y[0])
	}
	return 0, false
}
