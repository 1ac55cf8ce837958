package figures

import (
	"fmt"
	"image/color"
	"math"
	"os"
	"path/filepath"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// SkyFeature is one feature of a sky map, in display units.
type SkyFeature struct {
	X, Y float64 // offset east and north (e.g. mas)
	// EVPA (rad, east of north) and Ml (fraction) draw the polarization
	// vector, of length Ml times SkyMap.VectorScale; NaN EVPA: none.
	EVPA, Ml float64
	// FieldPA (rad, east of north) draws the projected field direction,
	// of fixed length; NaN: not drawn. Ambiguous draws it dashed.
	FieldPA   float64
	Ambiguous bool
}

// SkyMap is a map of features on the sky: offsets with east to the left
// (the sky as seen), equal scales on both axes, polarization vectors
// scaled by m_l, projected field directions, and a scale bar for m_l.
type SkyMap struct {
	Title    string
	Unit     string // of the offsets, e.g. "mas"
	Features []SkyFeature
	// VectorScale is the length (offset units) of a vector with m_l = 1;
	// 0 chooses 1/8 of the map's size divided by the largest m_l.
	VectorScale float64
}

// Save writes base.<format> for each format (png, svg, pdf, eps) through
// a temporary file and a rename.
func (m *SkyMap) Save(base string, formats []string) (out []string, err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("%s: drawing the sky map failed: %v", base, p)
		}
	}()
	p, err := m.plot()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", base, err)
	}
	const width = 4.5 * vg.Inch
	const height = width * 1.125 // the y range is 1.125 times the x range
	for _, f := range formats {
		path := base + "." + f
		wt, err := p.WriterTo(width, height, f)
		if err != nil {
			return out, fmt.Errorf("%s: %w", path, err)
		}
		dir, name := filepath.Split(path)
		if dir == "" {
			dir = "."
		}
		tmp, err := os.CreateTemp(dir, name+".tmp-*")
		if err != nil {
			return out, err
		}
		_, err = wt.WriteTo(tmp)
		if cerr := tmp.Close(); err == nil {
			err = cerr
		}
		if err == nil {
			err = os.Chmod(tmp.Name(), 0o644)
		}
		if err == nil {
			err = os.Rename(tmp.Name(), path)
		}
		if err != nil {
			os.Remove(tmp.Name())
			return out, fmt.Errorf("writing %s: %w", path, err)
		}
		out = append(out, path)
	}
	return out, nil
}

func (m *SkyMap) plot() (*plot.Plot, error) {
	var pts plotter.XYs
	xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	mlMax := 0.0
	for _, f := range m.Features {
		if math.IsNaN(f.X) || math.IsNaN(f.Y) || math.IsInf(f.X, 0) || math.IsInf(f.Y, 0) {
			continue
		}
		pts = append(pts, plotter.XY{X: f.X, Y: f.Y})
		xmin, xmax = math.Min(xmin, f.X), math.Max(xmax, f.X)
		ymin, ymax = math.Min(ymin, f.Y), math.Max(ymax, f.Y)
		if !math.IsNaN(f.Ml) {
			mlMax = math.Max(mlMax, f.Ml)
		}
	}
	if len(pts) == 0 {
		return nil, ErrNoData
	}
	span := math.Max(xmax-xmin, ymax-ymin)
	if !(span > 0) {
		span = 1
	}
	scale := m.VectorScale
	if scale <= 0 {
		scale = span / 8 / math.Max(mlMax, 0.05)
	}
	fieldLen := span / 12
	cx, cy := (xmin+xmax)/2, (ymin+ymax)/2
	half := span/2 + math.Max(fieldLen, scale*mlMax/2) + span*0.05

	p := plot.New()
	p.Title.Text = m.Title
	p.Title.TextStyle.Font.Size = vg.Points(labelSize)
	style(p)
	p.X.Label.Text = "east offset (" + m.Unit + ")"
	p.Y.Label.Text = "north offset (" + m.Unit + ")"
	// East to the left: the sky as seen.
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.X.Min, p.X.Max = cx-half, cx+half
	// Room at the top for the legend.
	p.Y.Min, p.Y.Max = cy-half, cy+half*1.25

	seg := func(x, y, pa, length float64, col color.Color, width float64, dashed bool) error {
		dx, dy := math.Sin(pa)*length/2, math.Cos(pa)*length/2
		l, err := plotter.NewLine(plotter.XYs{{X: x - dx, Y: y - dy}, {X: x + dx, Y: y + dy}})
		if err != nil {
			return err
		}
		l.Color, l.Width = col, vg.Points(width)
		if dashed {
			l.Dashes = []vg.Length{vg.Points(2), vg.Points(1.5)}
		}
		p.Add(l)
		return nil
	}
	evpaCol, fieldCol := Color(0), Color(1)
	anyField, anyAmb := false, false
	for _, f := range m.Features {
		if math.IsNaN(f.X) || math.IsNaN(f.Y) {
			continue
		}
		if !math.IsNaN(f.FieldPA) {
			anyField = true
			anyAmb = anyAmb || f.Ambiguous
			if err := seg(f.X, f.Y, f.FieldPA, fieldLen, fieldCol, 0.8, f.Ambiguous); err != nil {
				return nil, err
			}
		}
		if !math.IsNaN(f.EVPA) && !math.IsNaN(f.Ml) && f.Ml > 0 {
			if err := seg(f.X, f.Y, f.EVPA, f.Ml*scale, evpaCol, 1.4, false); err != nil {
				return nil, err
			}
		}
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	sc.Color = color.Black
	sc.Radius = vg.Points(1.4)
	p.Add(sc)
	// Scale bar: a round m_l near half the largest, in the lower right
	// corner (west is right).
	bar := 0.01
	for _, b := range []float64{0.02, 0.05, 0.1, 0.2, 0.5, 1} {
		if b <= math.Max(mlMax, 0.01)/2 || b == 0.02 && mlMax < 0.04 {
			bar = b
		}
	}
	bx, by := cx+half*0.92, cy-half*0.9
	l, err := plotter.NewLine(plotter.XYs{{X: bx, Y: by}, {X: bx - bar*scale, Y: by}})
	if err != nil {
		return nil, err
	}
	l.Color, l.Width = evpaCol, vg.Points(1.4)
	p.Add(l)
	lab, err := plotter.NewLabels(plotter.XYLabels{XYs: []plotter.XY{{X: bx, Y: by + half*0.03}}, Labels: []string{fmt.Sprintf("m_l = %g %%", bar*100)}})
	if err != nil {
		return nil, err
	}
	lab.TextStyle[0].Font.Size = vg.Points(tickSize)
	p.Add(lab)
	p.Legend.Top, p.Legend.Left = true, false
	p.Legend.TextStyle.Font.Size = vg.Points(tickSize)
	ev, _ := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
	ev.Color, ev.Width = evpaCol, vg.Points(1.4)
	p.Legend.Add("EVPA (length: m_l)", ev)
	if anyField {
		fl, _ := plotter.NewLine(plotter.XYs{{X: 0, Y: 0}, {X: 1, Y: 1}})
		fl.Color, fl.Width = fieldCol, vg.Points(0.8)
		text := "projected field"
		if anyAmb {
			text += " (dashed: ambiguous)"
		}
		p.Legend.Add(text, fl)
	}
	p.Legend.ThumbnailWidth = vg.Points(16)
	return p, nil
}
