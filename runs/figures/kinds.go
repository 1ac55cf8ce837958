package figures

// Stokes is the emergent spectrum at one checkpoint, in K, sky frame.
type Stokes struct {
	Label      string // e.g. "R/Γ = 10"
	I, Q, U, V []float64
}

// Spectra is the figure of emergent I, Q, U and V against velocity, one
// line per checkpoint (the last one is drawn solid and first in the legend
// order given by the caller).
func Spectra(title string, velocityKms []float64, cps []Stokes) *Stack {
	s := &Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 0.95 * 72}
	names := []string{"I (K)", "Q (K)", "U (K)", "V (K)"}
	for k, name := range names {
		pn := Panel{YLabel: name, Legend: k == 0 && len(cps) > 1, ZeroLine: k > 0}
		for i, cp := range cps {
			y := [][]float64{cp.I, cp.Q, cp.U, cp.V}[k]
			pn.Curves = append(pn.Curves, Curve{Label: cp.Label, X: velocityKms, Y: y, Style: i})
		}
		s.Panels = append(s.Panels, pn)
	}
	return s
}

// Saturation is the figure of m_l and P_V against saturation R/Γ on a
// log axis, one curve per model or swept value.
func Saturation(title string, ml, pv []Curve) *Stack {
	return &Stack{Title: title, XLabel: "saturation R/Γ", LogX: true, Panels: []Panel{
		{YLabel: "m_l", Curves: ml, Legend: true},
		{YLabel: "P_V", Curves: pv},
	}}
}

// Theta is the figure of m_l and EVPA against the field angle θ.
func Theta(title string, ml, evpa []Curve) *Stack {
	return &Stack{Title: title, XLabel: "θ, angle of B to the line of sight (deg)", Panels: []Panel{
		{YLabel: "m_l", Curves: ml, Legend: true},
		{YLabel: "EVPA (deg)", Curves: evpa},
	}}
}

// Zeeman is the Zeeman diagram: state energies E/h in kHz against field
// strength in mG, one curve per state, upper and lower rotational levels
// in separate panels. Curves with the same Style share a legend entry
// (typically one per F label).
func Zeeman(title string, upper, lower []Curve) *Stack {
	return &Stack{Title: title, XLabel: "field strength B (mG)", PanelHeight: 1.5 * 72, Panels: []Panel{
		{YLabel: "upper E/h (kHz)", Curves: upper, Legend: true, Solid: true},
		{YLabel: "lower E/h (kHz)", Curves: lower, Legend: true, Solid: true},
	}}
}
