package levels

import (
	"fmt"
	"math"
)

// isHalfInt reports whether x is a non-negative multiple of 1/2.
func isHalfInt(x float64) bool {
	return x >= 0 && !math.IsInf(x, 0) && math.Abs(2*x-math.Round(2*x)) < 1e-9
}

// Validate checks a Level: J and every spin non-negative multiples of 1/2,
// coupling spin indices valid and of the right count, quadrupole only on
// I >= 1 with J >= 1, tensor spin-spin only with J >= 1.
func (l Level) Validate() error {
	if !isHalfInt(l.J) {
		return fmt.Errorf("levels: J = %g must be a non-negative multiple of 1/2", l.J)
	}
	if l.Magneton != Nuclear && l.Magneton != Bohr {
		return fmt.Errorf("levels: unknown magneton %d", int(l.Magneton))
	}
	if len(l.Table) > 0 && len(l.Couplings) > 0 {
		return fmt.Errorf("levels: a level defined by a component table has no couplings")
	}
	for i, s := range l.Spins {
		if !isHalfInt(s.I) {
			return fmt.Errorf("levels: spin %d (%q): I = %g must be a non-negative multiple of 1/2", i, s.Name, s.I)
		}
		if math.IsNaN(s.G) || math.IsInf(s.G, 0) || math.IsNaN(s.Shielding) {
			return fmt.Errorf("levels: spin %d (%q): g-factor and shielding must be finite", i, s.Name)
		}
	}
	if d, _ := dimOf(l); !(d <= MaxDim) {
		return fmt.Errorf("levels: the level has %s basis states (2J+1 times 2I+1 of every spin; limit %d)", countText(d), MaxDim)
	}
	if math.IsNaN(l.G) || math.IsInf(l.G, 0) {
		return fmt.Errorf("levels: rotational g-factor must be finite")
	}
	for ci, c := range l.Couplings {
		want := 1
		if c.Kind == SpinSpin || c.Kind == SpinSpinTensor {
			want = 2
		}
		if c.Kind < SpinRotation || c.Kind > Quadrupole {
			return fmt.Errorf("levels: coupling %d: unknown kind %d", ci, int(c.Kind))
		}
		if len(c.Spins) != want {
			return fmt.Errorf("levels: coupling %d (%v) needs %d spin(s), has %d", ci, c.Kind, want, len(c.Spins))
		}
		for _, si := range c.Spins {
			if si < 0 || si >= len(l.Spins) {
				return fmt.Errorf("levels: coupling %d (%v): spin index %d out of range (level has %d spins)", ci, c.Kind, si, len(l.Spins))
			}
		}
		if want == 2 && c.Spins[0] == c.Spins[1] {
			return fmt.Errorf("levels: coupling %d (%v) couples spin %d with itself", ci, c.Kind, c.Spins[0])
		}
		if math.IsNaN(c.Value) || math.IsInf(c.Value, 0) {
			return fmt.Errorf("levels: coupling %d (%v): value must be finite", ci, c.Kind)
		}
		switch c.Kind {
		case Quadrupole:
			if s := l.Spins[c.Spins[0]]; s.I < 1 {
				return fmt.Errorf("levels: coupling %d: quadrupole on spin %q with I = %g (needs I >= 1)", ci, s.Name, s.I)
			}
			if l.J < 1 {
				return fmt.Errorf("levels: coupling %d: quadrupole in a level with J = %g (J = 0 and J = 1/2 have no quadrupole; needs J >= 1)", ci, l.J)
			}
		case SpinSpinTensor:
			if l.J < 1 {
				return fmt.Errorf("levels: coupling %d: tensor spin-spin in a level with J = %g (needs J >= 1)", ci, l.J)
			}
		}
	}
	return nil
}

// Validate checks both levels and that they form an electric-dipole line:
// same spins (count, I), |J_u - J_l| <= 1 integer, not J = 0 -> 0.
func (sp *Species) Validate() error {
	if sp == nil {
		return fmt.Errorf("levels: nil species")
	}
	if sp.IsTable() {
		return sp.validateTable()
	}
	if err := sp.Upper.Validate(); err != nil {
		return fmt.Errorf("%s: upper level: %w", sp.Name, err)
	}
	if err := sp.Lower.Validate(); err != nil {
		return fmt.Errorf("%s: lower level: %w", sp.Name, err)
	}
	if sp.Upper.Magneton != sp.Lower.Magneton || sp.Upper.Magneton != sp.Magneton {
		return fmt.Errorf("%s: species and both levels must use the same magneton", sp.Name)
	}
	if len(sp.Upper.Spins) != len(sp.Lower.Spins) {
		return fmt.Errorf("%s: upper has %d spins, lower %d: both levels must carry the same spins", sp.Name, len(sp.Upper.Spins), len(sp.Lower.Spins))
	}
	for i := range sp.Upper.Spins {
		if sp.Upper.Spins[i].I != sp.Lower.Spins[i].I {
			return fmt.Errorf("%s: spin %d has I = %g in the upper level but %g in the lower", sp.Name, i, sp.Upper.Spins[i].I, sp.Lower.Spins[i].I)
		}
	}
	if err := sp.CheckSize(); err != nil {
		return fmt.Errorf("%s: %w", sp.Name, err)
	}
	ju, jl := sp.Upper.J, sp.Lower.J
	d := ju - jl
	if math.Abs(d) > 1+1e-9 || math.Abs(d-math.Round(d)) > 1e-9 || ju+jl < 1-1e-9 {
		return fmt.Errorf("%s: no electric-dipole transition between J = %g and J = %g (needs |J_u - J_l| <= 1, integer, and not 0 -> 0)", sp.Name, ju, jl)
	}
	return nil
}

// IsTable reports whether the species is in the component-table form
// (table.go) rather than defined by level Hamiltonians.
func (sp *Species) IsTable() bool {
	return len(sp.Upper.Table) > 0 || len(sp.Lower.Table) > 0 || len(sp.TableLines) > 0
}
