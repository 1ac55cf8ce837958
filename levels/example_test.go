package levels_test

import (
	"fmt"

	"maserpol/levels"
	"maserpol/levels/species"
)

// A J = 1-0 line without hyperfine structure at 10 G: a Zeeman triplet.
func ExampleNewTransition() {
	sp := &levels.Species{
		Name:      "J=1-0, no hyperfine",
		Frequency: 43.122080e9, // Hz
		Upper:     levels.Level{J: 1, G: -0.155},
		Lower:     levels.Level{J: 0, G: -0.155},
	}
	tr, err := levels.NewTransition(sp, 10) // gauss
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, ln := range tr.Lines {
		fmt.Printf("q=%+d offset %+.3f Hz strength %.3f\n", ln.Q, ln.Offset, ln.Strength)
	}
	// Output:
	// q=-1 offset -1181.502 Hz strength 1.000
	// q=+0 offset +0.000 Hz strength 1.000
	// q=+1 offset +1181.502 Hz strength 1.000
}

// The zero-field hyperfine components of the HCN-like preset: the 1:3:5
// triplet and its weak-field Zeeman splittings.
func ExampleComponents() {
	sp, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		fmt.Println(err)
		return
	}
	cs, err := levels.Components(sp)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range cs {
		fmt.Printf("F=%g-%g  %+8.4f MHz  strength %.4f  split %+.1f Hz/G\n",
			c.Fu, c.Fl, c.Offset/1e6, c.Strength, c.SplitHzPerG)
	}
	// Output:
	// F=1-1   -1.1865 MHz  strength 0.3333  split -212.2 Hz/G
	// F=2-1   +0.2451 MHz  strength 0.5556  split -20.9 Hz/G
	// F=0-1   +2.3338 MHz  strength 0.1111  split -307.8 Hz/G
}

// Solving one level at many fields with a reusable Solver. Nuclear magneton,
// g_J > 0: at strong field the stretched state with M = +J+I lies lowest.
func ExampleSolver() {
	l := levels.Level{
		J: 0.5, G: 0.8,
		Spins:     []levels.Spin{{Name: "X", I: 1.5, G: 2.1}},
		Couplings: []levels.Coupling{{Kind: levels.SpinRotation, Spins: []int{0}, Value: 50e3}},
	}
	s, err := levels.NewSolver(l)
	if err != nil {
		fmt.Println(err)
		return
	}
	var st levels.Structure
	for _, B := range []float64{0, 100, 1000} {
		s.Solve(B, &st)
		lo := st.States[0]
		for _, x := range st.States {
			if x.Energy < lo.Energy {
				lo = x
			}
		}
		fmt.Printf("B=%4g G: lowest state F=%g M=%+g at %.1f kHz\n", B, lo.F, lo.M, lo.Energy/1e3)
	}
	// Output:
	// B=   0 G: lowest state F=1 M=-1 at -62.5 kHz
	// B= 100 G: lowest state F=1 M=+1 at -258.8 kHz
	// B=1000 G: lowest state F=2 M=+2 at -2668.5 kHz
}
