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
