package main

import (
	"fmt"
	"io"

	"maserpol/runs/interpret"
)

// printIntervals writes the 68 % and 95 % intervals of compare, one plain
// sentence per parameter.
func printIntervals(w io.Writer, ivs []interpret.ParamInterval) {
	if len(ivs) == 0 {
		return
	}
	fmt.Fprintf(w, "\nIntervals from the chi-square surface over the run's grid (profile Delta chi2 <= 1: 68 %%, <= 4: 95 %%;\n")
	fmt.Fprintf(w, "sqrt(Delta chi2) interpolated between grid points; chi2 scaled by the best reduced chi2 when above 1):\n")
	for _, iv := range ivs {
		fmt.Fprintf(w, "  %s\n", iv.Statement)
	}
	fmt.Fprintf(w, "Intervals hold only inside the grid and only for the model's physics; a parameter the run did not sweep is not fitted.\n")
}
