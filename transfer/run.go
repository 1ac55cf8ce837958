package transfer

import (
	"context"
	"fmt"

	"maserpol/levels"
)

// Run solves the level structure of p.Species at p.Field with
// levels.NewTransition and integrates the column (see Model.Run). For many
// models of one species, build the transitions with a
// levels.TransitionSolver and use NewModel.
func Run(ctx context.Context, p Params) (*Trajectory, error) {
	if err := validateSpecies(p.Species); err != nil {
		return nil, err
	}
	tr, err := levels.NewTransitionContext(ctx, p.Species, p.Field)
	if err != nil {
		return nil, fmt.Errorf("transfer: species %q at %g G: %w", p.Species.Name, p.Field, err)
	}
	m, err := NewModel(tr, p)
	if err != nil {
		return nil, err
	}
	return m.Run(ctx)
}
