package interpret

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"maserpol/runs/figures"
)

// DiagnosisFigure draws the projected polarization against saturation:
// the range (lowest to highest model) of each mechanism as a shaded band,
// and the measurement as a point with its NSigma error bar at the middle
// of its saturation range, over a grey box spanning that range. The
// title is drawn only when not empty.
func DiagnosisFigure(d *Diagnosis, title string) *figures.Stack {
	m := d.Measurement
	pn := figures.Panel{YLabel: "m_l (" + m.Branch.String() + ")", Legend: true, ZeroLine: true}
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
		pn.Bands = append(pn.Bands, figures.Band{Label: e.Mechanism.String(), X: x, Lo: lo, Hi: hi, Style: int(e.Mechanism), Alpha: 0.3})
		// Thin edges keep overlapping bands apart.
		pn.Curves = append(pn.Curves,
			figures.Curve{X: x, Y: hi, Style: int(e.Mechanism)},
			figures.Curve{X: x, Y: lo, Style: int(e.Mechanism)})
	}
	lo, hi := m.Ml-m.NSigma*m.MlErr, m.Ml+m.NSigma*m.MlErr
	sl, sh := m.SatLo, m.SatHi
	if sh <= sl*1.05 { // a single saturation: give the box a visible width
		sl, sh = sl/1.15, sh*1.15
	}
	mid := math.Sqrt(sl * sh)
	pn.Bands = append(pn.Bands, figures.Band{X: []float64{sl, sh}, Lo: []float64{lo, lo}, Hi: []float64{hi, hi}, Style: measuredStyle, Alpha: 0.25})
	pn.Curves = append(pn.Curves,
		figures.Curve{Label: fmt.Sprintf("measured, ±%g σ", m.NSigma), X: []float64{mid}, Y: []float64{m.Ml}, YErr: []float64{m.NSigma * m.MlErr}, Style: measuredStyle, Points: true},
		figures.Curve{X: []float64{sl, sh}, Y: []float64{m.Ml, m.Ml}, Style: measuredStyle})
	return &figures.Stack{Title: title, XLabel: "saturation R/Γ (T_b ΔΩ scale)", LogX: true, PanelHeight: 2.6 * 72, Panels: []figures.Panel{pn}}
}

// measuredStyle is the style of the measurement: black in figures'
// palette, apart from the mechanisms' colours.
const measuredStyle = 6

// CompareFigure draws the observed Stokes spectra (points) and the best
// models shifted and scaled onto them (lines).
func CompareFigure(obs *Observed, best []Ranked, title string) *figures.Stack {
	unit := figures.Escape(obs.Unit)
	if unit == "" {
		unit = "file unit"
	}
	vk := make([]float64, obs.Channels())
	for i, v := range obs.Velocity {
		vk[i] = v / 1e3
	}
	s := &figures.Stack{Title: title, XLabel: "velocity (km/s)", PanelHeight: 0.95 * 72}
	varied := variedParams(best)
	for k, name := range StokesNames {
		if !obs.Use[k] {
			continue
		}
		pn := figures.Panel{YLabel: name + " (" + unit + ")", Legend: k == 0, ZeroLine: k > 0}
		// Data as points with 1-sigma error bars, not a joined line.
		pn.Curves = append(pn.Curves, figures.Curve{Label: "observed (±1σ)", X: vk, Y: obs.Stokes[k], YErr: obs.Err[k], Style: measuredStyle, Points: true, NoLine: true})
		for j, r := range best {
			ms := r.Model.Spectra[checkpointIndex(r.Model, r.Best.Checkpoint)]
			y := make([]float64, len(vk))
			sample(y, ms.Velocity, ms.Stokes[k], obs.Velocity, r.Best.Shift)
			for i := range y {
				y[i] *= r.Best.Scale
			}
			pn.Curves = append(pn.Curves, figures.Curve{Label: modelLabel(r, varied), X: vk, Y: y, Style: j})
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

// variedParams lists the parameters that differ between the models shown
// (all of them for a single model), so that legends name models by what
// tells them apart rather than by m0002.
func variedParams(best []Ranked) []string {
	if len(best) == 0 {
		return nil
	}
	var out []string
	for _, p := range best[0].Model.Params {
		differs := len(best) == 1
		for _, r := range best[1:] {
			if v, ok := r.Model.Param(p.Name); !ok || v != p.Value {
				differs = true
			}
		}
		if differs {
			out = append(out, p.Name)
		}
	}
	return out
}

// paramSymbols names summary columns in figure text (figures.Scripts
// markup).
var paramSymbols = map[string]string{"B_mG": "B", "theta_deg": "θ", "chi_deg": "χ", "doppler_kms": "v_D", "tb_K": "T_{seed}", "dOmega_sr": "ΔΩ"}

// modelLabel is the legend text of a ranked model: its varying
// parameters, saturation and reduced chi-square, rounded.
func modelLabel(r Ranked, varied []string) string {
	var parts []string
	for _, name := range varied {
		for _, p := range r.Model.Params {
			if p.Name != name {
				continue
			}
			sym, ok := paramSymbols[name]
			if !ok {
				sym = figures.Escape(name)
			}
			v, u := p.Value, p.Unit
			switch {
			case u == "mG" && math.Abs(v) >= 1000:
				v, u = v/1000, " G"
			case u == "deg":
				u = "°"
			case u != "":
				u = " " + strings.ReplaceAll(u, "km / s", "km/s")
			}
			parts = append(parts, sym+" = "+strconv.FormatFloat(round(v, 3), 'g', -1, 64)+u)
		}
	}
	parts = append(parts, "R/Γ = "+strconv.FormatFloat(round(r.Best.Saturation, 2), 'g', -1, 64),
		"χ^2_r = "+strconv.FormatFloat(round(r.Best.RedChi2, 3), 'g', -1, 64))
	return strings.Join(parts, ", ")
}

// round rounds x to the given significant digits.
func round(x float64, digits int) float64 {
	r, _ := strconv.ParseFloat(strconv.FormatFloat(x, 'g', digits, 64), 64)
	return r
}
