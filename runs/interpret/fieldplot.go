package interpret

import (
	"fmt"
	"math"
	"strings"

	"maserpol/runs/figures"
)

// FeatureFigure draws one feature: I, then V with the fitted A dI/dv + C I,
// then the residual V - fit, against velocity, the fit window marked.
func FeatureFigure(ft Feature, r *FeatureResult) *figures.Stack {
	o := ft.Obs
	unit := o.Unit
	if unit == "" {
		unit = "file unit"
	}
	vk := make([]float64, o.Channels())
	res := make([]float64, o.Channels())
	for i, v := range o.Velocity {
		vk[i] = v / 1e3
		res[i] = o.Stokes[3][i] - r.Fit.Model[i]
	}
	// The fit window as a bracket at zero.
	win := func(y float64) figures.Curve {
		return figures.Curve{X: []float64{r.Window[0] / 1e3, r.Window[1] / 1e3}, Y: []float64{y, y}, Style: 3}
	}
	pi := figures.Panel{YLabel: "I (" + unit + ")", Legend: true, Curves: []figures.Curve{{Label: "observed", X: vk, Y: o.Stokes[0], Style: 0, Points: true}}}
	in := func(c figures.Curve) figures.Curve {
		var x, y []float64
		for i := range c.X {
			if v := c.X[i] * 1e3; v >= r.Window[0] && v <= r.Window[1] {
				x, y = append(x, c.X[i]), append(y, c.Y[i])
			}
		}
		c.X, c.Y = x, y
		return c
	}
	fitLabel := fmt.Sprintf("A dI/dv + C I: A = %.3g ± %.2g m/s", r.Fit.A, r.Fit.AErr)
	pv := figures.Panel{YLabel: "V (" + unit + ")", Legend: true, ZeroLine: true, Curves: []figures.Curve{
		{Label: "observed", X: vk, Y: o.Stokes[3], Style: 0, Points: true},
		in(figures.Curve{Label: fitLabel, X: vk, Y: r.Fit.Model, Style: 1}),
	}}
	w := win(0)
	w.Label = "fit window"
	pr := figures.Panel{YLabel: "V − fit (" + unit + ")", Legend: true, ZeroLine: true, Curves: []figures.Curve{
		{Label: fmt.Sprintf("residual, χ²_r = %.3g", r.Fit.RedChi2()), X: vk, Y: res, Style: 0, Points: true}, w}}
	title := fmt.Sprintf("%s: B_los = %s (%s)", r.Name, fieldText(r.BLos, r.BLosErr), r.Verdict)
	if r.Verdict == VerdictNotDetected {
		title = fmt.Sprintf("%s: |B_los| < %s (3σ, not detected)", r.Name, strings.Replace(fieldText(r.UpperLimit, 0), " ± 0", "", 1))
	}
	return &figures.Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 1.0 * 72, Panels: []figures.Panel{pi, pv, pr}}
}

// fieldText writes a field and its error (gauss) in G or mG.
func fieldText(b, e float64) string {
	if math.Abs(b) < 1 {
		return fmt.Sprintf("%.3g ± %.2g mG", b*1e3, e*1e3)
	}
	return fmt.Sprintf("%.3g ± %.2g G", b, e)
}

// CatalogueFigure draws B_los with 1-sigma error bars against the feature
// velocity (detections), 3-sigma upper limits on |B_los| as bars from
// -limit to +limit (not detected), and theta where it is known.
func CatalogueFigure(rows []FieldRow, title string) *figures.Stack {
	pb := figures.Panel{YLabel: "B_los (mG)", Legend: true, ZeroLine: true}
	pt := figures.Panel{YLabel: "θ (deg)", Legend: true}
	var dx, dy, ux, uy, tx, ty []float64
	for _, fr := range rows {
		r := fr.Result
		if r == nil {
			continue
		}
		v := r.PeakV / 1e3
		if r.Detected && r.Verdict != VerdictPoorFit {
			dx, dy = append(dx, v), append(dy, r.BLos*1e3)
			pb.Curves = append(pb.Curves, figures.Curve{X: []float64{v, v}, Y: []float64{(r.BLos - r.BLosErr) * 1e3, (r.BLos + r.BLosErr) * 1e3}, Style: 0})
		} else if r.Verdict == VerdictNotDetected {
			ux, uy = append(ux, v, v), append(uy, r.UpperLimit*1e3, -r.UpperLimit*1e3)
			pb.Curves = append(pb.Curves, figures.Curve{X: []float64{v, v}, Y: []float64{-r.UpperLimit * 1e3, r.UpperLimit * 1e3}, Style: 1})
		}
		if !math.IsNaN(r.Theta) {
			tx, ty = append(tx, v), append(ty, r.Theta*180/math.Pi)
			pt.Curves = append(pt.Curves, figures.Curve{X: []float64{v, v}, Y: []float64{(r.Theta - r.ThetaErr) * 180 / math.Pi, (r.Theta + r.ThetaErr) * 180 / math.Pi}, Style: 2})
		}
	}
	if len(dx) > 0 {
		pb.Curves = append(pb.Curves, figures.Curve{Label: "detected, ±1σ", X: dx, Y: dy, Style: 0, Points: true, BreakAbove: 1e-300})
	}
	if len(ux) > 0 {
		pb.Curves = append(pb.Curves, figures.Curve{Label: "not detected, ±3σ limit", X: ux, Y: uy, Style: 1, Points: true, BreakAbove: 1e-300})
	}
	panels := []figures.Panel{pb}
	if len(tx) > 0 {
		pt.Curves = append(pt.Curves, figures.Curve{Label: "θ ±1σ", X: tx, Y: ty, Style: 2, Points: true, BreakAbove: 1e-300})
		panels = append(panels, pt)
	}
	return &figures.Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 1.6 * 72, Panels: panels}
}

// SkyMap makes the sky map of a catalogue: features at their offsets
// (mas), EVPA vectors scaled by m_l, and the projected field direction
// where the feature has a verdict other than poor fit or bad input and an
// orientation: along the EVPA below theta_F, rotated by 90 deg above it
// (dashed where the orientation is ambiguous).
func SkyMap(rows []FieldRow, title string) *figures.SkyMap {
	const mas = 180 / math.Pi * 3600e3
	m := &figures.SkyMap{Title: title, Unit: "mas"}
	for _, fr := range rows {
		f := figures.SkyFeature{X: fr.X * mas, Y: fr.Y * mas, EVPA: fr.EVPA, Ml: fr.Ml, FieldPA: math.NaN()}
		if r := fr.Result; r != nil && r.Verdict != VerdictPoorFit && !math.IsNaN(fr.EVPA) && !math.IsNaN(r.Theta) {
			orient, amb := OrientParallel, math.Abs(r.Theta-ThetaF) <= r.ThetaErr
			if r.GKK != nil {
				orient, amb = r.GKK.Orientation, r.GKK.Ambiguous
			} else if r.Theta > ThetaF {
				orient = OrientPerpendicular
			}
			f.FieldPA, f.Ambiguous = fr.EVPA, amb
			if orient == OrientPerpendicular {
				f.FieldPA += math.Pi / 2
			}
		}
		m.Features = append(m.Features, f)
	}
	return m
}
