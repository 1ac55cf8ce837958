package levels

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/unit/constant"
)

// mu_B/h = e/(4 pi m_e) and mu_N/h = e/(4 pi m_p) from gonum's CODATA 2018
// elementary charge and atomic mass constant, with the electron and proton
// masses in u from CODATA 2018 (Tiesinga et al. 2021: m_e = 5.48579909065e-4 u,
// m_p = 1.007276466621 u; gonum has no particle masses). Agreement to 1e-9
// relative (CODATA rounds mu/h to 10 digits).
func TestMagnetonsCODATA(t *testing.T) {
	e := float64(constant.ElementaryCharge)
	u := float64(constant.AtomicMass)
	for _, c := range []struct {
		name      string
		mass, got float64
	}{
		{"mu_B/h", 5.48579909065e-4, BohrMagnetonHzPerTesla},
		{"mu_N/h", 1.007276466621, NuclearMagnetonHzPerTesla},
	} {
		want := e / (4 * math.Pi * c.mass * u)
		if math.Abs(c.got/want-1) > 1e-9 {
			t.Errorf("%s = %.10g Hz/T, from gonum constants %.10g", c.name, c.got, want)
		}
	}
	if SpeedOfLight != float64(constant.LightSpeedInVacuum) {
		t.Errorf("c = %g, gonum %g", SpeedOfLight, float64(constant.LightSpeedInVacuum))
	}
}
