package figures

import "math"

// RoundoffLevel is the fraction of the peak intensity below which Q, U or
// V spectra count as round-off and are drawn as zero: the integrator's
// relative precision is far coarser (common practice: 1e-9 is well above
// float64 round-off accumulated over a column and well below any physical
// polarization a model reports).
const RoundoffLevel = 1e-9

// Stokes is the emergent spectrum at one checkpoint, in K, sky frame.
type Stokes struct {
	Label      string // e.g. "R/Γ = 10"
	I, Q, U, V []float64
}

// Spectra is the figure of emergent I, Q, U and V against velocity, one
// line per checkpoint (the last one is drawn solid and first in the legend
// order given by the caller). A Q, U or V panel whose values are all below
// RoundoffLevel times the peak of I is drawn as zero with a note; callers
// may replace the note with the physical reason (e.g. θ = 90 deg).
func Spectra(title string, velocityKms []float64, cps []Stokes) *Stack {
	s := &Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 0.95 * 72}
	peak := 0.0
	for _, cp := range cps {
		for _, x := range cp.I {
			peak = math.Max(peak, math.Abs(x))
		}
	}
	names := []string{"I", "Q", "U", "V"}
	for k, name := range names {
		pn := Panel{YLabel: name + " (K)", Legend: k == 0 && len(cps) > 1, ZeroLine: k > 0}
		for i, cp := range cps {
			y := [][]float64{cp.I, cp.Q, cp.U, cp.V}[k]
			pn.Curves = append(pn.Curves, Curve{Label: cp.Label, X: velocityKms, Y: y, Style: i})
		}
		if k > 0 && peak > 0 {
			ZeroRoundoff(&pn, RoundoffLevel*peak, name+" = 0 (below 1e-9 of the peak of I)")
		}
		s.Panels = append(s.Panels, pn)
	}
	return s
}

// Saturation is the figure of m_l and P_V against saturation R/Γ on a
// log axis, one curve per model or swept value. P_V is given its sign by
// the caller (the sign of A in V = A dI/dv), so that the field direction
// shows.
func Saturation(title string, ml, pv []Curve) *Stack {
	return &Stack{Title: title, XLabel: "saturation R/Γ", LogX: true, Panels: []Panel{
		{YLabel: "m_l", Curves: ml, Legend: true},
		{YLabel: "signed P_V", Curves: pv, ZeroLine: true, AutoLogY: true},
	}}
}

// EVPABreak is the jump in EVPA (deg) across which Theta does not join
// neighbouring points: the 90 deg flip at the van Vleck angle is a change
// of branch, not a rotation.
const EVPABreak = 60

// Theta is the figure of m_l and EVPA against the field angle θ.
func Theta(title string, ml, evpa []Curve) *Stack {
	for i := range evpa {
		if evpa[i].BreakAbove == 0 {
			evpa[i].BreakAbove = EVPABreak
		}
	}
	return &Stack{Title: title, XLabel: "θ, angle of B to the line of sight (deg)", Panels: []Panel{
		{YLabel: "m_l", Curves: ml, Legend: true},
		{YLabel: "EVPA (deg)", Curves: evpa},
	}}
}

// Zeeman is the Zeeman diagram: state energies E/h in kHz against field
// strength, one curve per state, upper and lower rotational levels in
// separate panels. Curves with the same Style share a legend entry
// (typically one per F label). The field axis is in the unit of xlabel,
// "field strength B (mG)" by default.
func Zeeman(title string, upper, lower []Curve) *Stack {
	return &Stack{Title: title, XLabel: "field strength B (mG)", PanelHeight: 1.5 * 72, Panels: []Panel{
		{YLabel: "upper E/h (kHz)", Curves: upper, Legend: true, Solid: true, MaxLegend: len(palette)},
		{YLabel: "lower E/h (kHz)", Curves: lower, Legend: true, Solid: true, MaxLegend: len(palette)},
	}}
}
