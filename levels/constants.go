package levels

// Physical constants, in one place. Values are CODATA 2018 (Tiesinga et al.
// 2021, Rev. Mod. Phys. 93, 025010); the test checks them against gonum's
// unit/constant where gonum has the ingredients.
const (
	// NuclearMagnetonHzPerTesla is mu_N/h.
	NuclearMagnetonHzPerTesla = 7.622593229e6
	// BohrMagnetonHzPerTesla is mu_B/h.
	BohrMagnetonHzPerTesla = 13.996244936e9
	// GaussPerTesla converts tesla to gauss (1 T = 1e4 G).
	GaussPerTesla = 1e4
	// SpeedOfLight is c in m/s (exact, SI).
	SpeedOfLight = 299792458.0
)

// HzPerGauss returns the magneton over h in Hz per gauss.
func (m Magneton) HzPerGauss() float64 {
	if m == Bohr {
		return BohrMagnetonHzPerTesla / GaussPerTesla
	}
	return NuclearMagnetonHzPerTesla / GaussPerTesla
}

// zeemanSign is the sign s in H_Z = s * mu * B * (g_J J_z + sum g_i (1-sigma_i) I_iz):
// -1 for nuclear moments (mu = +g mu_N I), +1 for the Bohr-magneton case,
// where the g-factors follow the electron sign convention (mu = -g mu_B J).
func (m Magneton) zeemanSign() float64 {
	if m == Bohr {
		return 1
	}
	return -1
}

// String returns "nuclear" or "bohr".
func (m Magneton) String() string {
	if m == Bohr {
		return "bohr"
	}
	return "nuclear"
}

// String returns the species-file name of the coupling kind.
func (k CouplingKind) String() string {
	switch k {
	case SpinRotation:
		return "spin-rotation"
	case SpinSpin:
		return "spin-spin"
	case SpinSpinTensor:
		return "spin-spin-tensor"
	case Quadrupole:
		return "quadrupole"
	}
	return "unknown"
}
