package levels

import (
	"fmt"
	"math"
)

// Limits on the size of a level structure. They keep every species the
// program accepts within what one model can hold in memory and solve in
// reasonable time; they are checked before anything is allocated
// (Level.Validate, Species.Validate), so a species beyond them is refused
// as bad input instead of exhausting the machine.
//
// The largest molecular maser structures in use stay far below them: a
// J = 10 level with four spin-1/2 nuclei has 336 basis states (common
// practice: methanol and ammonia hyperfine models are of this size).
const (
	// MaxDim is the largest number of basis states (2J+1) prod(2I_k+1) of
	// one level.
	MaxDim = 2048
	// MaxLines is the largest number of dipole components (upper state,
	// lower state pairs with Delta M = 0, +-1) a transition may have.
	MaxLines = 50000
	// MaxBytes is the largest estimated memory (bytes) of a
	// TransitionSolver and one solved Transition.
	MaxBytes = 1 << 30
)

// Size describes how large the level structure of a species is, computed
// from J and the spins alone, before anything is built.
type Size struct {
	UpperDim, LowerDim float64 // basis states of each level (float: may exceed int)
	// LargestFactor names the quantum number that contributes most to the
	// larger level: "upper.J", "lower.J" or "spin[k].I".
	LargestFactor string
	// Lines is an upper bound on the number of dipole components: every
	// pair of states in M blocks with Delta M = 0, +-1 (all of them are
	// non-zero at a field that mixes the blocks fully). Zero when a level
	// exceeds MaxDim (not computed).
	Lines int
	// Bytes estimates the memory of a TransitionSolver with one solved
	// Transition: the M blocks and their workspaces, the eigenvectors on the
	// full basis, the dipole blocks and the line list. Beyond MaxDim it is
	// a lower bound: the eigenvectors on the full basis alone.
	Bytes float64
}

// SizeError is a level structure beyond the limits above.
type SizeError struct {
	Size Size
	What string // which limit: "basis states", "dipole components", "memory"
	// Key is the quantum number that contributes most (Size.LargestFactor).
	Key string
}

func (e *SizeError) Error() string {
	s := e.Size
	switch e.What {
	case "basis states":
		return fmt.Sprintf("levels: the level structure is too large: %s basis states in the upper level and %s in the lower ((2J+1) times (2I+1) of every spin; limit %d); it would need at least %s",
			countText(s.UpperDim), countText(s.LowerDim), MaxDim, BytesText(s.Bytes))
	case "dipole components":
		return fmt.Sprintf("levels: the transition has up to %d dipole components (limit %d); estimated memory %s", s.Lines, MaxLines, BytesText(s.Bytes))
	}
	return fmt.Sprintf("levels: the level structure needs an estimated %s (limit %s)", BytesText(s.Bytes), BytesText(MaxBytes))
}

// countText writes a possibly huge count without exponent noise for
// ordinary sizes.
func countText(x float64) string {
	if x < 1e9 {
		return fmt.Sprintf("%.0f", x)
	}
	return fmt.Sprintf("%.3g", x)
}

// BytesText writes a byte count in binary units ("1.5 GiB").
func BytesText(b float64) string {
	if math.IsInf(b, 1) || b > 1e30 {
		return "far more than any machine holds"
	}
	units := []string{"B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"}
	i := 0
	for b >= 1024 && i < len(units)-1 {
		b /= 1024
		i++
	}
	if i == 0 {
		return fmt.Sprintf("%.0f B", b)
	}
	return fmt.Sprintf("%.3g %s", b, units[i])
}

// dimOf returns the basis dimension of a level as a float (no overflow) and
// the factor (-1 for J, else the spin index) that contributes most.
func dimOf(l Level) (float64, int) {
	d := 2*l.J + 1
	big, which := d, -1
	for k, s := range l.Spins {
		f := 2*s.I + 1
		d *= f
		if f > big {
			big, which = f, k
		}
	}
	return d, which
}

// blockSizes returns the number of basis states per total 2M, from -2Mmax
// to 2Mmax in steps of 2: the convolution of the uniform m distributions
// of J and every spin. Only for levels within MaxDim.
func blockSizes(l Level) []int {
	counts := []int{1}
	add := func(j float64) {
		n := max(int(math.Round(2*j))+1, 1)
		out := make([]int, len(counts)+n-1)
		for i, c := range counts {
			for k := 0; k < n; k++ {
				out[i+k] += c
			}
		}
		counts = out
	}
	add(l.J)
	for _, s := range l.Spins {
		add(s.I)
	}
	return counts
}

// Size computes the size of the level structure of sp from its J and
// spins. It does not validate sp.
func (sp *Species) Size() Size {
	var s Size
	du, wu := dimOf(sp.Upper)
	dl, wl := dimOf(sp.Lower)
	s.UpperDim, s.LowerDim = du, dl
	which, pre := wu, "upper"
	if dl > du {
		which, pre = wl, "lower"
	}
	if which < 0 {
		s.LargestFactor = pre + ".J"
	} else {
		s.LargestFactor = fmt.Sprintf("spin[%d].I", which)
	}
	if !(du <= MaxDim && dl <= MaxDim) {
		// The eigenvectors on the full basis alone: a lower bound.
		s.Bytes = 8 * (du*du + dl*dl)
		return s
	}
	bu, bl := blockSizes(sp.Upper), blockSizes(sp.Lower)
	// Index of twice M in each list: (2M + 2Mmax)/2 where 2Mmax = len-1.
	offU, offL := len(bu)-1, len(bl)-1
	var blocks, pairs float64
	for _, n := range bu {
		blocks += float64(n * n)
	}
	for _, n := range bl {
		blocks += float64(n * n)
	}
	for i, nu := range bu {
		twoM := 2*i - offU
		for q := -1; q <= 1; q++ {
			j := (twoM - 2*q + offL)
			if j%2 != 0 || j < 0 || j/2 >= len(bl) {
				continue
			}
			nl := bl[j/2]
			s.Lines += nu * nl
			pairs += float64(nu * nl)
		}
	}
	// Per block: Hamiltonian, its copy, eigen workspace, eigenvectors,
	// zero-field vectors, overlaps, output and build temporaries (about 12
	// n^2 doubles); eigenvectors on the full basis for both levels; three
	// matrices per dipole block; about 48 bytes per line.
	s.Bytes = 8*(12*blocks+du*du+dl*dl+3*pairs) + 48*float64(s.Lines)
	return s
}

// CheckSize reports a *SizeError when sp exceeds MaxDim, MaxLines or
// MaxBytes.
func (sp *Species) CheckSize() error {
	s := sp.Size()
	switch {
	case !(s.UpperDim <= MaxDim && s.LowerDim <= MaxDim):
		return &SizeError{Size: s, What: "basis states", Key: s.LargestFactor}
	case s.Lines > MaxLines:
		return &SizeError{Size: s, What: "dipole components", Key: s.LargestFactor}
	case s.Bytes > MaxBytes:
		return &SizeError{Size: s, What: "memory", Key: s.LargestFactor}
	}
	return nil
}
