package levels

import (
	"context"
	"errors"
	"strings"
	"testing"
)

func sizeSpecies(ju, jl float64, spins ...float64) *Species {
	sp := &Species{Name: "size test", Frequency: 1e9, EinsteinA: 1e-6, Mass: 20}
	var ss []Spin
	for i, I := range spins {
		ss = append(ss, Spin{Name: string(rune('a' + i)), I: I, G: 0.3})
	}
	sp.Upper = Level{J: ju, G: 0.1, Spins: ss}
	sp.Lower = Level{J: jl, G: -0.2, Spins: append([]Spin(nil), ss...)}
	// Couplings mix the M blocks, so that most allowed pairs are non-zero.
	for k := range ss {
		sp.Upper.Couplings = append(sp.Upper.Couplings, Coupling{Kind: SpinRotation, Spins: []int{k}, Value: 1e4 * float64(k+1)})
		sp.Lower.Couplings = append(sp.Lower.Couplings, Coupling{Kind: SpinRotation, Spins: []int{k}, Value: 7e3 * float64(k+1)})
	}
	return sp
}

// TestSize checks the size computed from J and I alone against the
// structure actually built: the dimension is (2J+1) prod(2I+1) (counting
// of product states, common practice) and the line bound is never
// exceeded.
func TestSize(t *testing.T) {
	for _, c := range []struct {
		name   string
		sp     *Species
		du, dl int
	}{
		{"J=1-0", sizeSpecies(1, 0), 3, 1},
		{"J=3/2-1/2, I=1/2", sizeSpecies(1.5, 0.5, 0.5), 8, 4},
		{"J=6-5, I=3/2, 1/2", sizeSpecies(6, 5, 1.5, 0.5), 104, 88},
		{"J=2-2, I=1, 1, 1/2", sizeSpecies(2, 2, 1, 1, 0.5), 90, 90},
	} {
		s := c.sp.Size()
		if int(s.UpperDim) != c.du || int(s.LowerDim) != c.dl {
			t.Errorf("%s: dims %v, %v; want %d, %d", c.name, s.UpperDim, s.LowerDim, c.du, c.dl)
		}
		tr, err := NewTransition(c.sp, 0.37)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if len(tr.Upper.States) != c.du || len(tr.Lower.States) != c.dl {
			t.Errorf("%s: built %d, %d states", c.name, len(tr.Upper.States), len(tr.Lower.States))
		}
		if len(tr.Lines) > s.Lines {
			t.Errorf("%s: %d lines exceed the bound %d", c.name, len(tr.Lines), s.Lines)
		}
		// The bound counts pairs that the hyperfine selection rules empty
		// near zero field; it stays within a factor 2 of the real count.
		if 2*len(tr.Lines) < s.Lines {
			t.Errorf("%s: %d lines, bound %d is loose", c.name, len(tr.Lines), s.Lines)
		}
		if !(s.Bytes > 0) || s.Bytes > MaxBytes {
			t.Errorf("%s: estimated %v bytes", c.name, s.Bytes)
		}
	}
}

// TestSizeLimits checks that structures beyond the limits are refused
// before anything is allocated: J = 1e5 would need 2e5 x 2e5 doubles
// (320 GB) if it were built.
func TestSizeLimits(t *testing.T) {
	for _, c := range []struct {
		name, what, key string
		sp              *Species
	}{
		{"J = 1e5", "basis states", "upper.J", sizeSpecies(1e5, 1e5-1)},
		{"I = 5000", "basis states", "spin[0].I", sizeSpecies(1, 0, 5000)},
		{"eight spins 9/2", "basis states", "spin[0].I", sizeSpecies(1, 0, 4.5, 4.5, 4.5, 4.5, 4.5, 4.5, 4.5, 4.5)},
		{"lower level larger", "basis states", "lower.J", sizeSpecies(2000, 2001)},
		{"many lines", "dipole components", "upper.J", sizeSpecies(5, 4, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5)},
	} {
		err := c.sp.CheckSize()
		var se *SizeError
		if !errors.As(err, &se) {
			t.Errorf("%s: CheckSize = %v, want a *SizeError", c.name, err)
			continue
		}
		if se.What != c.what || se.Key != c.key {
			t.Errorf("%s: %s at %s, want %s at %s", c.name, se.What, se.Key, c.what, c.key)
		}
		if !strings.Contains(err.Error(), "B") { // a memory figure, "GiB" or the like
			t.Errorf("%s: message without memory estimate: %v", c.name, err)
		}
		if _, err := NewTransitionSolver(c.sp); err == nil {
			t.Errorf("%s: NewTransitionSolver accepted it", c.name)
		}
	}
	if err := (Level{J: 3000}).Validate(); err == nil {
		t.Error("Level.Validate accepted J = 3000 (6001 basis states)")
	}
}

// TestSolveCancel checks that a cancelled context stops the level solve.
func TestSolveCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	sp := sizeSpecies(6, 5, 1.5, 0.5)
	if _, err := NewTransitionContext(ctx, sp, 1); !errors.Is(err, context.Canceled) {
		t.Errorf("NewTransitionContext: %v, want context.Canceled", err)
	}
	ts, err := NewTransitionSolver(sp)
	if err != nil {
		t.Fatal(err)
	}
	var tr Transition
	if err := ts.SolveContext(ctx, 1, &tr); !errors.Is(err, context.Canceled) {
		t.Errorf("SolveContext: %v, want context.Canceled", err)
	}
	if _, err := ComponentsContext(ctx, sp); !errors.Is(err, context.Canceled) {
		t.Errorf("ComponentsContext: %v, want context.Canceled", err)
	}
}
