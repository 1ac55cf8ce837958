package figures_test

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"maserpol/runs/figures"
)

// A two-panel stack against saturation on a log axis: m_l of two invented
// models (shapes approaching the saturated J=1-0 limits 1 and 1/3 as
// s/(1+s), for illustration only) over their P_V, saved as SVG and PNG. The
// files are written to temporary names and renamed, so only complete
// figures appear; a figure with nothing finite to draw is reported as
// ErrNoData instead of producing an empty plot.
func ExampleStack_Save() {
	dir, err := os.MkdirTemp("", "figures-example")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)

	var sat []float64
	for k := -10; k <= 30; k++ {
		sat = append(sat, math.Pow(10, float64(k)/10)) // R/Gamma 0.1 .. 1000
	}
	curve := func(label string, style int, f func(s float64) float64) figures.Curve {
		c := figures.Curve{Label: label, X: sat, Style: style}
		for _, s := range sat {
			c.Y = append(c.Y, f(s))
		}
		return c
	}
	st := &figures.Stack{
		Title:  "Kestrel-9 grid (invented), B = 5 G",
		XLabel: "saturation R/Γ",
		LogX:   true,
		Panels: []figures.Panel{
			{YLabel: "m_l", Legend: true, Curves: []figures.Curve{
				curve("θ = 30 deg", 0, func(s float64) float64 { return s / (1 + s) }),
				curve("θ = 90 deg", 1, func(s float64) float64 { return s / (1 + s) / 3 }),
			}},
			{YLabel: "P_V", ZeroLine: true, Curves: []figures.Curve{
				curve("θ = 30 deg", 0, func(s float64) float64 { return 2e-3 / (1 + s) }),
				curve("θ = 90 deg", 1, func(float64) float64 { return 0 }),
			}},
		},
	}
	paths, err := st.Save(filepath.Join(dir, "ml-vs-saturation"), []string{"svg", "png"})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range paths {
		fmt.Println(filepath.Base(p))
	}

	empty := &figures.Stack{XLabel: "saturation R/Γ", LogX: true, Panels: []figures.Panel{
		{YLabel: "m_l", Curves: []figures.Curve{{X: []float64{0, -1}, Y: []float64{0.1, 0.2}}}},
	}}
	_, err = empty.Save(filepath.Join(dir, "empty"), []string{"svg"})
	fmt.Println("non-positive saturations only:", errors.Is(err, figures.ErrNoData))
	// Output:
	// ml-vs-saturation.svg
	// ml-vs-saturation.png
	// non-positive saturations only: true
}

// The Stokes spectra figure of one model at two checkpoints: V at
// theta = 90 deg is zero up to round-off and is drawn as zero with a note.
func ExampleSpectra() {
	var v []float64
	var lo, hi figures.Stokes
	for i := 0; i <= 80; i++ {
		x := -4 + 0.1*float64(i) // km/s
		v = append(v, x)
		for _, cp := range []*figures.Stokes{&lo, &hi} {
			peak := 1e9 // K
			if cp == &lo {
				peak = 1e7
			}
			I := peak * math.Exp(-x*x)
			cp.I = append(cp.I, I)
			cp.Q = append(cp.Q, -0.2*I)
			cp.U = append(cp.U, 0)
			cp.V = append(cp.V, 1e-20*x) // round-off
		}
	}
	lo.Label, hi.Label = "R/Γ = 0.1", "R/Γ = 10"
	st := figures.Spectra("IRC-Vela 7 model (invented), θ = 90 deg", v, []figures.Stokes{lo, hi})
	for _, pn := range st.Panels {
		fmt.Printf("%s: %d curves, zeroed %v\n", pn.YLabel, len(pn.Curves), pn.Zeroed)
	}
	// Output:
	// I (K): 2 curves, zeroed false
	// Q (K): 2 curves, zeroed false
	// U (K): 2 curves, zeroed true
	// V (K): 2 curves, zeroed true
}
