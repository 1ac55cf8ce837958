package interpret

import (
	"context"
	"fmt"
	"math"
	"slices"

	"maserpol/levels"
	"maserpol/transfer"
)

// DiagnoseSpec describes a diagnosis.
type DiagnoseSpec struct {
	// Base carries species, line width, decay rates, beaming and chi_B;
	// Base.Field (gauss) is the field of the field cases, 0 to choose one
	// with g Omega >> R (see DefaultField).
	Base        transfer.Params
	Measurement Measurement
	Grid        Grid
}

// ReferenceGamma is the decay rate that R/Gamma refers to in transfer: the
// harmonic mean of the upper and lower rates (transfer/model.go), so that
// a two-level line saturates as 1/(1 + 2R/Gamma).
func ReferenceGamma(p transfer.Params) float64 {
	p.Defaults()
	return 2 * p.GammaUpper * p.GammaLower / (p.GammaUpper + p.GammaLower)
}

// SaturationOfTbdOmega converts a brightness temperature times beaming
// solid angle (K sr) to R/Gamma through transfer.SaturationTbdOmega,
// R = A k T_b dOmega / (4 pi h nu) (physics.md section 4).
func SaturationOfTbdOmega(p transfer.Params, tbdOmega float64) float64 {
	sp := p.Species
	return tbdOmega / transfer.SaturationTbdOmega(sp.Frequency, sp.EinsteinA, ReferenceGamma(p))
}

// GOmegaPerGauss returns transfer's g Omega (s^-1) per gauss of field for
// the species, from a model at 1 G (the weak-field splitting is linear).
func GOmegaPerGauss(p transfer.Params) (float64, error) {
	const b = 1.0
	p.Field = b
	tr, err := levels.NewTransition(p.Species, b)
	if err != nil {
		return 0, err
	}
	m, err := transfer.NewModel(tr, p)
	if err != nil {
		return 0, err
	}
	return m.GOmega() / b, nil
}

// maxSplitKmsPerG is the largest weak-field splitting, m/s per gauss.
func maxSplitPerG(sp *levels.Species) (float64, error) {
	cs, err := levels.Components(sp)
	if err != nil {
		return 0, err
	}
	s := 0.0
	for _, c := range cs {
		s = math.Max(s, math.Abs(c.SplitKmsPerG)*1e3)
	}
	return s, nil
}

// DefaultField returns a field (gauss) with R/(g Omega) = 0.01 at the
// saturation satTop, capped so that the Zeeman splitting stays below 5 %
// of the Doppler width (the GKK regime, splitting << line width); capped
// reports whether the cap applied.
func DefaultField(p transfer.Params, satTop float64) (b float64, capped bool, err error) {
	p.Defaults()
	g, err := GOmegaPerGauss(p)
	if err != nil {
		return 0, false, err
	}
	if !(g > 0) {
		return 0, false, fmt.Errorf("species %q has no Zeeman splitting (g Omega = 0)", p.Species.Name)
	}
	b = 100 * satTop * ReferenceGamma(p) / g
	split, err := maxSplitPerG(p.Species)
	if err != nil {
		return 0, false, err
	}
	if split > 0 {
		if bmax := 0.05 * p.Doppler / split; b > bmax {
			return bmax, true, nil
		}
	}
	return b, false, nil
}

// Diagnose runs the grid of spec and evaluates the measurement. run is the
// model runner (Run); workers run models in parallel; progress may be nil.
func Diagnose(ctx context.Context, spec DiagnoseSpec, workers int, run RunFunc, progress func(done, total int)) (*Diagnosis, error) {
	m := spec.Measurement
	if err := m.Validate(); err != nil {
		return nil, err
	}
	base := spec.Base
	base.Defaults()
	if base.Species == nil {
		return nil, fmt.Errorf("interpret: no species")
	}
	if err := base.Validate(); err != nil {
		return nil, err
	}
	// Column: from well below the measured range, so the figure shows the
	// approach to saturation, to half a decade above it. Not further: the
	// coherence set of the density matrix grows with the top saturation
	// (water at the default field keeps 1096 unknowns to R/Gamma = 3e3,
	// within the automatic model's limits, but 2610 to 1e4, beyond them).
	base.FirstCheckpoint = math.Min(1e-2, m.SatLo/3)
	base.Saturation = math.Min(math.Max(3*m.SatHi, 100), 1e6)
	var warn []string
	if base.Field == 0 {
		b, capped, err := DefaultField(base, m.SatHi)
		if err != nil {
			return nil, err
		}
		base.Field = b
		if capped {
			warn = append(warn, fmt.Sprintf("default field %.4g G is capped by splitting < 5 %% of the Doppler width; g Omega >> R may not hold at the highest saturations", b))
		}
	}
	g, err := GOmegaPerGauss(base)
	if err != nil {
		return nil, err
	}
	// The field at which R/(g Omega) = 1 at the lowest measured saturation;
	// the weak-field cases divide it by each Grid.WeakRoverGOmega.
	weak := m.SatLo * ReferenceGamma(base) / g
	cases := Cases(base, spec.Grid, m.Branch, weak)
	res := RunCases(ctx, cases, workers, practicalDensity(run), progress)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	d, err := Evaluate(m, res, base.Field, weak)
	if err != nil {
		return nil, err
	}
	d.Warnings = append(warn, d.Warnings...)
	if w := base.Species.UnverifiedWarning(); w != "" && !slices.Contains(d.Warnings, w) {
		d.Warnings = append(d.Warnings, w)
	}
	return d, nil
}

// practicalDensity wraps run so that a model forced onto the density
// matrix (the weak-field cases) whose class system is beyond the limits
// the automatic model takes on is reported as not computed instead of
// running for hours (hyperfine-rich species at R >> g Omega, where every
// Zeeman pair of a hyperfine level is strongly coupled).
func practicalDensity(run RunFunc) RunFunc {
	return func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		if p.Population != transfer.Density {
			return run(ctx, p)
		}
		tr, err := levels.NewTransition(p.Species, p.Field)
		if err != nil {
			return nil, err
		}
		mod, err := transfer.NewModel(tr, p)
		if err != nil {
			return nil, err
		}
		if n, strong, ok := mod.DensitySize(); !ok {
			return nil, fmt.Errorf("not computed: the density matrix at B = %.3g G has %d real unknowns per velocity class, %d of them strongly coupled at R/Gamma = %.3g, more than a practical run takes on (hours per model)", p.Field, n, strong, p.Saturation)
		}
		return run(ctx, p)
	}
}
