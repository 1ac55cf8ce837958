package runs

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"sort"
	"strconv"
	"strings"

	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
)

// maxCurves is the most curves a figure carries before it is split, so
// legends stay readable at column width.
const maxCurves = 8

// Plot draws the figures of a run directory from its tables alone
// (summary.csv and spectra/), into dir/plots, in the given formats
// (default png and svg). It returns the files written.
//
//	plots/<model>_spectra.*   I, Q, U, V at the last checkpoint, K
//	plots/<model>_evolution.* I, Q, U, V over I_peak at up to three checkpoints
//	plots/saturation[_k].*    m_l and P_V against saturation, one curve per model
//	plots/theta[_k].*         m_l and EVPA against theta at the last checkpoint,
//	                          one curve per value of the other parameters
//	                          (only when theta varies)
func Plot(dir string, formats []string) ([]string, error) {
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
	removeOwnFigures(pd)
	var out []string
	add := func(p []string, err error) error {
		out = append(out, p...)
		return err
	}
	for _, m := range models {
		if err := add(plotSpectra(dir, pd, m, formats)); err != nil {
			return out, err
		}
	}
	if err := add(plotSaturation(pd, models, formats)); err != nil {
		return out, err
	}
	if err := add(plotTheta(pd, models, formats)); err != nil {
		return out, err
	}
	return out, nil
}

// ownFigure matches the names Plot writes, so that a redraw removes
// figures of an earlier layout (e.g. saturation_3 when there are now two)
// and leaves other files alone.
var ownFigure = regexp.MustCompile(`^(m\d+_(spectra|evolution)|saturation(_\d+)?|theta(_\d+)?)\.(png|svg|pdf|eps)$`)

func removeOwnFigures(pd string) {
	ents, _ := os.ReadDir(pd)
	for _, e := range ents {
		if ownFigure.MatchString(e.Name()) {
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
		if p.col.Name != skip && contains(cols, p.col.Name) {
			parts = append(parts, paramLabel(p))
		}
	}
	return strings.Join(parts, ", ")
}

func plotSpectra(dir, pd string, m *summaryModel, formats []string) ([]string, error) {
	t, err := ecsv.ReadFile(filepath.Join(dir, "spectra", m.name+".ecsv"))
	if err != nil {
		return nil, err
	}
	ck, err := t.Floats("checkpoint")
	if err != nil {
		return nil, err
	}
	cols := map[string][]float64{}
	for _, c := range []string{"saturation", "velocity_kms", "I", "Q", "U", "V"} {
		if cols[c], err = t.Floats(c); err != nil {
			return nil, err
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
		return nil, fmt.Errorf("%s: no rows", t.File)
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
	title := m.name + " (" + m.species + ")\n" + strings.Join(params, ", ")
	head := m.name + " (" + m.species + "), R/Γ = " + number(last.sat)
	if !m.valid[len(m.valid)-1] {
		head += ", outside R/gΩ ≤ 0.1"
	}
	fig := figures.Spectra(head+"\n"+strings.Join(params, ", "), vel, []figures.Stokes{stokes(last, false)})
	out, err := fig.Save(filepath.Join(pd, m.name+"_spectra"), formats)
	if err != nil || len(blocks) < 2 {
		return out, err
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
	ev := figures.Spectra(title, vel, sts)
	for i, p := range []string{"I/I_peak", "Q/I_peak", "U/I_peak", "V/I_peak"} {
		ev.Panels[i].YLabel = p
	}
	more, err := ev.Save(filepath.Join(pd, m.name+"_evolution"), formats)
	return append(out, more...), err
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
	out := []figures.Curve{a}
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

func figName(base string, k, n int) string {
	if n == 1 {
		return base
	}
	return fmt.Sprintf("%s_%d", base, k+1)
}

func plotSaturation(pd string, models []*summaryModel, formats []string) ([]string, error) {
	cols, sp := varying(models)
	// With many models, one figure per value of the first varying
	// parameter, curves for the others; then chunks of maxCurves.
	type group struct {
		title string
		ms    []*summaryModel
	}
	groups := []*group{{title: "", ms: models}}
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
				g = &group{title: paramLabel(p)}
				idx[v] = g
				groups = append(groups, g)
			}
			g.ms = append(g.ms, m)
		}
		cols = cols[1:]
	}
	type figure struct {
		title string
		ms    []*summaryModel
	}
	var figs []figure
	for _, g := range groups {
		for _, c := range chunks(g.ms, maxCurves) {
			figs = append(figs, figure{g.title, c})
		}
	}
	var out []string
	for k, f := range figs {
		var ml, pv []figures.Curve
		anyInvalid := false
		for i, m := range f.ms {
			lab := label(m, cols, sp, "")
			if lab == "" {
				lab = m.name
			}
			ml = append(ml, splitCurves(m.sat, m.ml, m.valid, lab, i)...)
			pv = append(pv, splitCurves(m.sat, m.pv, m.valid, "", i)...)
			for _, v := range m.valid {
				anyInvalid = anyInvalid || !v
			}
		}
		title := "polarization against saturation"
		if f.title != "" {
			title += ", " + f.title
		}
		if anyInvalid {
			title += "\nmarkers: outside R/gΩ ≤ 0.1"
		}
		fig := figures.Saturation(title, ml, pv)
		fig.Panels[0].LegendLeft = true
		p, err := fig.Save(filepath.Join(pd, figName("saturation", k, len(figs))), formats)
		out = append(out, p...)
		if err != nil {
			return out, err
		}
	}
	return out, nil
}

func plotTheta(pd string, models []*summaryModel, formats []string) ([]string, error) {
	cols, sp := varying(models)
	if !contains(cols, "theta_deg") {
		return nil, nil
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
	var out []string
	for k, part := range parts {
		var ml, ev []figures.Curve
		anyInvalid := false
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
			}
			ml, ev = append(ml, c1), append(ev, c2)
		}
		title := "at the last checkpoint"
		if anyInvalid {
			title += "; some points outside R/gΩ ≤ 0.1"
		}
		p, err := figures.Theta(title, ml, ev).Save(filepath.Join(pd, figName("theta", k, len(parts))), formats)
		out = append(out, p...)
		if err != nil {
			return out, err
		}
	}
	return out, nil
}
