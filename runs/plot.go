package runs

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"

	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
)

// maxCurves is the most curves a figure carries before it is split, so
// that every curve has a legend entry (figures.DefaultMaxLegend).
const maxCurves = figures.DefaultMaxLegend

// Plot draws the figures of a run directory from its tables alone
// (summary.csv and spectra/), into dir/plots, in the given formats
// (default png and svg). It returns the files written. A figure with
// nothing to draw is skipped, and note (if not nil) is told so.
//
//	plots/<model>_spectra.*   I, Q, U, V at the last checkpoint, K
//	plots/<model>_evolution.* I, Q, U, V over I_peak at up to three checkpoints
//	plots/saturation[_<tag>][_k].*
//	                          m_l and P_V against saturation, one curve per
//	                          model; with more than six models, one figure per
//	                          value of the first varying parameter, named by it
//	                          (e.g. saturation_B3G), split further into figures
//	                          of at most six curves (_1, _2, ...)
//	plots/theta[_k].*         m_l and EVPA against theta at the last checkpoint,
//	                          one curve per value of the other parameters
//	                          (only when theta varies)
func Plot(dir string, formats []string, note func(string)) ([]string, error) {
	return PlotContext(context.Background(), dir, formats, note)
}

// PlotContext is Plot that stops before the next figure when ctx is
// cancelled and returns ctx.Err(); the figures drawn so far stay.
func PlotContext(ctx context.Context, dir string, formats []string, note func(string)) ([]string, error) {
	if len(formats) == 0 {
		formats = []string{"png", "svg"}
	}
	sum, err := ecsv.ReadFile(filepath.Join(dir, "summary.csv"))
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
	pd := filepath.Join(dir, "plots")
	if err := os.MkdirAll(pd, 0o755); err != nil {
		return nil, err
	}
	removeTemps(pd)
	removeOwnFigures(pd, formats)
	var out []string
	save := func(fig *figures.Stack, name string) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		p, err := fig.Save(filepath.Join(pd, name), formats)
		out = append(out, p...)
		if errors.Is(err, figures.ErrNoData) {
			if note != nil {
				note(fmt.Sprintf("figure %s skipped: %v", name, err))
			}
			return nil
		}
		return err
	}
	for _, m := range models {
		if err := plotSpectra(dir, m, save); err != nil {
			return out, err
		}
	}
	if err := plotSaturation(models, save); err != nil {
		return out, err
	}
	if err := plotTheta(models, save); err != nil {
		return out, err
	}
	return out, nil
}

// saver writes one figure under a base name in plots/.
type saver func(fig *figures.Stack, name string) error

// ownFigure matches the names Plot writes, so that a redraw removes
// figures of an earlier layout (e.g. saturation_3 when there are now two)
// and leaves other files alone.
var ownFigure = regexp.MustCompile(`^(m\d+_(spectra|evolution)|saturation(_[A-Za-z0-9.+-]+)?|theta(_\d+)?)\.(png|svg|pdf|eps)$`)

// removeOwnFigures removes the figures Plot draws in the formats about to
// be drawn, and only those: a redraw in PDF keeps the PNG files.
func removeOwnFigures(pd string, formats []string) {
	ents, _ := os.ReadDir(pd)
	for _, e := range ents {
		ext := strings.ToLower(strings.TrimPrefix(filepath.Ext(e.Name()), "."))
		if ownFigure.MatchString(e.Name()) && slices.Contains(formats, ext) {
			os.Remove(filepath.Join(pd, e.Name()))
		}
	}
}

// summaryModel is one model's rows of summary.csv.
type summaryModel struct {
	name, species string
	params        []param // parameter columns in table order
	sat, ml, pv   []float64
	evpa          []float64
	valid         []bool
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
	sat, ml, pv, evpa := get("saturation"), get("ml"), get("pv"), get("evpa_deg")
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
			cur = &summaryModel{name: n, species: species[i]}
			for j := lo; j < hi; j++ {
				cur.params = append(cur.params, param{t.Columns[j], pcols[j-lo][i]})
			}
			out = append(out, cur)
		}
		cur.sat = append(cur.sat, sat[i])
		cur.ml = append(cur.ml, ml[i])
		cur.pv = append(cur.pv, pv[i])
		cur.evpa = append(cur.evpa, evpa[i])
		cur.valid = append(cur.valid, valid[i])
	}
	return out, nil
}

// symbols for parameter labels.
var symbols = map[string]string{"B_mG": "B", "theta_deg": "θ", "chi_deg": "χ", "doppler_kms": "v_D", "T_K": "T", "tb_K": "T_seed", "dOmega_sr": "ΔΩ"}

func paramLabel(p param) string {
	sym, ok := symbols[p.col.Name]
	if !ok {
		sym = p.col.Name
		for _, u := range unitSuffixes {
			sym = strings.TrimSuffix(sym, u.suffix)
		}
	}
	u := p.col.Unit
	switch u {
	case "km / s":
		u = "km/s"
	case "1 / s":
		u = "s^-1"
	}
	x := p.value
	if u == "mG" && math.Abs(x) >= 1000 {
		x, u = x/1000, "G"
	}
	s := sym + " = " + number(x)
	if u != "" {
		s += " " + u
	}
	return s
}

// number writes x with at most four significant digits, without an
// exponent in the usual range of parameters.
func number(x float64) string {
	if x == 0 || math.Abs(x) >= 1e-3 && math.Abs(x) < 1e6 {
		r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', 4, 64), 64)
		return strconv.FormatFloat(r, 'f', -1, 64)
	}
	return strconv.FormatFloat(x, 'g', 4, 64)
}

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
		parts = append(parts, m.species)
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
		sat      float64
		from, to int
	}
	var blocks []block
	for i := range ck {
		if i == 0 || ck[i] != ck[i-1] {
			blocks = append(blocks, block{sat: cols["saturation"][i], from: i})
		}
		blocks[len(blocks)-1].to = i + 1
	}
	if len(blocks) == 0 {
		return fmt.Errorf("%s: no rows", t.File)
	}
	last := blocks[len(blocks)-1]
	vel := cols["velocity_kms"][last.from:last.to]
	stokes := func(b block, norm bool) figures.Stokes {
		s := figures.Stokes{Label: "R/Γ = " + number(b.sat)}
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
	head := m.name + " (" + m.species + "), R/Γ = " + number(last.sat)
	if n := len(m.valid); n > 0 && !m.valid[n-1] {
		head += ", outside R/gΩ ≤ 0.1"
	}
	fig := figures.Spectra(head+"\n"+strings.Join(params, ", "), vel, []figures.Stokes{stokes(last, false)})
	renote(fig)
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
	ev := figures.Spectra(m.name+" ("+m.species+")\n"+strings.Join(params, ", "), vel, sts)
	renote(ev)
	for i, p := range []string{"I/I_peak", "Q/I_peak", "U/I_peak", "V/I_peak"} {
		ev.Panels[i].YLabel = p
	}
	return save(ev, m.name+"_evolution")
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
		parts := chunks(g.ms, maxCurves)
		for k, ms := range parts {
			var ml, pv []figures.Curve
			anyInvalid := false
			for i, m := range ms {
				lab := label(m, cols, sp, "")
				if lab == "" {
					lab = m.name
				}
				// P_V below 1e-9 is round-off (theta = 90 deg).
				p := make([]float64, len(m.pv))
				for j, x := range m.pv {
					if !(math.Abs(x) <= figures.RoundoffLevel) { // keeps NaN
						p[j] = x
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
			if anyInvalid {
				title += "\nmarkers: outside R/gΩ ≤ 0.1"
			}
			fig := figures.Saturation(title, ml, pv)
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

func plotTheta(models []*summaryModel, save saver) error {
	cols, sp := varying(models)
	if !slices.Contains(cols, "theta_deg") {
		return nil
	}
	// Group by everything but theta; order groups by first appearance.
	type group struct {
		label string
		ms    []*summaryModel
	}
	var gs []*group
	idx := map[string]*group{}
	for _, m := range models {
		lab := label(m, cols, sp, "theta_deg")
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
			c1 := figures.Curve{Label: g.label, Style: i, Points: true}
			c2 := figures.Curve{Style: i, Points: true}
			for _, m := range g.ms {
				th, _ := m.value("theta_deg")
				n := len(m.sat) - 1
				c1.X, c1.Y = append(c1.X, th), append(c1.Y, m.ml[n])
				c2.X, c2.Y = append(c2.X, th), append(c2.Y, m.evpa[n])
				anyInvalid = anyInvalid || !m.valid[n]
				satLo, satHi = math.Min(satLo, m.sat[n]), math.Max(satHi, m.sat[n])
			}
			if c1.Label == "" {
				c1.Label = "all models"
			}
			ml, ev = append(ml, c1), append(ev, c2)
		}
		title := "at the last checkpoint, R/Γ = " + number(satHi)
		if satHi > satLo*1.01 {
			title = "at the last checkpoint, R/Γ = " + number(satLo) + " to " + number(satHi)
		}
		if anyInvalid {
			title += "\nsome points outside R/gΩ ≤ 0.1"
		}
		name := "theta"
		if len(parts) > 1 {
			name += "_" + strconv.Itoa(k+1)
		}
		if err := save(figures.Theta(title, ml, ev), name); err != nil {
			return err
		}
	}
	return nil
}
