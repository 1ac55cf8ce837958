package config_test

import (
	"fmt"
	"log"
	"strings"

	"maserpol/config"
)

// A study of the field direction: three angles to the line of sight for
// two field strengths, six models in all.
func ExampleParse() {
	doc := `
name = "tilt"
species = "sio-v1-j1-0"

[field]
strength = ["3 G", "30 G"]
theta = { from = "30 deg", to = "90 deg", steps = 3 }

[line]
temperature = "1200 K"
turbulence = "0.5 km/s"
`
	st, err := config.Parse([]byte(doc), "tilt.toml")
	if err != nil {
		log.Fatal(err)
	}
	for _, m := range st.Models {
		fmt.Printf("%s  %s = %-6g %s = %g\n", m.Name, m.Values[0].Column, m.Values[0].Number, m.Values[1].Column, m.Values[1].Number)
	}
	fmt.Println("output:", st.Output.Dir)
	// Output:
	// m0000  B_mG = 3000   theta_deg = 30
	// m0001  B_mG = 3000   theta_deg = 60
	// m0002  B_mG = 3000   theta_deg = 90
	// m0003  B_mG = 30000  theta_deg = 30
	// m0004  B_mG = 30000  theta_deg = 60
	// m0005  B_mG = 30000  theta_deg = 90
	// output: runs/tilt
}

func ExampleError() {
	_, err := config.Parse([]byte("species = \"sio-v1-j1-0\"\n[field]\nstrength = \"30 G\"\nthta = \"60 deg\"\n"), "study.toml")
	fmt.Println(err)
	// Output:
	// study.toml:4: key field.thta: unknown key "thta" (allowed: "strength", "theta", "chi"); did you mean "theta"?
}

// A starter config for 22 GHz water, named after its file water.toml.
func ExampleStarterNamed() {
	text, err := config.StarterNamed("h2o-22", "water")
	if err != nil {
		log.Fatal(err)
	}
	for _, line := range strings.Split(text, "\n") {
		for _, key := range []string{"name = ", "strength = ", "doppler = ", "saturation = ", "dir = ", "# Validity"} {
			if strings.HasPrefix(line, key) {
				fmt.Println(line)
			}
		}
	}
	// Output:
	// # Validity: R/gOmega <= 0.1 up to saturation R/Gamma = 24; the checkpoints above it (to 100) are outside validity.
	// name = "water"
	// strength = "300 mG"
	// doppler = "0.6 km/s"
	// saturation = 100.0
	// dir = "runs/water"
}
