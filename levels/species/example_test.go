package species_test

import (
	"fmt"

	"maserpol/levels"
	"maserpol/levels/species"
)

// A species file needs only the keys of its schema; here an invented
// J=1-0 line with one I=1 nucleus and a quadrupole coupling in the upper
// level, parsed from bytes rather than a file. The offsets follow the
// Casimir formula (Townes & Schawlow 1955) with eQq_J = 1 MHz, J = I = 1:
// E(F) = eQq_J [3/4 C(C+1) - 4]/2, C = F(F+1) - 4, so F = 0, 1, 2 lie at
// +2500, -1250, +250 kHz (worked by hand); strengths 1:3:5.
func ExampleParse() {
	src := []byte(`
name = "invented J=1-0 with one I=1 nucleus"
frequency = "90 GHz"
einstein_a = 2e-5
mass = "27 amu"
magneton = "nuclear"
unverified = true
[upper]
J = 1
g = 0.1
[lower]
J = 0
g = 0.1
[[spin]]
name = "N"
I = 1
g = 0.4
[[coupling]]
kind = "quadrupole"
level = "upper"
spins = ["N"]
value = "1 MHz"
`)
	sp, err := species.Parse(src, "invented.toml")
	if err != nil {
		fmt.Println(err)
		return
	}
	cs, _ := levels.Components(sp)
	for _, c := range cs {
		fmt.Printf("F %g-%g  %+8.1f kHz  strength %.4f\n", c.Fu, c.Fl, c.Offset/1e3, c.Strength)
	}
	// Output:
	// F 1-1   -1250.0 kHz  strength 0.3333
	// F 2-1    +250.0 kHz  strength 0.5556
	// F 0-1   +2500.0 kHz  strength 0.1111
}

// Errors name the file, line and key, and what is allowed.
func ExampleParse_error() {
	_, err := species.Parse([]byte("name = \"x\"\nfrequency = \"90 GHz\"\neinstein_a = 1e-5\nmass = \"27 amu\"\nmagneton = \"nuclear\"\n[upper]\nJ = -1\ng = 0\n[lower]\nJ = 0\ng = 0\n"), "bad.toml")
	fmt.Println(err)
	// Output:
	// bad.toml:7: key upper.J: J = -1 is not a non-negative multiple of 1/2 (allowed: 0, 1/2, 1, 3/2, ... (a non-negative multiple of 1/2; number or string "3/2"))
}
