package transfer

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/unit/constant"

	"maserpol/levels"
)

// Default values used by Defaults for zero fields. The source of each is
// given beside it; "common practice" marks values chosen by convention.
const (
	// DefaultChannels: enough channels that a line of the presets, at
	// their default width, seed and beaming, keeps MinChannelsPerWidth
	// channels across its gain-narrowed width v_D/sqrt(G): at 256 channels
	// P_V of hyperfine blends moved by 0.6-0.7 % when the channels
	// doubled, at 512 by at most 0.16 % (TestDefaultChannelsConverged).
	DefaultChannels = 512
	// DefaultCheckpointsPerDecade: project default.
	DefaultCheckpointsPerDecade = 8
	// DefaultFirstCheckpoint: project default; R/Gamma = 1e-3 is well inside
	// the unsaturated regime.
	DefaultFirstCheckpoint = 1e-3
	// DefaultSaturation: project default; R/Gamma = 1e4 is deep in the
	// saturated regime of Goldreich, Keeley & Kwan (1973).
	DefaultSaturation = 1e4
	// DefaultTolerance: relative local error per step, calibrated against
	// the reported quantities: q_b stays within 1e-4 absolute and P_V
	// within 0.1 % of a run at 1e-6 at every checkpoint for J=1-0, h2o-22
	// and synthetic-j6-5 (TestToleranceCalibration). With the extrapolated
	// K_mid (one population solve per step) 4e-4 gives 4.6e-5 in q_b and
	// 0.037-0.068 % in P_V, no more than 2e-4 gave with two solves per
	// step, in 11-16 % fewer steps; 2e-4 gave 2.8e-5 and 0.023-0.039 %.
	// (With two solves per step 3e-4 had left P_V of j6-5 on 64 channels
	// at 0.099 %.)
	DefaultTolerance = 4e-4
	// DefaultGamma (s^-1): decay rate of the maser sublevels. Common
	// practice, order of magnitude for SiO and H2O masers (value from
	// memory: models of both use Gamma ~ 1-5 s^-1).
	DefaultGamma = 1.0
	// DefaultBeamSolid (sr): beaming solid angle dOmega. Common practice
	// (value from memory: 1e-2 sr is typical of published T_b dOmega plots).
	DefaultBeamSolid = 1e-2
	// DefaultSeedTb (K): the cosmic microwave background (Fixsen 2009,
	// ApJ 707, 916; value from memory).
	DefaultSeedTb = 2.725
	// spanDopplers is the half-width of the automatic grid beyond the
	// outermost line, in Doppler widths: the profile there is exp(-16),
	// negligible even after 25 e-folds of unsaturated gain (common practice).
	spanDopplers = 4.0
	// maxGainDefault bounds the column when the saturation target cannot be
	// reached (for example without inversion): in units of unsaturated
	// line-centre gain.
	maxGainDefault = 1e9
)

// Electron mass, kg (CODATA 2018; not in gonum/unit/constant).
const electronMass = 9.1093837015e-31

// DopplerWidth returns the 1/e half-width (m/s) of the Doppler profile of
// molecules of mass massAmu (atomic mass units) at kinetic temperature
// tempK (K) with a Gaussian turbulent 1/e half-width turb (m/s):
//
//	v_D = sqrt(2 k T / m + v_turb^2).
//
// The profile is exp(-(v/v_D)^2); its FWHM is 2 sqrt(ln 2) v_D.
func DopplerWidth(tempK, massAmu, turb float64) float64 {
	m := massAmu * float64(constant.AtomicMass)
	return math.Sqrt(2*float64(constant.Boltzmann)*tempK/m + turb*turb)
}

// SaturationTbdOmega returns T_b dOmega (K sr) of a beam whose stimulated
// rate in the unsplit line equals gamma (s^-1), from
// R = A k T_b dOmega / (4 pi h nu) (physics.md section 4):
// T_b dOmega = 4 pi h nu gamma / (A k).
func SaturationTbdOmega(freq, einsteinA, gamma float64) float64 {
	return 4 * math.Pi * float64(constant.Planck) * freq * gamma / (einsteinA * float64(constant.Boltzmann))
}

// FaradayCoefficient is e^3 / (8 pi^2 eps0 m_e^2 c^3) in SI units
// (rad m^-2 per m^-3 T m): the rotation of the polarization angle is
// dchi/dl = FaradayCoefficient n_e B_par lambda^2. In astronomers' units it
// is the rotation-measure coefficient 0.812 rad m^-2 per cm^-3 microgauss
// pc (standard; e.g. Rybicki & Lightman 1979, Radiative Processes, 8.3).
var FaradayCoefficient = math.Pow(float64(constant.ElementaryCharge), 3) /
	(8 * math.Pi * math.Pi * float64(constant.ElectricConstant) * electronMass * electronMass *
		math.Pow(float64(constant.LightSpeedInVacuum), 3))

// Defaults fills zero fields with their defaults (see the Default
// constants) and derives Doppler from Temperature and Turbulence when
// Doppler is zero and Temperature is set.
func (p *Params) Defaults() {
	if p.Channels == 0 {
		p.Channels = DefaultChannels
	}
	if p.CheckpointsPerDecade == 0 {
		p.CheckpointsPerDecade = DefaultCheckpointsPerDecade
	}
	if p.FirstCheckpoint == 0 {
		p.FirstCheckpoint = DefaultFirstCheckpoint
	}
	if p.Saturation == 0 {
		p.Saturation = DefaultSaturation
	}
	if p.Tolerance == 0 {
		p.Tolerance = DefaultTolerance
	}
	if p.GammaUpper == 0 {
		p.GammaUpper = DefaultGamma
	}
	if p.GammaLower == 0 {
		p.GammaLower = DefaultGamma
	}
	if p.BeamSolid == 0 {
		p.BeamSolid = DefaultBeamSolid
	}
	if p.Seed.Tb == 0 {
		p.Seed.Tb = DefaultSeedTb
	}
	if p.CoherenceThreshold == 0 {
		p.CoherenceThreshold = DefaultCoherenceThreshold
	}
	if p.Doppler == 0 && p.Temperature > 0 && p.Species != nil && p.Species.Mass > 0 {
		p.Doppler = DopplerWidth(p.Temperature, p.Species.Mass, p.Turbulence)
	}
}

// WithDefaults returns a copy of p with Defaults applied.
func (p Params) WithDefaults() Params {
	p.Defaults()
	return p
}

// ParamError reports an invalid parameter: the Params field, its value and
// the allowed range.
type ParamError struct {
	Field   string
	Value   float64
	Allowed string
	Msg     string
}

func (e *ParamError) Error() string {
	s := "transfer: " + e.Field
	if e.Msg != "" {
		s += ": " + e.Msg
	} else {
		s += fmt.Sprintf(" = %g", e.Value)
	}
	if e.Allowed != "" {
		s += " (allowed: " + e.Allowed + ")"
	}
	return s
}

// Validate checks p after Defaults; it returns the first problem found.
// The species itself is checked by validateSpecies (it may come from an
// injected Transition).
func (p *Params) Validate() error {
	finite := func(name string, v float64) error {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return &ParamError{Field: name, Value: v, Msg: fmt.Sprintf("%g is not finite", v), Allowed: "finite numbers"}
		}
		return nil
	}
	positive := func(name string, v float64, unit string) error {
		if err := finite(name, v); err != nil {
			return err
		}
		if v <= 0 {
			return &ParamError{Field: name, Value: v, Allowed: "> 0 " + unit}
		}
		return nil
	}
	nonneg := func(name string, v float64, unit string) error {
		if err := finite(name, v); err != nil {
			return err
		}
		if v < 0 {
			return &ParamError{Field: name, Value: v, Allowed: ">= 0 " + unit}
		}
		return nil
	}
	for _, c := range []struct {
		name string
		v    float64
	}{{"Field", p.Field}, {"Chi", p.Chi}, {"Seed.Angle", p.Seed.Angle}} {
		if err := finite(c.name, c.v); err != nil {
			return err
		}
	}
	if err := finite("Theta", p.Theta); err != nil {
		return err
	}
	if p.Theta < 0 || p.Theta > math.Pi {
		return &ParamError{Field: "Theta", Value: p.Theta, Allowed: "0 to pi rad (0 to 180 deg)"}
	}
	if p.Doppler == 0 {
		return &ParamError{Field: "Doppler", Msg: "Doppler width is zero; set Doppler (m/s) or Temperature (K)", Allowed: "> 0 m/s"}
	}
	if err := positive("Doppler", p.Doppler, "m/s"); err != nil {
		return err
	}
	if err := nonneg("Temperature", p.Temperature, "K"); err != nil {
		return err
	}
	if err := nonneg("Turbulence", p.Turbulence, "m/s"); err != nil {
		return err
	}
	if p.Channels < 16 || p.Channels > 1<<16 {
		return &ParamError{Field: "Channels", Value: float64(p.Channels), Allowed: "16 to 65536"}
	}
	if err := nonneg("Span", p.Span, "m/s"); err != nil {
		return err
	}
	if err := positive("GammaUpper", p.GammaUpper, "s^-1"); err != nil {
		return err
	}
	if err := positive("GammaLower", p.GammaLower, "s^-1"); err != nil {
		return err
	}
	if err := positive("BeamSolid", p.BeamSolid, "sr"); err != nil {
		return err
	}
	if p.BeamSolid > 4*math.Pi {
		return &ParamError{Field: "BeamSolid", Value: p.BeamSolid, Allowed: "<= 4 pi sr"}
	}
	if err := p.Pump.validate(p.GammaLower / p.GammaUpper); err != nil {
		return err
	}
	if err := positive("Seed.Tb", p.Seed.Tb, "K"); err != nil {
		return err
	}
	if err := finite("Seed.LinearFraction", p.Seed.LinearFraction); err != nil {
		return err
	}
	if err := finite("Seed.CircularFraction", p.Seed.CircularFraction); err != nil {
		return err
	}
	lf, cf := p.Seed.LinearFraction, p.Seed.CircularFraction
	if lf < 0 || lf > 1 {
		return &ParamError{Field: "Seed.LinearFraction", Value: lf, Allowed: "0 to 1"}
	}
	if cf < -1 || cf > 1 {
		return &ParamError{Field: "Seed.CircularFraction", Value: cf, Allowed: "-1 to 1"}
	}
	if lf*lf+cf*cf > 1+1e-12 {
		return &ParamError{Field: "Seed", Msg: fmt.Sprintf("total polarization sqrt(%g^2+%g^2) exceeds 1", lf, cf), Allowed: "LinearFraction^2 + CircularFraction^2 <= 1"}
	}
	if err := nonneg("ElectronDensity", p.ElectronDensity, "cm^-3"); err != nil {
		return err
	}
	if err := nonneg("GainLength", p.GainLength, "m"); err != nil {
		return err
	}
	if p.ElectronDensity > 0 && p.GainLength == 0 {
		return &ParamError{Field: "GainLength", Msg: "in-source Faraday rotation (ElectronDensity > 0) needs the path per unit gain", Allowed: "> 0 m"}
	}
	if err := positive("Saturation", p.Saturation, "(R/Gamma)"); err != nil {
		return err
	}
	if err := nonneg("Gain", p.Gain, "(unsaturated optical depth)"); err != nil {
		return err
	}
	if p.CheckpointsPerDecade < 1 || p.CheckpointsPerDecade > 1000 {
		return &ParamError{Field: "CheckpointsPerDecade", Value: float64(p.CheckpointsPerDecade), Allowed: "1 to 1000"}
	}
	if err := positive("FirstCheckpoint", p.FirstCheckpoint, "(R/Gamma)"); err != nil {
		return err
	}
	if p.Gain == 0 && p.FirstCheckpoint > p.Saturation {
		return &ParamError{Field: "FirstCheckpoint", Value: p.FirstCheckpoint, Allowed: fmt.Sprintf("<= Saturation (%g)", p.Saturation)}
	}
	if err := positive("Tolerance", p.Tolerance, ""); err != nil {
		return err
	}
	if p.Tolerance > 0.1 || p.Tolerance < 1e-10 {
		return &ParamError{Field: "Tolerance", Value: p.Tolerance, Allowed: "1e-10 to 0.1"}
	}
	switch p.Population {
	case Auto, Rates, Density:
	default:
		return &ParamError{Field: "Population", Value: float64(p.Population), Allowed: "Auto, Rates, Density"}
	}
	if err := finite("CoherenceThreshold", p.CoherenceThreshold); err != nil {
		return err
	}
	// Zero is the unset value (Defaults fills it in).
	if p.CoherenceThreshold != 0 && (p.CoherenceThreshold < 1 || p.CoherenceThreshold > 1e6) {
		return &ParamError{Field: "CoherenceThreshold", Value: p.CoherenceThreshold, Allowed: "1 to 1e6 (times the largest rate of the run)"}
	}
	return nil
}

func (pm *Pump) validate(gammaRatio float64) error {
	switch pm.Kind {
	case Isotropic, Anisotropic, Hyperfine:
	default:
		return &ParamError{Field: "Pump.Kind", Value: float64(pm.Kind), Allowed: "Isotropic, Anisotropic, Hyperfine"}
	}
	a := pm.Alignment
	if math.IsNaN(a) || a < -1 || a > 1 {
		return &ParamError{Field: "Pump.Alignment", Value: a, Allowed: "-1 to 1"}
	}
	for name, m := range map[string]map[float64]float64{"Pump.UpperF": pm.UpperF, "Pump.LowerF": pm.LowerF} {
		for f, w := range m {
			if math.IsNaN(w) || math.IsInf(w, 0) || w < 0 {
				return &ParamError{Field: fmt.Sprintf("%s[F=%g]", name, f), Value: w, Allowed: "finite weights >= 0"}
			}
		}
	}
	lp := pm.LowerPump
	if math.IsNaN(lp) || math.IsInf(lp, 0) || lp < 0 || lp >= gammaRatio {
		return &ParamError{Field: "Pump.LowerPump", Value: lp,
			Allowed: fmt.Sprintf("0 <= LowerPump < GammaLower/GammaUpper = %g (otherwise the line is not inverted)", gammaRatio)}
	}
	return nil
}

// validateSpecies checks the constants of sp that the transfer uses.
func validateSpecies(sp *levels.Species) error {
	if sp == nil {
		return errors.New("transfer: Species is nil")
	}
	check := func(name string, v float64, unit string) error {
		if math.IsNaN(v) || math.IsInf(v, 0) || v <= 0 {
			return &ParamError{Field: "Species." + name, Value: v, Msg: fmt.Sprintf("%q: %s = %g", sp.Name, name, v), Allowed: "> 0 " + unit}
		}
		return nil
	}
	if err := check("Frequency", sp.Frequency, "Hz"); err != nil {
		return err
	}
	if err := check("EinsteinA", sp.EinsteinA, "s^-1"); err != nil {
		return err
	}
	return check("Mass", sp.Mass, "amu")
}
