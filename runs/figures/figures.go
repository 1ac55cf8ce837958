package figures

import (
	"bytes"
	"errors"
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgeps"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgpdf"
	"gonum.org/v1/plot/vg/vgsvg"
)

// ColumnWidth is the width of a single journal column.
const ColumnWidth = 3.5 * vg.Inch

// Font sizes for a figure printed at column width (common practice:
// journals ask for 7-9 pt lettering at final size).
const (
	labelSize  = 8
	tickSize   = 7
	legendSize = 6.5
	titleSize  = 8
	noteSize   = 6.5
)

// DefaultMaxLegend is the most legend entries a panel shows; the rest are
// summarised as "+N more" (a longer legend is no longer read).
const DefaultMaxLegend = 6

// DPI of PNG output.
const DPI = 300

// Formats lists the file formats Save writes.
var Formats = []string{"png", "svg", "pdf", "eps"}

// ErrNoData is returned by Save for a figure with nothing to draw; callers
// typically skip such a figure with a note.
var ErrNoData = errors.New("nothing to draw")

// Curve is one line of a panel, in display units.
type Curve struct {
	Label  string // legend text; "" = no legend entry
	X, Y   []float64
	Style  int  // colour and dash index; curves with the same Style look alike
	Points bool // draw markers as well as the line
	NoLine bool // markers only (scattered points such as random draws)
	// BreakAbove, when > 0, leaves out the line between neighbouring
	// points whose y values differ by more than it (an EVPA that flips by
	// 90 deg is not a smooth change); markers still show every point.
	BreakAbove float64
	// YErr, when set, holds a 1-sigma error per point, drawn as error
	// bars (measured data).
	YErr []float64
}

// Band is a shaded region between two curves, e.g. the range a family
// of models spans; it is drawn under the curves, in the colour of Style.
type Band struct {
	Label     string
	X, Lo, Hi []float64
	Style     int
	// Alpha is the opacity of the fill (0 = 0.25).
	Alpha float64
}

// Panel is one plot of a stack.
type Panel struct {
	YLabel string // with unit, e.g. "I (K)"
	Curves []Curve
	// Legend draws a legend for the labelled curves. Legends sit in a row
	// above the panel, outside the data area, in as many columns as fit.
	Legend bool
	// LegendLeft is kept for callers of an earlier layout; legends are
	// now always outside the data area, so it has no effect.
	LegendLeft bool
	// LegendTitle is written before the legend entries, e.g. "F1, F =".
	LegendTitle string
	// MaxLegend caps the legend entries (0 = DefaultMaxLegend).
	MaxLegend int
	LogY      bool
	// Solid draws every curve solid (colour alone tells them apart), for
	// dense diagrams.
	Solid bool
	// ZeroLine draws a thin horizontal line at y = 0 (for Q, U, V).
	ZeroLine bool
	// Note is one line of text in the top left corner of the data area.
	Note string
	// Bands are shaded regions drawn under the curves, with legend entries.
	Bands []Band
	// Extra are text-only legend entries after the curves', e.g. what the
	// markers mean.
	Extra []string
	// AutoLogY draws the y axis logarithmic when every value has the same
	// sign and they span more than two decades; negative values are then
	// drawn as their magnitude under the label "−" + YLabel.
	AutoLogY bool
	// Zeroed marks a panel whose values were set to zero because they are
	// round-off (see ZeroRoundoff): its axis shows only the tick at 0.
	Zeroed bool
}

// ZeroRoundoff sets every y value of the panel to zero and notes why when
// all of them are below tol in magnitude (e.g. V at theta = 90 deg, where
// the model gives V = 0 up to round-off); tick labels such as 6.9e-19
// would suggest a signal. It reports whether it did.
func ZeroRoundoff(pn *Panel, tol float64, note string) bool {
	if len(pn.Curves) == 0 {
		return false
	}
	for _, c := range pn.Curves {
		for _, y := range c.Y {
			if !(math.Abs(y) <= tol) {
				return false
			}
		}
	}
	for i := range pn.Curves {
		c := &pn.Curves[i]
		c.Y = make([]float64, len(c.Y))
	}
	pn.Zeroed, pn.Note = true, note
	return true
}

// Stack is a figure of panels stacked vertically, sharing the x axis.
type Stack struct {
	// Title is drawn above the panels when not empty. Journal figures
	// carry no title (the caption says what they show), so callers set it
	// only when asked to.
	Title  string
	XLabel string // with unit
	LogX   bool
	Panels []Panel
	// PanelHeight is the height of each panel; default 1.1 in.
	PanelHeight vg.Length
	// DataAreas is set by Save: the data area of each panel, in points
	// from the bottom left corner of the figure (a PNG's pixel rows run
	// from the top: row = (height - y) * DPI / 72).
	DataAreas []vg.Rectangle
	// Size is set by Save: the width and height of the figure.
	Size vg.Point
}

// Save draws the stack and writes base.<format> for each format; it
// returns the paths written. Each file is written to a temporary name in
// the same directory and renamed, so a crash leaves no partial figure. A
// figure without finite data returns an error wrapping ErrNoData.
func (s *Stack) Save(base string, formats []string) (out []string, err error) {
	// gonum/plot panics on some degenerate inputs; a figure must never
	// take the program down, so a panic becomes an error.
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("%s: drawing the figure failed: %v", base, p)
		}
	}()
	fig, err := s.layout()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", base, err)
	}
	for _, f := range formats {
		path := base + "." + f
		if err := write(path, f, fig); err != nil {
			return out, err
		}
		out = append(out, path)
	}
	s.DataAreas, s.Size = fig.areas, vg.Point{X: fig.w, Y: fig.h}
	return out, nil
}

// legendEntry is one legend item: text and the thumbnails that show the
// curve's style (none for a text-only item such as "+3 more").
type legendEntry struct {
	text   string
	thumbs []plot.Thumbnailer
}

// panelDrawing is a panel ready to draw.
type panelDrawing struct {
	p      *plot.Plot
	legend []legendEntry
	note   string
}

// figure is a stack ready to draw at a given size.
type figure struct {
	title  string
	panels []panelDrawing
	w, h   vg.Length
	panelH vg.Length
	areas  []vg.Rectangle // data areas as drawn
}

func (s *Stack) layout() (*figure, error) {
	if len(s.Panels) == 0 {
		return nil, fmt.Errorf("figure has no panels")
	}
	panels := make([]Panel, len(s.Panels))
	for i, pn := range s.Panels {
		panels[i] = autoLog(pn)
	}
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, pn := range panels {
		for _, b := range pn.Bands {
			if len(b.X) != len(b.Lo) || len(b.X) != len(b.Hi) {
				return nil, fmt.Errorf("band %q: %d x values, %d and %d y values", b.Label, len(b.X), len(b.Lo), len(b.Hi))
			}
			for i, x := range b.X {
				if usable(x, s.LogX) && usable(b.Lo[i], pn.LogY) && usable(b.Hi[i], pn.LogY) {
					xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
				}
			}
		}
		for _, c := range pn.Curves {
			if len(c.X) != len(c.Y) {
				return nil, fmt.Errorf("curve %q: %d x values, %d y values", c.Label, len(c.X), len(c.Y))
			}
			for i, x := range c.X {
				if usable(x, s.LogX) && usable(c.Y[i], pn.LogY) {
					xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
				}
			}
		}
	}
	if xmin > xmax {
		return nil, fmt.Errorf("figure %q: %w (no finite data)", firstLine(s.Title), ErrNoData)
	}
	xmin, xmax = widen(xmin, xmax, s.LogX)
	if s.LogX {
		xmin, xmax = snapDecades(xmin, xmax)
	}
	h := s.PanelHeight
	if h == 0 {
		h = 1.1 * vg.Inch
	}
	fig := &figure{title: s.Title, w: ColumnWidth, panelH: h}
	for i, pn := range panels {
		p := plot.New()
		style(p)
		p.Y.Label.Text = pn.YLabel
		p.X.Min, p.X.Max = xmin, xmax
		p.X.Tick.Marker, p.Y.Tick.Marker = stepTicks{maxLabels: 7}, stepTicks{maxLabels: 6}
		if s.LogX {
			p.X.Scale = plot.LogScale{}
			p.X.Tick.Marker = decadeTicks{}
		}
		if i == len(s.Panels)-1 {
			p.X.Label.Text = s.XLabel
		} else {
			p.X.Tick.Marker = unlabelled{p.X.Tick.Marker}
		}
		if pn.ZeroLine || pn.Zeroed {
			z := plotter.NewFunction(func(float64) float64 { return 0 })
			z.Color = color.Gray{Y: 160}
			z.Width = vg.Points(0.4)
			p.Add(z)
		}
		pd := panelDrawing{p: p, note: pn.Note}
		// Very large or small values are drawn in units of a power of
		// ten named in the axis label, so that ticks read 2, 4, 6.
		yscale := 1.0
		if e := powerOfTen(pn, s.LogX); e != 0 {
			yscale = math.Pow(10, float64(-e))
			p.Y.Label.Text = scaledLabel(pn.YLabel, e)
		}
		ymin, ymax := math.Inf(1), math.Inf(-1)
		for _, b := range pn.Bands {
			poly, ok := bandPolygon(b, s.LogX, pn.LogY, yscale)
			if !ok {
				continue
			}
			for _, q := range poly {
				ymin, ymax = math.Min(ymin, q.Y), math.Max(ymax, q.Y)
			}
			pg, err := plotter.NewPolygon(poly)
			if err != nil {
				return nil, err
			}
			alpha := b.Alpha
			if alpha <= 0 {
				alpha = 0.25
			}
			pg.Color = withAlpha(Color(b.Style), alpha)
			pg.LineStyle.Width = 0
			p.Add(pg)
			if pn.Legend && b.Label != "" {
				pd.legend = append(pd.legend, legendEntry{b.Label, []plot.Thumbnailer{pg}})
			}
		}
		for _, c := range pn.Curves {
			xy := make(plotter.XYs, 0, len(c.X))
			var yerr plotter.YErrors
			for k := range c.X {
				if usable(c.X[k], s.LogX) && usable(c.Y[k], pn.LogY) {
					y := c.Y[k] * yscale
					xy = append(xy, plotter.XY{X: c.X[k], Y: y})
					ymin, ymax = math.Min(ymin, y), math.Max(ymax, y)
					if k < len(c.YErr) {
						e := math.Abs(c.YErr[k] * yscale)
						if math.IsNaN(e) || math.IsInf(e, 0) {
							e = 0
						}
						yerr = append(yerr, struct{ Low, High float64 }{e, e})
						if !pn.LogY {
							ymin, ymax = math.Min(ymin, y-e), math.Max(ymax, y+e)
						}
					}
				}
			}
			if len(xy) == 0 {
				continue
			}
			thumbs, err := addCurve(p, c, xy, pn.Solid)
			if err != nil {
				return nil, err
			}
			if len(yerr) == len(xy) {
				eb, err := plotter.NewYErrorBars(struct {
					plotter.XYs
					plotter.YErrors
				}{xy, yerr})
				if err != nil {
					return nil, err
				}
				eb.Color = Color(c.Style)
				eb.Width = vg.Points(0.5)
				eb.CapWidth = vg.Points(1.5)
				p.Add(eb)
			}
			if pn.Legend && c.Label != "" {
				pd.legend = append(pd.legend, legendEntry{c.Label, thumbs})
			}
		}
		// A linear axis of values that start near zero includes zero, so
		// that sizes compare by eye (common practice).
		if !pn.LogY && !pn.Zeroed && ymin >= 0 && ymin < 0.2*ymax {
			p.Y.Min = 0
		}
		switch {
		case pn.Zeroed:
			p.Y.Min, p.Y.Max = -1, 1
			p.Y.Tick.Marker = zeroTick{}
		case pn.LogY:
			p.Y.Scale = plot.LogScale{}
			p.Y.Tick.Marker = decadeTicks{}
			if ymin > ymax { // nothing positive: an empty decade
				ymin, ymax = 1, 10
				if pd.note == "" {
					pd.note = "no positive values"
				}
			}
			// Fix the range so that a single value never collapses the
			// log axis onto zero.
			p.Y.Min, p.Y.Max = widen(ymin, ymax, true)
		}
		pd.legend = capLegend(pd.legend, pn.MaxLegend)
		for _, e := range pn.Extra {
			pd.legend = append(pd.legend, legendEntry{text: e})
		}
		if pn.LegendTitle != "" && len(pd.legend) > 0 {
			pd.legend = append([]legendEntry{{text: pn.LegendTitle}}, pd.legend...)
		}
		fig.panels = append(fig.panels, pd)
	}
	fig.h = h*vg.Length(len(fig.panels)) + 0.35*vg.Inch + fig.titleHeight()
	for _, pd := range fig.panels {
		fig.h += fig.legendHeight(pd.legend)
	}
	return fig, nil
}

// autoLog returns the panel with a log y axis when AutoLogY is set and its
// values (curves and bands) share one sign and span more than two decades
// (common practice: below that a linear axis reads better).
func autoLog(pn Panel) Panel {
	if !pn.AutoLogY || pn.LogY || pn.Zeroed {
		return pn
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	pos, neg := 0, 0
	see := func(y float64) {
		if math.IsNaN(y) || math.IsInf(y, 0) {
			return
		}
		switch {
		case y > 0:
			pos++
		case y < 0:
			neg++
		default:
			pos, neg = pos+1, neg+1 // a zero forbids a log axis
		}
		lo, hi = math.Min(lo, math.Abs(y)), math.Max(hi, math.Abs(y))
	}
	for _, c := range pn.Curves {
		for _, y := range c.Y {
			see(y)
		}
	}
	for _, b := range pn.Bands {
		for k := range b.X {
			see(b.Lo[k])
			see(b.Hi[k])
		}
	}
	if pos > 0 && neg > 0 || pos+neg == 0 || !(lo > 0) || hi/lo <= 100 {
		return pn
	}
	pn.LogY = true
	if neg > 0 {
		flip := func(y []float64) []float64 {
			out := make([]float64, len(y))
			for i, v := range y {
				out[i] = -v
			}
			return out
		}
		pn.YLabel = "−" + pn.YLabel
		cs := make([]Curve, len(pn.Curves))
		for i, c := range pn.Curves {
			c.Y = flip(c.Y)
			cs[i] = c
		}
		bs := make([]Band, len(pn.Bands))
		for i, b := range pn.Bands {
			b.Lo, b.Hi = flip(b.Hi), flip(b.Lo)
			bs[i] = b
		}
		pn.Curves, pn.Bands = cs, bs
	}
	return pn
}

// bandPolygon is the outline of a band: along Hi, back along Lo, over the
// points where both are drawable.
func bandPolygon(b Band, logX, logY bool, yscale float64) (plotter.XYs, bool) {
	var up, down plotter.XYs
	for k, x := range b.X {
		if usable(x, logX) && usable(b.Lo[k], logY) && usable(b.Hi[k], logY) {
			up = append(up, plotter.XY{X: x, Y: b.Hi[k] * yscale})
			down = append(down, plotter.XY{X: x, Y: b.Lo[k] * yscale})
		}
	}
	if len(up) < 2 {
		return nil, false
	}
	for k := len(down) - 1; k >= 0; k-- {
		up = append(up, down[k])
	}
	return up, true
}

func withAlpha(c color.Color, a float64) color.Color {
	r, g, b, _ := c.RGBA()
	return color.NRGBA{R: uint8(r >> 8), G: uint8(g >> 8), B: uint8(b >> 8), A: uint8(math.Round(255 * a))}
}

// powerOfTen returns the exponent e of the unit 10^e in which a linear
// panel is drawn: 0 unless its largest |y| is 1e4 or more, or below 1e-2.
func powerOfTen(pn Panel, logX bool) int {
	if pn.LogY || pn.Zeroed {
		return 0
	}
	m := 0.0
	for _, c := range pn.Curves {
		for k, y := range c.Y {
			if k < len(c.X) && usable(c.X[k], logX) && usable(y, false) {
				m = math.Max(m, math.Abs(y))
			}
		}
	}
	for _, b := range pn.Bands {
		for k := range b.X {
			if usable(b.X[k], logX) {
				for _, y := range []float64{b.Lo[k], b.Hi[k]} {
					if usable(y, false) {
						m = math.Max(m, math.Abs(y))
					}
				}
			}
		}
	}
	if m == 0 || m >= 1e-2 && m < 1e4 {
		return 0
	}
	return int(math.Floor(math.Log10(m)))
}

// scaledLabel puts the power of ten into an axis label: "I (K)" becomes
// "I (10^{8} K)", "m_l" becomes "m_l (10^{-5})", drawn as superscripts by
// the Scripts text handler.
func scaledLabel(label string, e int) string {
	p := "10^{" + strconv.Itoa(e) + "}"
	if i := strings.LastIndex(label, "("); i >= 0 && strings.HasSuffix(label, ")") {
		return label[:i+1] + p + " " + label[i+1:]
	}
	return label + " (" + p + ")"
}

// addCurve adds the line (and markers) of one curve and returns the
// thumbnails for its legend entry. A curve with fewer than two points is
// drawn as a marker: a line needs two.
func addCurve(p *plot.Plot, c Curve, xy plotter.XYs, solid bool) ([]plot.Thumbnailer, error) {
	col := Color(c.Style)
	var thumbs []plot.Thumbnailer
	markers := c.Points
	for _, seg := range segments(xy, c.BreakAbove) {
		if c.NoLine {
			markers = true
			continue
		}
		if len(seg) < 2 {
			markers = true
			continue
		}
		l, err := plotter.NewLine(seg)
		if err != nil {
			return nil, err
		}
		l.Color = col
		l.Width = vg.Points(0.9)
		if solid {
			l.Width = vg.Points(0.6)
		} else {
			l.Dashes = plotutil.Dashes(c.Style)
		}
		p.Add(l)
		if len(thumbs) == 0 {
			thumbs = append(thumbs, l)
		}
	}
	if markers {
		sc, err := plotter.NewScatter(xy)
		if err != nil {
			return nil, err
		}
		sc.Color = col
		sc.Shape = plotutil.Shape(c.Style)
		sc.Radius = vg.Points(1.6)
		p.Add(sc)
		thumbs = append(thumbs, sc)
	}
	return thumbs, nil
}

// segments splits a curve where y jumps by more than breakAbove (> 0).
func segments(xy plotter.XYs, breakAbove float64) []plotter.XYs {
	if breakAbove <= 0 {
		return []plotter.XYs{xy}
	}
	var segs []plotter.XYs
	from := 0
	for k := 1; k <= len(xy); k++ {
		if k == len(xy) || math.Abs(xy[k].Y-xy[k-1].Y) > breakAbove {
			segs = append(segs, xy[from:k])
			from = k
		}
	}
	return segs
}

// capLegend keeps the first max entries and summarises the rest.
func capLegend(es []legendEntry, max int) []legendEntry {
	if max <= 0 {
		max = DefaultMaxLegend
	}
	if len(es) <= max {
		return es
	}
	n := len(es) - max
	return append(es[:max:max], legendEntry{text: "+" + strconv.Itoa(n) + " more"})
}

// widen makes a range of positive length; on a log axis it stays positive.
func widen(lo, hi float64, log bool) (float64, float64) {
	if lo < hi {
		return lo, hi
	}
	if log {
		return lo / 2, hi * 2
	}
	d := math.Abs(lo) * 0.1
	if d == 0 {
		d = 0.5
	}
	return lo - d, hi + d
}

// snapDecades moves the ends of a log range onto a power of ten within 3 %
// (a column grown to R/Gamma = 99.98 reads as ending at 100, labelled).
func snapDecades(lo, hi float64) (float64, float64) {
	if d := math.Pow(10, math.Floor(math.Log10(lo))); lo < d*1.03 {
		lo = d
	}
	if d := math.Pow(10, math.Ceil(math.Log10(hi))); hi > d/1.03 {
		hi = d
	}
	return lo, hi
}

func usable(x float64, log bool) bool {
	return !math.IsNaN(x) && !math.IsInf(x, 0) && (!log || x > 0)
}

func firstLine(s string) string {
	a, _, _ := strings.Cut(s, "\n")
	return a
}

// palette is the Okabe & Ito (2008) colour-blind-safe set, without its
// yellow (too pale on white), extended by three distinct darker tones for
// dense diagrams.
var palette = []color.Color{
	color.RGBA{0x00, 0x72, 0xb2, 0xff}, // blue
	color.RGBA{0xd5, 0x5e, 0x00, 0xff}, // vermillion
	color.RGBA{0x00, 0x9e, 0x73, 0xff}, // bluish green
	color.RGBA{0xcc, 0x79, 0xa7, 0xff}, // reddish purple
	color.RGBA{0xe6, 0x9f, 0x00, 0xff}, // orange
	color.RGBA{0x56, 0xb4, 0xe9, 0xff}, // sky blue
	color.RGBA{0x00, 0x00, 0x00, 0xff}, // black
	color.RGBA{0x8c, 0x51, 0x0a, 0xff}, // brown
	color.RGBA{0x7f, 0x7f, 0x7f, 0xff}, // grey
	color.RGBA{0x6a, 0x3d, 0x9a, 0xff}, // violet
}

// Color is the colour of curve style i.
func Color(i int) color.Color {
	n := len(palette)
	return palette[((i%n)+n)%n]
}

// handler draws every text of a figure, with sub- and superscripts.
var handler = Scripts{Fonts: font.DefaultCache}

func style(p *plot.Plot) {
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Handler = handler
		a.Tick.Label.Handler = handler
		a.Label.TextStyle.Font.Size = vg.Points(labelSize)
		a.Tick.Label.Font.Size = vg.Points(tickSize)
		a.Padding = vg.Points(2)
	}
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 225}
	g.Horizontal.Color = color.Gray{Y: 225}
	g.Vertical.Width = vg.Points(0.3)
	g.Horizontal.Width = vg.Points(0.3)
	p.Add(g)
}

// stepTicks puts major ticks at every multiple of a step of 1, 2 or 5
// times a power of ten (so fractions read 0, 0.1, 0.2 ... and zero is
// always a tick when in range), with three to six labels, and labels them
// with the digits the step needs.
type stepTicks struct {
	maxLabels int // horizontal axes have room for more labels than vertical ones
}

func (t stepTicks) Ticks(min, max float64) []plot.Tick {
	if !(max > min) || math.IsInf(min, 0) || math.IsInf(max, 0) {
		return plot.DefaultTicks{}.Ticks(min, max)
	}
	step, minor := tickStep(min, max, t.maxLabels)
	var ts []plot.Tick
	k0, k1 := math.Ceil(min/minor-1e-9), math.Floor(max/minor+1e-9)
	per := math.Round(step / minor)
	for k := k0; k <= k1; k++ {
		x := k * minor
		if math.Abs(x) < 1e-9*step {
			x = 0
		}
		tk := plot.Tick{Value: x}
		if math.Mod(math.Abs(k), per) == 0 {
			tk.Label = tickLabel(x, step)
		}
		ts = append(ts, tk)
	}
	return ts
}

// tickStep picks the major step with a label count nearest to five (at
// most maxLabels, at least three when possible; on a tie the finer step)
// and the minor step.
func tickStep(min, max float64, maxLabels int) (step, minor float64) {
	if maxLabels < 3 {
		maxLabels = 6
	}
	span := max - min
	e := math.Floor(math.Log10(span))
	best, bestScore := 0.0, math.Inf(1)
	for p := e - 2; p <= e+1; p++ {
		for _, m := range []float64{1, 2, 5} {
			s := m * math.Pow(10, p)
			n := math.Floor(max/s+1e-9) - math.Ceil(min/s-1e-9) + 1
			if n > float64(maxLabels) || n < 2 {
				continue
			}
			score := math.Abs(n - 5)
			if n < 3 {
				score += 3
			}
			if score < bestScore || score == bestScore && s < best {
				best, bestScore = s, score
			}
		}
	}
	if best == 0 {
		best = math.Pow(10, e)
	}
	m := best / math.Pow(10, math.Floor(math.Log10(best)+1e-9))
	if math.Abs(m-5) < 1e-6 {
		return best, best / 5
	}
	return best, best / 2
}

func tickLabel(x, step float64) string {
	if x == 0 {
		return "0"
	}
	ax := math.Abs(x)
	if ax >= 1e6 || step < 1e-4 {
		// Enough digits to tell neighbouring ticks apart.
		d := int(math.Ceil(math.Log10(ax/step)-1e-9)) + 1
		return strconv.FormatFloat(x, 'g', max(d, 1), 64)
	}
	dec := max(0, int(-math.Floor(math.Log10(step)+1e-9)))
	return strconv.FormatFloat(x, 'f', dec, 64)
}

// decadeTicks are log-axis ticks labelled at powers of ten: as plain
// numbers (0.01, 0.1, 1, 10, 100) when every label lies within 1e-3 to
// 1e4, else all as 10^{k}, drawn with a superscript.
type decadeTicks struct{}

func (decadeTicks) Ticks(min, max float64) []plot.Tick {
	ts := plot.LogTicks{Prec: -1}.Ticks(min, max)
	sci := false
	for _, t := range ts {
		if t.Label != "" && (t.Value < 0.999e-3 || t.Value > 1.001e4) {
			sci = true
		}
	}
	if sci {
		for i, t := range ts {
			if t.Label != "" {
				ts[i].Label = "10^{" + strconv.Itoa(int(math.Round(math.Log10(t.Value)))) + "}"
			}
		}
	}
	return ts
}

// zeroTick labels only y = 0, for panels of values that are zero.
type zeroTick struct{}

func (zeroTick) Ticks(min, max float64) []plot.Tick { return []plot.Tick{{Value: 0, Label: "0"}} }

// unlabelled keeps the tick positions of an axis but drops their labels,
// for the upper panels of a stack.
type unlabelled struct{ plot.Ticker }

func (u unlabelled) Ticks(min, max float64) []plot.Tick {
	t := u.Ticker.Ticks(min, max)
	for i := range t {
		t[i].Label = ""
	}
	return t
}

// textStyle is a plain text style of the given size in the default font.
func textStyle(size float64) text.Style {
	p := plot.New()
	st := p.Legend.TextStyle
	st.Handler = handler
	st.Font.Size = vg.Points(size)
	st.Color = color.Black
	return st
}

const (
	legendThumb  = 14 // pt, thumbnail width
	legendGap    = 3  // pt, between thumbnail and text
	legendColGap = 8  // pt, between columns
)

// legendWidth is the width available to legends: the figure less a
// generous allowance for the y axis and the right padding.
func (f *figure) legendWidth() vg.Length { return f.w - 0.75*vg.Inch }

// legendGrid returns the column count and the column width of a legend.
func (f *figure) legendGrid(es []legendEntry) (cols int, colW vg.Length) {
	st := textStyle(legendSize)
	for _, e := range es {
		w := st.Width(e.text)
		if len(e.thumbs) > 0 {
			w += vg.Points(legendThumb + legendGap)
		}
		colW = max(colW, w+vg.Points(legendColGap))
	}
	cols = max(1, min(len(es), int(f.legendWidth()/colW)))
	return cols, colW
}

func (f *figure) legendHeight(es []legendEntry) vg.Length {
	if len(es) == 0 {
		return 0
	}
	cols, _ := f.legendGrid(es)
	rows := (len(es) + cols - 1) / cols
	return vg.Length(rows)*rowHeight() + vg.Points(3)
}

func rowHeight() vg.Length { return vg.Points(legendSize * 1.3) }

func (f *figure) titleHeight() vg.Length {
	if f.title == "" {
		return 0
	}
	n := len(strings.Split(f.title, "\n"))
	return vg.Points(titleSize*1.25*float64(n) + 3)
}

// drawLegend draws entries row by row in the rectangle whose top left
// corner is (x, top).
func (f *figure) drawLegend(c draw.Canvas, es []legendEntry, x, top vg.Length) {
	cols, colW := f.legendGrid(es)
	st := textStyle(legendSize)
	st.YAlign = text.YCenter
	rh := rowHeight()
	for i, e := range es {
		r, k := i/cols, i%cols
		x0 := x + vg.Length(k)*colW
		yc := top - vg.Length(r)*rh - rh/2
		tx := x0
		if len(e.thumbs) > 0 {
			icon := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
				Min: vg.Point{X: x0, Y: yc - rh/2},
				Max: vg.Point{X: x0 + vg.Points(legendThumb), Y: yc + rh/2},
			}}
			for _, t := range e.thumbs {
				t.Thumbnail(&icon)
			}
			tx += vg.Points(legendThumb + legendGap)
		}
		c.FillText(st, vg.Point{X: tx, Y: yc}, e.text)
	}
}

func write(path, format string, fig *figure) error {
	w, h := fig.w, fig.h
	var c vg.CanvasWriterTo
	switch strings.ToLower(format) {
	case "png":
		c = vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(DPI), vgimg.UseBackgroundColor(color.White))}
	case "svg":
		c = vgsvg.New(w, h)
	case "pdf":
		c = vgpdf.New(w, h)
	case "eps":
		c = vgeps.New(w, h)
	default:
		return fmt.Errorf("%s: unknown figure format %q (allowed: %s)", path, format, strings.Join(Formats, ", "))
	}
	fig.draw(draw.New(c))
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, base+".tmp-*")
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if _, err = c.WriteTo(&buf); err == nil {
		b := buf.Bytes()
		if strings.ToLower(format) == "eps" {
			b = fixEPS(b)
		}
		_, err = f.Write(b)
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(f.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(f.Name(), path)
	}
	if err != nil {
		os.Remove(f.Name())
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}

// fixEPS repairs the header comments of gonum/plot's EPS output (v0.17) so
// that it is valid Encapsulated PostScript (Adobe DSC 3.0 and EPSF 3.0
// specifications): the file must begin with "%!PS-Adobe-3.0 EPSF-3.0" (it
// writes "%%!PS..."), "%%Creator:" needs its colon, and %%BoundingBox takes
// integers (the exact box goes to %%HiResBoundingBox).
func fixEPS(b []byte) []byte {
	s := string(b)
	s = strings.Replace(s, "%%!PS-Adobe-3.0 EPSF-3.0\n", "%!PS-Adobe-3.0 EPSF-3.0\n", 1)
	s = strings.Replace(s, "%%Creator gonum", "%%Creator: maserpol with gonum", 1)
	if i := strings.Index(s, "%%BoundingBox:"); i >= 0 {
		j := i + strings.IndexByte(s[i:], '\n')
		f := strings.Fields(s[i+len("%%BoundingBox:") : j])
		if len(f) == 4 {
			var v [4]float64
			for k := range f {
				v[k], _ = strconv.ParseFloat(f[k], 64)
			}
			box := fmt.Sprintf("%%%%BoundingBox: %d %d %d %d\n%%%%HiResBoundingBox: %s %s %s %s",
				int(math.Floor(v[0])), int(math.Floor(v[1])), int(math.Ceil(v[2])), int(math.Ceil(v[3])), f[0], f[1], f[2], f[3])
			s = s[:i] + box + s[j:]
		}
	}
	return []byte(s)
}

// draw lays the figure out top down: title, then for each panel its
// legend row and the panel. The panels are aligned by plot.Align so that
// their data areas share left and right edges and heights.
func (f *figure) draw(dc draw.Canvas) {
	top := dc.Max.Y
	th := f.titleHeight()
	lh := make([]vg.Length, len(f.panels))
	var sum vg.Length
	for i, pd := range f.panels {
		lh[i] = f.legendHeight(pd.legend)
		sum += lh[i]
	}
	area := dc
	area.Max.Y = top - th - sum
	tiles := draw.Tiles{Rows: len(f.panels), Cols: 1, PadTop: vg.Points(4), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(6), PadY: vg.Points(3)}
	grid := make([][]*plot.Plot, len(f.panels))
	for i, pd := range f.panels {
		grid[i] = []*plot.Plot{pd.p}
	}
	canvases := plot.Align(grid, tiles, area)
	// Each panel moves up by the legend rows below it, which sit between
	// it and the panels under it.
	shift := make([]vg.Length, len(f.panels))
	for i := len(f.panels) - 2; i >= 0; i-- {
		shift[i] = shift[i+1] + lh[i+1]
	}
	dataLeft := dc.Min.X
	for i, pd := range f.panels {
		c := canvases[i][0]
		c.Min.Y += shift[i]
		c.Max.Y += shift[i]
		pd.p.Draw(c)
		data := pd.p.DataCanvas(c)
		if i == 0 {
			f.areas = f.areas[:0]
		}
		f.areas = append(f.areas, data.Rectangle)
		dataLeft = data.Min.X
		if pd.note != "" {
			st := textStyle(noteSize)
			st.YAlign = text.YTop
			st.Color = color.Gray{Y: 60}
			data.FillText(st, vg.Point{X: data.Min.X + vg.Points(3), Y: data.Max.Y - vg.Points(2)}, pd.note)
		}
		if lh[i] > 0 {
			f.drawLegend(dc, pd.legend, data.Min.X, c.Max.Y+lh[i]-vg.Points(1))
		}
	}
	if f.title != "" {
		// Centred over the data area, moved (and if need be shrunk) to
		// stay inside the figure.
		lo, hi := dc.Min.X+vg.Points(2), dc.Max.X-vg.Points(2)
		for k, line := range strings.Split(f.title, "\n") {
			st := textStyle(titleSize)
			if w := st.Width(line); w > hi-lo {
				st = textStyle(math.Max(5.5, titleSize*float64((hi-lo)/w)))
			}
			st.XAlign = text.XCenter
			st.YAlign = text.YTop
			w := st.Width(line)
			mid := (dataLeft + dc.Max.X) / 2
			mid = min(mid, hi-w/2)
			mid = max(mid, lo+w/2)
			dc.FillText(st, vg.Point{X: mid, Y: top - vg.Points(2) - vg.Length(k)*vg.Points(titleSize*1.25)}, line)
		}
	}
}
