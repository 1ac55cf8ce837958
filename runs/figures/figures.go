package figures

import (
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
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
)

// DPI of PNG output.
const DPI = 300

// Formats lists the file formats Save writes.
var Formats = []string{"png", "svg", "pdf", "eps"}

// Curve is one line of a panel, in display units.
type Curve struct {
	Label  string // legend text; "" = no legend entry
	X, Y   []float64
	Style  int  // colour and dash index; curves with the same Style look alike
	Points bool // draw markers as well as the line
}

// Panel is one plot of a stack.
type Panel struct {
	YLabel string // with unit, e.g. "I (K)"
	Curves []Curve
	Legend bool
	// LegendLeft puts the legend top left instead of top right.
	LegendLeft bool
	LogY       bool
	// Solid draws every curve solid (colour alone tells them apart), for
	// dense diagrams.
	Solid bool
	// ZeroLine draws a thin horizontal line at y = 0 (for Q, U, V).
	ZeroLine bool
}

// Stack is a figure of panels stacked vertically, sharing the x axis.
type Stack struct {
	Title  string
	XLabel string // with unit
	LogX   bool
	Panels []Panel
	// PanelHeight is the height of each panel; default 1.1 in.
	PanelHeight vg.Length
}

// Save draws the stack and writes base.<format> for each format; it
// returns the paths written. Each file is written to a temporary name in
// the same directory and renamed, so a crash leaves no partial figure.
func (s *Stack) Save(base string, formats []string) ([]string, error) {
	plots, err := s.plots()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", base, err)
	}
	h := s.PanelHeight
	if h == 0 {
		h = 1.1 * vg.Inch
	}
	height := h*vg.Length(len(plots)) + 0.35*vg.Inch
	var out []string
	for _, f := range formats {
		path := base + "." + f
		if err := write(path, f, ColumnWidth, height, plots); err != nil {
			return out, err
		}
		out = append(out, path)
	}
	return out, nil
}

func (s *Stack) plots() ([]*plot.Plot, error) {
	if len(s.Panels) == 0 {
		return nil, fmt.Errorf("figure has no panels")
	}
	xmin, xmax := math.Inf(1), math.Inf(-1)
	for _, pn := range s.Panels {
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
		return nil, fmt.Errorf("figure %q has no finite data", s.Title)
	}
	if xmin == xmax {
		xmin, xmax = xmin-0.5, xmax+0.5
		if s.LogX {
			xmin, xmax = xmin/2, xmax*2
		}
	}
	plots := make([]*plot.Plot, len(s.Panels))
	for i, pn := range s.Panels {
		p := plot.New()
		style(p)
		if i == 0 && s.Title != "" {
			p.Title.Text = s.Title
		}
		p.Y.Label.Text = pn.YLabel
		p.Legend.Left = pn.LegendLeft
		p.X.Min, p.X.Max = xmin, xmax
		p.X.Tick.Marker, p.Y.Tick.Marker = niceTicks{}, niceTicks{}
		if s.LogX {
			p.X.Scale = plot.LogScale{}
			p.X.Tick.Marker = plot.LogTicks{Prec: -1}
		}
		if pn.LogY {
			p.Y.Scale = plot.LogScale{}
			p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
		}
		if i == len(s.Panels)-1 {
			p.X.Label.Text = s.XLabel
		} else {
			p.X.Tick.Marker = unlabelled{p.X.Tick.Marker}
		}
		if pn.ZeroLine {
			z := plotter.NewFunction(func(float64) float64 { return 0 })
			z.Color = color.Gray{Y: 160}
			z.Width = vg.Points(0.4)
			p.Add(z)
		}
		for _, c := range pn.Curves {
			xy := make(plotter.XYs, 0, len(c.X))
			for k := range c.X {
				if usable(c.X[k], s.LogX) && usable(c.Y[k], pn.LogY) {
					xy = append(xy, plotter.XY{X: c.X[k], Y: c.Y[k]})
				}
			}
			if len(xy) == 0 {
				continue
			}
			l, err := plotter.NewLine(xy)
			if err != nil {
				return nil, err
			}
			l.Color = plotutil.Color(c.Style)
			if !pn.Solid {
				l.Dashes = plotutil.Dashes(c.Style)
			}
			l.Width = vg.Points(0.9)
			if pn.Solid {
				l.Width = vg.Points(0.6)
			}
			p.Add(l)
			var thumb plot.Thumbnailer = l
			if c.Points {
				sc, err := plotter.NewScatter(xy)
				if err != nil {
					return nil, err
				}
				sc.Color = l.Color
				sc.Shape = plotutil.Shape(c.Style)
				sc.Radius = vg.Points(1.6)
				p.Add(sc)
				if pn.Legend && c.Label != "" {
					p.Legend.Add(c.Label, l, sc)
				}
				continue
			}
			if pn.Legend && c.Label != "" {
				p.Legend.Add(c.Label, thumb)
			}
		}
		plots[i] = p
	}
	return plots, nil
}

func usable(x float64, log bool) bool {
	return !math.IsNaN(x) && !math.IsInf(x, 0) && (!log || x > 0)
}

func style(p *plot.Plot) {
	p.Title.TextStyle.Font.Size = vg.Points(titleSize)
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = vg.Points(labelSize)
		a.Tick.Label.Font.Size = vg.Points(tickSize)
		a.Padding = vg.Points(2)
	}
	p.Legend.TextStyle.Font.Size = vg.Points(legendSize)
	p.Legend.Top = true
	p.Legend.ThumbnailWidth = vg.Points(14)
	p.Legend.Padding = vg.Points(1)
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 225}
	g.Horizontal.Color = color.Gray{Y: 225}
	g.Vertical.Width = vg.Points(0.3)
	g.Horizontal.Width = vg.Points(0.3)
	p.Add(g)
}

// niceTicks places ticks like plot.DefaultTicks but labels them with at
// most four significant digits, and labels a tick at rounding distance
// from zero as 0.
type niceTicks struct{}

func (niceTicks) Ticks(min, max float64) []plot.Tick {
	t := plot.DefaultTicks{}.Ticks(min, max)
	for i := range t {
		if t[i].Label == "" {
			continue
		}
		x := t[i].Value
		if math.Abs(x) < 1e-9*(max-min) {
			x = 0
		}
		t[i].Label = strconv.FormatFloat(x, 'g', 4, 64)
	}
	return t
}

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

func write(path, format string, w, h vg.Length, plots []*plot.Plot) error {
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
	dc := draw.New(c)
	tiles := draw.Tiles{Rows: len(plots), Cols: 1, PadTop: vg.Points(4), PadBottom: vg.Points(2), PadLeft: vg.Points(2), PadRight: vg.Points(6), PadY: vg.Points(3)}
	grid := make([][]*plot.Plot, len(plots))
	for i, p := range plots {
		grid[i] = []*plot.Plot{p}
	}
	canvases := plot.Align(grid, tiles, dc)
	for i, p := range plots {
		p.Draw(canvases[i][0])
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, base+".tmp-*")
	if err != nil {
		return err
	}
	_, err = c.WriteTo(f)
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
