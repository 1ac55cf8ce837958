package interpret

import (
	"context"
	"fmt"

	"maserpol/levels"
)

// ComponentFactors is the Zeeman factor of one hyperfine component when it
// alone is pumped (FactorSpec.PumpOnly): which component masers is often
// not known (methanol), so each candidate gets its own factor and V.
type ComponentFactors struct {
	Index    int    // into levels.Components
	Label    string // as levels.SelectComponent reads it
	Velocity float64
	Factors  *Factors
}

// MainComponentFraction is the smallest strength, relative to the
// strongest component, of the components EachComponent treats: weaker ones
// hardly mase (common practice: the tables of methanol lines list the
// main components only).
const MainComponentFraction = 0.05

// EachComponent computes the Zeeman factors of every main component of the
// species (strength >= MainComponentFraction of the strongest), each pumped
// alone, with the other settings of spec.
func EachComponent(ctx context.Context, spec FactorSpec, workers int, run RunFunc) ([]ComponentFactors, error) {
	sp := spec.Base.Species
	if sp == nil {
		return nil, fmt.Errorf("interpret: no species")
	}
	cs, err := levels.Components(sp)
	if err != nil {
		return nil, err
	}
	labels := levels.ComponentLabels(cs)
	strongest := 0.0
	for _, c := range cs {
		strongest = max(strongest, c.Strength)
	}
	var out []ComponentFactors
	for i, c := range cs {
		if c.Strength < MainComponentFraction*strongest || c.SplitHzPerG == 0 {
			continue
		}
		s := spec
		s.Component, s.PumpOnly = i, true
		f, err := ZeemanFactors(ctx, s, workers, run)
		if err != nil {
			return nil, fmt.Errorf("component %d (%s): %w", i, labels[i], err)
		}
		out = append(out, ComponentFactors{Index: i, Label: labels[i], Velocity: ComponentVelocity(sp, c), Factors: f})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("species %q: no component with a linear Zeeman splitting", sp.Name)
	}
	return out, nil
}
