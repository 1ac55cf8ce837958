package main

import (
	"context"
	"fmt"
	"io"
	"maserpol/runs/ecsv"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"maserpol/runs/figures"
	"maserpol/runs/interpret"
	"maserpol/transfer"
)

// zfactorEach is "zeeman-factor --component each": the factor of every
// main hyperfine component pumped alone, a summary table, the CSV and a
// figure comparing their I and V.
func zfactorEach(ctx context.Context, spec interpret.FactorSpec, workers int, csvPath, plotPath string, stdout, stderr io.Writer) int {
	base, formats, err := plotTarget(plotPath)
	if err != nil {
		return report(stderr, err)
	}
	res, err := interpret.EachComponent(ctx, spec, workers, transfer.Run)
	if err != nil {
		return report(stderr, err)
	}
	sp := spec.Base.Species
	fmt.Fprintf(stdout, "Zeeman factors of %s, each main component (strength >= %g of the strongest) pumped alone\n", sp.Name, interpret.MainComponentFraction)
	fmt.Fprintf(stdout, "  which component masers is not known: each row assumes it is this one (pump only its upper F level)\n\n")
	tw := tabwriter.NewWriter(stdout, 2, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "#\tlabel\tvelocity (km/s)\tstrength\tlinear (m/s per G)\ttheta (deg)\tfactor, unsaturated (m/s per G)\tfactor, highest valid R/Gamma (m/s per G)\tat R/Gamma")
	var warnings []string
	for _, r := range res {
		f := r.Factors
		c := f.Components[r.Index]
		for _, th := range thetasOf(f) {
			lo, hi := validRange(f, th)
			loF, hiF, hiS := "-", "-", "-"
			if lo != nil {
				loF = g3(lo.Factor)
			}
			if hi != nil {
				hiF, hiS = g3(hi.Factor), g3(hi.Saturation)
			}
			fmt.Fprintf(tw, "%d\t%s\t%.4f\t%.4f\t%s\t%s\t%s\t%s\t%s\n", r.Index, r.Label, r.Velocity/1e3, c.Strength, g3(f.Linear), g3(th*180/math.Pi), loF, hiF, hiS)
		}
		for _, w := range f.Warnings {
			if w == sp.UnverifiedWarning() {
				continue // printed once below
			}
			warnings = append(warnings, fmt.Sprintf("component %s: %s", r.Label, w))
		}
	}
	tw.Flush()
	fmt.Fprintf(stdout, "\n(valid: good fit of V = A dI/dv + C I and R/(g Omega) <= 0.1 at the component's B0; \"-\": none valid)\n")
	seen := map[string]bool{}
	for _, w := range warnings {
		if !seen[w] {
			seen[w] = true
			fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
		}
	}
	if w := sp.UnverifiedWarning(); w != "" {
		fmt.Fprintf(stderr, "maserpol: warning: %s\n", w)
	}
	if csvPath != "" {
		if err := writeEach(csvPath, res); err != nil {
			return report(stderr, err)
		}
		fmt.Fprintf(stderr, "maserpol: wrote %s\n", csvPath)
	}
	if plotPath != "" {
		paths, err := eachFigure(res).Save(base, formats)
		if err != nil {
			return report(stderr, err)
		}
		for _, p := range paths {
			fmt.Fprintf(stderr, "maserpol: wrote %s\n", p)
		}
	}
	return exitOK
}

func thetasOf(f *interpret.Factors) []float64 {
	var out []float64
	for _, r := range f.Rows {
		if len(out) == 0 || out[len(out)-1] != r.Theta {
			out = append(out, r.Theta)
		}
	}
	return out
}

// validRange returns the valid rows of angle th at the lowest and at the
// highest saturation (nil when none).
func validRange(f *interpret.Factors, th float64) (lo, hi *interpret.FactorRow) {
	for i := range f.Rows {
		r := &f.Rows[i]
		if r.Theta != th || !r.Valid {
			continue
		}
		if lo == nil || r.Saturation < lo.Saturation {
			lo = r
		}
		if hi == nil || r.Saturation > hi.Saturation {
			hi = r
		}
	}
	return lo, hi
}

// eachColumns are the columns of the --component each table.
var eachColumns = []ecsv.Column{
	{Name: "component", Datatype: ecsv.Int64, Description: "component index as listed by maserpol levels"},
	{Name: "label", Datatype: ecsv.String, Description: "component label F1u,Fu-F1l,Fl"},
	{Name: "velocity_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "velocity of the component"},
	{Name: "strength", Datatype: ecsv.Float64, Description: "relative zero-field strength (all components sum to 1)"},
	{Name: "B0_G", Unit: "G", Datatype: ecsv.Float64, Description: "field of the model"},
	{Name: "theta_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "angle between B and the line of sight"},
	{Name: "saturation", Datatype: ecsv.Float64, Description: "R/Gamma of the checkpoint"},
	{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "R/(g Omega) at B0"},
	{Name: "valid", Datatype: ecsv.Bool, Description: "good fit and R/(g Omega) <= 0.1 at B0"},
	{Name: "factor_ms_per_G", Unit: "m / (s G)", Datatype: ecsv.Float64, Description: "A/(B0 cos theta) from V = A dI/dv + C I"},
	{Name: "linear_ms_per_G", Unit: "m / (s G)", Datatype: ecsv.Float64, Description: "single-component linear-Zeeman value"},
	{Name: "residual", Datatype: ecsv.Float64, Description: "rms fit residual over the V peak, relative"},
}

// writeEach writes the per-component factors (ECSV, or plain CSV for a
// .csv name).
func writeEach(path string, res []interpret.ComponentFactors) error {
	meta := []ecsv.Meta{programMeta(), {Key: "command", Value: "zeeman-factor --component each"},
		{Key: "note", Value: "every main component pumped alone; B cos(theta) = A_observed/factor"}, validityMeta()}
	return writeTable(path, eachColumns, meta, func(w *ecsv.Writer) error {
		for _, r := range res {
			f := r.Factors
			for _, x := range f.Rows {
				err := w.Int(r.Index).String(r.Label).Float(r.Velocity / 1e3).Float(f.Components[r.Index].Strength).Float(f.B0).
					Float(x.Theta * 180 / math.Pi).Float(x.Saturation).Float(x.RoverGOmega).Bool(x.Valid).Float(x.Factor).Float(x.Linear).Float(x.Residual).End()
				if err != nil {
					return err
				}
			}
		}
		return nil
	})
}

// eachFigure compares the components pumped alone at the first angle: I
// over its peak, and V per unit B cos(theta) over the peak of I (1/G), at
// the highest checkpoint inside the populations-only validity.
func eachFigure(res []interpret.ComponentFactors) *figures.Stack {
	var ic, vc []figures.Curve
	theta := 0.0
	for k, r := range res {
		tr := r.Factors.First
		if tr == nil || len(tr.Checkpoints) == 0 {
			continue
		}
		cp := tr.Checkpoints[0]
		for _, c := range tr.Checkpoints {
			if c.Valid {
				cp = c
			}
		}
		theta = r.Factors.Rows[0].Theta
		x := make([]float64, len(tr.Velocity))
		yi := make([]float64, len(x))
		yv := make([]float64, len(x))
		scale := cp.IPeak * r.Factors.B0 * math.Cos(theta)
		for j := range x {
			x[j] = tr.Velocity[j] / 1e3
			yi[j] = cp.I[j] / cp.IPeak
			yv[j] = cp.V[j] / scale
		}
		label := fmt.Sprintf("%s (R/Γ %.2g)", r.Label, cp.Saturation)
		ic = append(ic, figures.Curve{Label: label, X: x, Y: yi, Style: k})
		vc = append(vc, figures.Curve{Label: label, X: x, Y: yv, Style: k})
	}
	// Show the lines, not the empty wings of the grid.
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, c := range ic {
		for j, y := range c.Y {
			if y > 1e-3 {
				lo, hi = math.Min(lo, c.X[j]), math.Max(hi, c.X[j])
			}
		}
	}
	if hi > lo {
		pad := 0.25 * (hi - lo)
		for k := range ic {
			ic[k].X, ic[k].Y = crop(ic[k].X, ic[k].Y, lo-pad, hi+pad)
			vc[k].X, vc[k].Y = crop(vc[k].X, vc[k].Y, lo-pad, hi+pad)
		}
	}
	return &figures.Stack{
		Title:  fmt.Sprintf("each component pumped alone, θ = %.0f deg", theta*180/math.Pi),
		XLabel: "velocity (km/s)",
		Panels: []figures.Panel{
			{YLabel: "I / I_peak", Curves: ic, Legend: true, LegendTitle: "component", MaxLegend: 12},
			{YLabel: "V / (I_peak B cos θ) (1/G)", Curves: vc, ZeroLine: true},
		},
	}
}

// plotTarget splits a --plot file into the base name and the formats: the
// extension's, or PNG and SVG without one.
func plotTarget(file string) (string, []string, error) {
	if file == "" {
		return "", nil, nil
	}
	ext := strings.ToLower(strings.TrimPrefix(filepath.Ext(file), "."))
	if ext == "" {
		return file, []string{"png", "svg"}, nil
	}
	if !slices.Contains(figures.Formats, ext) {
		return "", nil, usagef("--plot %s: unknown figure format %q (allowed: %s)", file, ext, strings.Join(figures.Formats, ", "))
	}
	return strings.TrimSuffix(file, filepath.Ext(file)), []string{ext}, nil
}

// crop keeps the points with lo <= x <= hi.
func crop(x, y []float64, lo, hi float64) ([]float64, []float64) {
	var cx, cy []float64
	for i := range x {
		if x[i] >= lo && x[i] <= hi {
			cx, cy = append(cx, x[i]), append(cy, y[i])
		}
	}
	return cx, cy
}
