package levels_test

import (
	"fmt"

	"maserpol/levels"
)

// A two-component line given as a published table would give it: F labels,
// offsets, relative strengths and the g_F of each F level (invented
// numbers). The program builds the F levels, their linearly split states and
// the dipole components, with every upper state's strengths summing to 1.
// Nuclear magneton (mu_N/h = 762.26 Hz/G, H_Z = -mu_N g_F M B): the 1-1
// sigma+ centroid sits at -762.26 (0.9 - 0.1) = -610 Hz/G, the 2-1 one at
// -762.26 (0.5 - 0.2 x 0.5) = -305 Hz/G, by hand from the 3j weights.
func ExampleTableFromComponents() {
	rows := []levels.ComponentRow{
		{Fu: 2, F1u: 2, Fl: 1, F1l: 1, Offset: 1.2e3, Strength: 5, GU: 0.5, GL: 0.7},
		{Fu: 1, F1u: 1, Fl: 1, F1l: 1, Offset: -2.0e3, Strength: 3, GU: 0.9, GL: 0.7},
	}
	up, lo, lines, _, err := levels.TableFromComponents(rows, false)
	if err != nil {
		fmt.Println(err)
		return
	}
	sp := &levels.Species{Name: "example", Frequency: 10e9, EinsteinA: 1e-8, Mass: 30,
		Upper: levels.Level{Table: up}, Lower: levels.Level{Table: lo}, TableLines: lines}
	cs, err := levels.Components(sp)
	if err != nil {
		fmt.Println(err)
		return
	}
	for i, c := range cs {
		fmt.Printf("%s  %+.1f kHz  strength %.3f  sigma+ shift %+.0f Hz/G\n", levels.ComponentLabels(cs)[i], c.Offset/1e3, c.Strength, c.SplitHzPerG)
	}
	// Output:
	// 1-1  -2.0 kHz  strength 0.375  sigma+ shift -610 Hz/G
	// 2-1  +1.2 kHz  strength 0.625  sigma+ shift -305 Hz/G
}
