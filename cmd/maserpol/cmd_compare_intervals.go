package main

import (
	"fmt"
	"io"

	"maserpol/runs/interpret"
)

// printIntervals writes the 68 % and 95 % intervals of compare from the
// chi-square surface, one plain sentence per parameter, then the MCMC
// posterior over the interpolated surface when the grid is regular.
func printIntervals(w io.Writer, models []interpret.RunModel, surf [][]interpret.Fit) {
	ivs := interpret.Intervals(models, surf)
	if len(ivs) == 0 {
		return
	}
	fmt.Fprintf(w, "\nIntervals from the chi-square surface over the run's grid (profile Delta chi2 <= 1: 68 %%, <= 4: 95 %%;\n")
	fmt.Fprintf(w, "sqrt(Delta chi2) interpolated between grid points; chi2 scaled by the best reduced chi2 when above 1):\n")
	for _, iv := range ivs {
		fmt.Fprintf(w, "  %s\n", iv.Statement)
	}
	post, err := interpret.PosteriorMCMC(models, surf, interpret.DefaultPosterior)
	if err != nil {
		fmt.Fprintf(w, "Posterior (MCMC): not computed: %v\n", err)
	} else {
		fmt.Fprintf(w, "Posterior (MCMC over the chi-square interpolated between grid points, prior uniform inside the grid and zero outside; central credible intervals):\n")
		for _, p := range post {
			fmt.Fprintf(w, "  %s\n", p.Statement())
		}
	}
	fmt.Fprintf(w, "Intervals hold only inside the grid and only for the model's physics; a parameter the run did not sweep is not fitted.\n")
}
