package units_test

import (
	"fmt"

	"maserpol/config/units"
)

// Quantities are read once, at the boundary, into internal units (gauss,
// m/s, rad, ...) and written back in the unit a table column names.
func ExampleParse() {
	b, _ := units.Parse("25 mG", units.Field)
	v, _ := units.Parse("0.6 km/s", units.Velocity)
	fmt.Println(b, "G;", v, "m/s;", units.In(b, units.Field, "mG"), "mG")
	_, err := units.Parse("25 km/s", units.Field)
	fmt.Println(err)
	// Output:
	// 0.025 G; 600 m/s; 25 mG
	// "25 km/s": "km/s" is a unit of velocity, not of magnetic field (allowed: G, mG, uG, kG, T, mT, uT, nT)
}
