package interpret

import (
	"fmt"
	"math"

	"maserpol/runs/figures"
)

// DiagnosisFigure draws the projected polarization against saturation: the
// band (lowest and highest model) of each mechanism, and the measurement
// as a box spanning its saturation range and NSigma errors.
func DiagnosisFigure(d *Diagnosis, title string) *figures.Stack {
	m := d.Measurement
	pn := figures.Panel{YLabel: "m_l (" + m.Branch.String() + ")", Legend: true, LegendLeft: true, ZeroLine: true}
	if m.Branch == AnyBranch {
		pn.YLabel = "m_l"
	}
	for _, e := range d.Envelopes {
		var x, lo, hi []float64
		for k, s := range e.Saturation {
			if math.IsNaN(e.Lo[k]) {
				continue
			}
			x = append(x, s)
			lo = append(lo, e.Lo[k])
			hi = append(hi, e.Hi[k])
		}
		pn.Curves = append(pn.Curves,
			figures.Curve{Label: e.Mechanism.String(), X: x, Y: hi, Style: int(e.Mechanism)},
			figures.Curve{X: x, Y: lo, Style: int(e.Mechanism)})
	}
	lo, hi := m.Ml-m.NSigma*m.MlErr, m.Ml+m.NSigma*m.MlErr
	sl, sh := m.SatLo, m.SatHi
	if sh <= sl*1.05 { // a single saturation: give the box a visible width
		sl, sh = sl/1.15, sh*1.15
	}
	pn.Curves = append(pn.Curves,
		figures.Curve{Label: fmt.Sprintf("measured, %g sigma", m.NSigma), X: []float64{sl, sh, sh, sl, sl}, Y: []float64{lo, lo, hi, hi, lo}, Style: int(numMechanisms)},
		figures.Curve{X: []float64{math.Sqrt(sl * sh)}, Y: []float64{m.Ml}, Style: int(numMechanisms), Points: true})
	return &figures.Stack{Title: title, XLabel: "saturation R/Γ", LogX: true, PanelHeight: 2.6 * 72, Panels: []figures.Panel{pn}}
}

// CompareFigure draws the observed Stokes spectra (points) and the best
// models shifted and scaled onto them (lines).
func CompareFigure(obs *Observed, best []Ranked, title string) *figures.Stack {
	unit := obs.Unit
	if unit == "" {
		unit = "file unit"
	}
	vk := make([]float64, obs.Channels())
	for i, v := range obs.Velocity {
		vk[i] = v / 1e3
	}
	s := &figures.Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 0.95 * 72}
	for k, name := range StokesNames {
		if !obs.Use[k] {
			continue
		}
		pn := figures.Panel{YLabel: name + " (" + unit + ")", Legend: k == 0, ZeroLine: k > 0}
		pn.Curves = append(pn.Curves, figures.Curve{Label: "observed", X: vk, Y: obs.Stokes[k], Style: 0, Points: true})
		for j, r := range best {
			ms := r.Model.Spectra[checkpointIndex(r.Model, r.Best.Checkpoint)]
			y := make([]float64, len(vk))
			sample(y, ms.Velocity, ms.Stokes[k], obs.Velocity, r.Best.Shift)
			for i := range y {
				y[i] *= r.Best.Scale
			}
			pn.Curves = append(pn.Curves, figures.Curve{Label: fmt.Sprintf("%s, R/Γ %.3g, χ²_r %.3g", r.Model.Name, r.Best.Saturation, r.Best.RedChi2), X: vk, Y: y, Style: j + 1})
		}
		s.Panels = append(s.Panels, pn)
	}
	return s
}

func checkpointIndex(m *RunModel, cp int) int {
	for i, s := range m.Spectra {
		if s.Checkpoint == cp {
			return i
		}
	}
	return 0
}
