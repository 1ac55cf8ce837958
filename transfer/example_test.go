package transfer_test

import (
	"context"
	"fmt"
	"math"

	"maserpol/levels/species"
	"maserpol/transfer"
)

// A saturating SiO v=1 J=1-0 maser with the field perpendicular to the line
// of sight approaches the Goldreich, Keeley & Kwan (1973) limit q_b = -1/3:
// polarized perpendicular to the projected field.
func Example() {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		fmt.Println(err)
		return
	}
	tj, err := transfer.Run(context.Background(), transfer.Params{
		Species:    sp,
		Field:      50, // G
		Theta:      math.Pi / 2,
		Doppler:    1000, // m/s
		GammaUpper: 0.01, // s^-1, small so that g Omega >> R at R/Gamma = 1e3
		GammaLower: 0.01,
		Saturation: 1e3,
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	c := tj.Checkpoints[len(tj.Checkpoints)-1]
	fmt.Printf("R/Gamma = %.0f: q_b = %.2f, m_l = %.2f, valid = %v\n", c.Saturation, c.Qb, c.Ml, c.Valid)
	// Output:
	// R/Gamma = 1000: q_b = -0.33, m_l = 0.33, valid = true
}

// With a weak field, R > g Omega, the Zeeman coherences matter. The
// populations-only rate equations still give the GKK value of g Omega >> R
// (q_b = -1/9 at 60 deg) and flag it invalid; the density matrix (the
// default automatic model switches to it) shows the molecules' symmetry
// axis turning from the field towards the line of sight: a stronger
// polarization whose EVPA is turned away from the projected field
// (u_b != 0). It fades once g Omega drops below sqrt(R Gamma) (Goldreich,
// Keeley & Kwan 1973).
func ExamplePopulationModel() {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, pm := range []transfer.PopulationModel{transfer.Rates, transfer.Density} {
		tj, err := transfer.Run(context.Background(), transfer.Params{
			Species:    sp,
			Field:      0.02, // G: g Omega of a few s^-1
			Theta:      60 * math.Pi / 180,
			Doppler:    1000, // m/s
			Channels:   128,
			Saturation: 100,
			Population: pm,
		})
		if err != nil {
			fmt.Println(err)
			return
		}
		c := tj.Checkpoints[len(tj.Checkpoints)-1]
		fmt.Printf("%-7s R/gOmega = %.0f: q_b = %.3f, u_b = %.3f, valid = %v\n", pm, c.RoverGOmega, c.Qb, c.Ub, c.Valid)
	}
	// Output:
	// rates   R/gOmega = 7: q_b = -0.105, u_b = 0.000, valid = false
	// density R/gOmega = 7: q_b = -0.293, u_b = -0.082, valid = true
}
