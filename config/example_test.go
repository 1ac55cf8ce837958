package config_test

import (
	"fmt"
	"log"

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
