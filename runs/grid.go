package runs

import (
	"context"
	"fmt"
	"math"

	"maserpol/levels"
	"maserpol/transfer"
)

// Grid checks of a computed model. A result is marked invalid (valid =
// False in every table, as outside the populations-only regime) when its
// channel grid cannot hold it:
//
//   - a line component (strength above gridVisible of the strongest) lies
//     outside the grid: its emission, and its stimulated rate in the
//     populations, are missing;
//   - the emission at either end of the grid exceeds gridEdge of the peak:
//     the line is cut;
//   - after gain narrowing, the line has fewer than minChannels channels
//     per 1/e half-width (FWHM / (2 sqrt(ln 2))): it is not resolved.
const (
	gridVisible = 1e-3
	gridEdge    = 1e-3
	minChannels = 3.0
)

// checkGrid marks the checkpoints of tr whose grid cannot hold the line
// and returns a warning for each reason found.
func checkGrid(ctx context.Context, p transfer.Params, tr *transfer.Trajectory) []string {
	n := len(tr.Velocity)
	if n < 2 {
		return nil
	}
	v0, v1 := tr.Velocity[0], tr.Velocity[n-1]
	dv := (v1 - v0) / float64(n-1)
	var warns []string
	invalidAll := func(msg string) {
		for k := range tr.Checkpoints {
			tr.Checkpoints[k].Valid = false
		}
		warns = append(warns, msg)
	}
	if p.Species != nil && p.Species.Frequency > 0 {
		if lt, err := levels.NewTransitionContext(ctx, p.Species, p.Field); err == nil {
			maxS := 0.0
			for _, l := range lt.Lines {
				maxS = math.Max(maxS, l.Strength)
			}
			off := 0
			for _, l := range lt.Lines {
				v := -levels.SpeedOfLight * l.Offset / p.Species.Frequency
				if l.Strength > gridVisible*maxS && (v < v0 || v > v1) {
					off++
				}
			}
			if off > 0 {
				invalidAll(fmt.Sprintf("%d line components lie outside the channel grid (%.4g to %.4g km/s): results marked invalid (widen line.span or set it to 0)", off, v0/1e3, v1/1e3))
			}
		}
	}
	cut, narrow := false, math.Inf(1)
	for k := range tr.Checkpoints {
		cp := &tr.Checkpoints[k]
		if len(cp.I) != n {
			continue
		}
		peak, ip := 0.0, 0
		for i, x := range cp.I {
			if x > peak {
				peak, ip = x, i
			}
		}
		if !(peak > 0) {
			continue
		}
		if math.Max(math.Abs(cp.I[0]), math.Abs(cp.I[n-1])) > gridEdge*peak {
			cp.Valid = false
			cut = true
		}
		w := halfWidth(cp.I, ip, peak) / (2 * math.Sqrt(math.Ln2))
		if w < minChannels {
			cp.Valid = false
			narrow = math.Min(narrow, w)
		}
	}
	if cut {
		warns = append(warns, "the emission reaches the edge of the channel grid (the line is cut): those checkpoints are marked invalid (widen line.span or set it to 0)")
	}
	if !math.IsInf(narrow, 1) {
		warns = append(warns, fmt.Sprintf("after gain narrowing the line has only %.2g channels per Doppler half-width (%g needed, %.3g km/s per channel): those checkpoints are marked invalid (use more channels or a narrower line.span)", narrow, minChannels, dv/1e3))
	}
	return warns
}

// halfWidth returns the full width at half maximum, in channels, of the
// feature of x peaking at channel ip, with linear interpolation; a side
// that never falls to half counts to the end of the grid.
func halfWidth(x []float64, ip int, peak float64) float64 {
	h := peak / 2
	left := 0.0
	for i := ip; i > 0; i-- {
		if x[i-1] < h {
			left = float64(i) - (x[i]-h)/(x[i]-x[i-1])
			break
		}
	}
	right := float64(len(x) - 1)
	for i := ip; i < len(x)-1; i++ {
		if x[i+1] < h {
			right = float64(i) + (x[i]-h)/(x[i]-x[i+1])
			break
		}
	}
	return right - left
}
