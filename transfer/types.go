package transfer

import (
	"fmt"

	"maserpol/levels"
)

// This file is the contract between transfer and its consumers (config,
// runs, cmd). Units here are SI unless noted; the config package converts
// user units to these.

// PumpKind selects the pumping model of physics.md section 4.
type PumpKind int

const (
	Isotropic   PumpKind = iota // p_a = 1 for every eigenstate
	Anisotropic                 // p_a from the alignment of the state, signed Alignment
	Hyperfine                   // p_a weighted by F label
)

// Pump describes how the levels are pumped.
type Pump struct {
	Kind PumpKind
	// Alignment is the signed anisotropy of the pump for Anisotropic
	// (dimensionless, |Alignment| <= 1; 0 is isotropic). It shapes the pump
	// of both levels with the same sign: positive favours the |m_J| = J
	// states of the upper and of the lower level (see doc.go).
	Alignment float64
	// UpperF and LowerF give relative pumping weights by F label for
	// Hyperfine (missing F labels get weight 1).
	UpperF map[float64]float64
	LowerF map[float64]float64
	// UpperLevels and LowerLevels give relative pumping weights by
	// zero-field hyperfine level, keyed by {F1, F} (F1 = F with fewer than
	// two spins), for Hyperfine; a state they name takes this weight
	// instead of its UpperF/LowerF one.
	UpperLevels map[[2]float64]float64
	LowerLevels map[[2]float64]float64
	// OnlyNamed gives weight 0 instead of 1 to the upper states that
	// neither UpperLevels nor UpperF names (Hyperfine): the pump then feeds
	// only the named upper hyperfine levels, as when one component is
	// pumped (which also inverts the other components from the same upper
	// level; lower states keep the default weight 1).
	OnlyNamed bool
	// LowerPump is the pump rate into each lower sublevel relative to the
	// pump rate into each upper sublevel (dimensionless, default 0). With
	// equal decay rates only the difference matters; it must stay below
	// GammaLower/GammaUpper so the unsaturated line is inverted.
	LowerPump float64
}

// PopulationModel selects how the populations of a velocity class are
// computed (physics.md sections 4 and 8).
type PopulationModel int

const (
	// Auto uses the rate equations while R/(g Omega) stays below
	// AutoCoherenceFrom along the column and the density matrix from there
	// on (u_b, first order in R/(g Omega), is why the switch is early).
	Auto PopulationModel = iota
	// Rates keeps populations only (section 4), valid for R << g Omega.
	Rates
	// Density keeps the Zeeman coherences (section 8) along the whole column.
	Density
)

// String returns the name used in configs and tables.
func (pm PopulationModel) String() string {
	switch pm {
	case Auto:
		return "auto"
	case Rates:
		return "rates"
	case Density:
		return "density"
	}
	return fmt.Sprintf("PopulationModel(%d)", int(pm))
}

// ParsePopulationModel returns the model named s ("auto", "rates" or
// "density").
func ParsePopulationModel(s string) (PopulationModel, bool) {
	for _, pm := range []PopulationModel{Auto, Rates, Density} {
		if pm.String() == s {
			return pm, true
		}
	}
	return 0, false
}

// Seed is the radiation entering the column at s = 0.
type Seed struct {
	Tb               float64 // brightness temperature, K
	LinearFraction   float64 // 0..1
	CircularFraction float64 // -1..1 (V/I)
	Angle            float64 // sky position angle of the seed's linear polarization, rad
}

// Params describes one model: species, field, line, pumping, seed, column.
type Params struct {
	Species *levels.Species
	Field   float64 // gauss (sign: along +k when positive; see doc.go)
	Theta   float64 // angle between B and the line of sight, rad, [0, pi]
	Chi     float64 // sky position angle of projected B, rad

	Doppler float64 // 1/e half-width of the thermal+turbulent profile, m/s
	// Temperature (K) and Turbulence (1/e half-width, m/s) give Doppler
	// through DopplerWidth when Doppler is zero.
	Temperature float64
	Turbulence  float64
	Channels    int     // default DefaultChannels
	Span        float64 // total velocity span of the channel grid, m/s; 0 = automatic

	GammaUpper float64 // decay rate of upper eigenstates, s^-1
	GammaLower float64 // decay rate of lower eigenstates, s^-1
	BeamSolid  float64 // beam solid angle dOmega, sr

	Pump Pump
	Seed Seed

	ElectronDensity float64 // in-source free electrons for Faraday rotation, cm^-3 (0 = none)
	// GainLength is the physical path (m) over which the unsaturated
	// line-centre gain grows by one e-fold; it turns ElectronDensity into a
	// Faraday rotation per unit gain. Required when ElectronDensity > 0.
	GainLength float64

	Saturation           float64 // stop when R/Gamma at line centre reaches this (default 1e4)
	Gain                 float64 // or stop at this total unsaturated line-centre gain (used when > 0)
	CheckpointsPerDecade int     // default 8
	FirstCheckpoint      float64 // lowest saturation recorded, default 1e-3
	Tolerance            float64 // relative local error per step, default 4e-4 (DefaultTolerance)

	// Population selects the population model (default Auto).
	Population PopulationModel
	// CoherenceThreshold is kappa of the coherence set: a pair of
	// eigenstates of one level keeps its coherence when its splitting (in
	// rate units) is below kappa x Saturation (default
	// DefaultCoherenceThreshold; see coherence.go).
	CoherenceThreshold float64
}

// Checkpoint is the emergent spectrum and its reported quantities at one
// point along the column (physics.md section 6).
type Checkpoint struct {
	Saturation  float64 // max over lines of R/Gamma at line centre
	Gain        float64 // unsaturated line-centre optical depth (|tau|) accumulated so far
	TbdOmega    float64 // K sr
	IPeak       float64 // K
	Ml          float64 // sqrt(Q^2+U^2)/I at the peak channel
	MlInt       float64 // intensity-weighted over the line
	EVPA        float64 // rad, sky frame, IAU
	Qb          float64 // Q_f/I at the peak, field frame, > 0 parallel to projected B
	PV          float64 // (V_max - V_min)/I_peak
	VIPeak      float64 // V/I at the peak channel
	Ub          float64 // U_f/I at the peak, field frame: nonzero only with Zeeman coherences
	RoverGOmega float64 // R / (g Omega): the populations-only model holds while it is <= ValidLimit
	// Coherent is true when the density matrix (Zeeman coherences) gave
	// this checkpoint, false for the populations-only rate equations.
	Coherent bool
	// FlatSpectrum measures the flat-spectrum approximation of the
	// coherence terms (coherent.flatness; 0 for populations only): valid
	// while it is <= FlatLimit.
	FlatSpectrum float64
	// RoverDoppler is the stimulated rate over the Doppler width in rate
	// units, R/(2 pi nu0 v_D/c): the rate (broadband) approximation of both
	// population models holds while it is <= BroadbandLimit.
	RoverDoppler float64
	// Valid is true when every approximation of the model used holds:
	// R/Doppler <= BroadbandLimit, and populations only, R/(g Omega) <=
	// ValidLimit; density matrix, FlatSpectrum <= FlatLimit.
	Valid bool
	// Sky-frame Stokes spectra in K of brightness temperature, one per channel.
	I, Q, U, V []float64
}

// Trajectory is the result of one model: the channel grid and the
// checkpoints in increasing saturation.
type Trajectory struct {
	Velocity    []float64 // channel velocities, m/s
	Checkpoints []Checkpoint
	// GOmega is the Zeeman splitting in rate units (s^-1) used for validity.
	GOmega   float64
	Warnings []string
	// SaturationTbdOmega is T_b dOmega (K sr) of a beam with R/Gamma = 1
	// in the unsplit line: 4 pi h nu Gamma / (A k).
	SaturationTbdOmega float64
	// SeedSaturation is the saturation R/Gamma (largest over lines, at the
	// line centre) of the seed radiation alone, at s = 0; checkpoints below
	// it cannot be recorded.
	SeedSaturation float64
	// Steps and Rejected count accepted and rejected integration steps.
	Steps, Rejected int
	// Population is the population model requested; CoherentFrom the
	// saturation R/Gamma from which the density matrix was used (0 when
	// it was used from the seed on, +Inf when never).
	Population   PopulationModel
	CoherentFrom float64
}
