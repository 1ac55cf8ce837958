package interpret

import (
	"math"
	"sort"

	"maserpol/transfer"
)

// Branch is the orientation of a measured linear polarization relative to
// the sky projection of the field.
type Branch int

const (
	// AnyBranch: no EVPA relative to the field is known.
	AnyBranch Branch = iota
	// Parallel: electric vector along the projected field (q_b > 0).
	Parallel
	// Perpendicular: electric vector across the projected field (q_b < 0).
	Perpendicular
)

func (b Branch) String() string {
	switch b {
	case Parallel:
		return "parallel"
	case Perpendicular:
		return "perpendicular"
	}
	return "any"
}

// BranchOf returns the branch selected by psi = EVPA - chi_B (rad). Within
// tol (rad) of 45 deg the orientation is undecided and AnyBranch is returned.
func BranchOf(psi, tol float64) Branch {
	c := math.Cos(2 * psi)
	if math.Abs(c) <= math.Sin(2*tol) {
		return AnyBranch
	}
	if c > 0 {
		return Parallel
	}
	return Perpendicular
}

// Sample is what one checkpoint says about polarization against saturation.
type Sample struct {
	// Saturation is the beam's R/Gamma as a measurement gives it: T_b dOmega
	// at the peak over Trajectory.SaturationTbdOmega, i.e. through
	// R = A k T_b dOmega/(4 pi h nu). It is the sublevel-mean rate of the
	// peak channel and differs from Checkpoint.Saturation (the largest rate
	// over lines, weights included) by up to about 25 %, depending on theta.
	Saturation  float64
	Ml          float64 // m_l at the peak channel
	Qb          float64 // Q_f/I at the peak, field frame
	PV          float64 // (V_max - V_min)/I_peak
	RoverGOmega float64
	// Excess is the checkpoint's validity measure over its limit: R/(g
	// Omega)/ValidLimit for the rate equations, the flat-spectrum measure
	// over transfer.FlatLimit for the density matrix; valid where <= 1.
	Excess float64
}

// excessOf returns Sample.Excess of a checkpoint.
func excessOf(cp transfer.Checkpoint) float64 {
	if cp.Coherent {
		return cp.FlatSpectrum / transfer.FlatLimit
	}
	return cp.RoverGOmega / ValidLimit
}

// Curve is a model's polarization against saturation, in increasing
// saturation.
type Curve []Sample

// CurveOf extracts the reported quantities of a trajectory's checkpoints,
// dropping checkpoints with a non-positive saturation (no log). The
// saturation axis is the one a measured T_b dOmega gives (see Sample); a
// trajectory without its T_b dOmega scale falls back to
// Checkpoint.Saturation.
func CurveOf(tr *transfer.Trajectory) Curve {
	c := make(Curve, 0, len(tr.Checkpoints))
	for _, cp := range tr.Checkpoints {
		sat := cp.Saturation
		if tr.SaturationTbdOmega > 0 && cp.TbdOmega > 0 {
			sat = cp.TbdOmega / tr.SaturationTbdOmega
		}
		if !(sat > 0) {
			continue
		}
		c = append(c, Sample{sat, cp.Ml, cp.Qb, cp.PV, cp.RoverGOmega, excessOf(cp)})
	}
	sort.SliceStable(c, func(i, j int) bool { return c[i].Saturation < c[j].Saturation })
	return c
}

// Project returns the polarization of s projected on branch b: +q_b for
// Parallel, -q_b for Perpendicular, m_l for AnyBranch.
func (s Sample) Project(b Branch) float64 {
	switch b {
	case Parallel:
		return s.Qb
	case Perpendicular:
		return -s.Qb
	}
	return s.Ml
}

// Span returns the saturation range the curve covers.
func (c Curve) Span() (lo, hi float64) {
	if len(c) == 0 {
		return math.NaN(), math.NaN()
	}
	return c[0].Saturation, c[len(c)-1].Saturation
}

// At interpolates the curve linearly in log saturation. Outside the
// covered range it returns the end sample (clamped) and ok = false.
func (c Curve) At(sat float64) (s Sample, ok bool) {
	n := len(c)
	if n == 0 {
		return Sample{}, false
	}
	if sat <= c[0].Saturation {
		s = c[0]
		return s, sat == c[0].Saturation
	}
	if sat >= c[n-1].Saturation {
		s = c[n-1]
		return s, sat == c[n-1].Saturation
	}
	j := sort.Search(n, func(i int) bool { return c[i].Saturation >= sat })
	a, b := c[j-1], c[j]
	t := math.Log(sat/a.Saturation) / math.Log(b.Saturation/a.Saturation)
	lerp := func(x, y float64) float64 { return x + t*(y-x) }
	return Sample{
		Saturation:  sat,
		Ml:          lerp(a.Ml, b.Ml),
		Qb:          lerp(a.Qb, b.Qb),
		PV:          lerp(a.PV, b.PV),
		RoverGOmega: lerp(a.RoverGOmega, b.RoverGOmega),
		Excess:      lerp(a.Excess, b.Excess),
	}, true
}

// Within returns the samples that decide the behaviour of the curve on
// [lo, hi]: the interpolated end points and every checkpoint between them.
// ok is false when the curve does not cover the whole range (the ends are
// then clamped to the nearest checkpoint).
func (c Curve) Within(lo, hi float64) (out []Sample, ok bool) {
	a, okA := c.At(lo)
	b, okB := c.At(hi)
	out = append(out, a)
	for _, s := range c {
		if s.Saturation > lo && s.Saturation < hi {
			out = append(out, s)
		}
	}
	if hi > lo {
		out = append(out, b)
	}
	return out, okA && okB
}

// Interval is a closed range of a real quantity.
type Interval struct{ Lo, Hi float64 }

// Empty reports whether the interval holds no value (Lo > Hi or NaN).
func (iv Interval) Empty() bool { return !(iv.Lo <= iv.Hi) }

// emptyInterval is the identity of extend.
func emptyInterval() Interval { return Interval{math.Inf(1), math.Inf(-1)} }

func (iv *Interval) extend(x float64) {
	if math.IsNaN(x) {
		return
	}
	iv.Lo = math.Min(iv.Lo, x)
	iv.Hi = math.Max(iv.Hi, x)
}

func (iv *Interval) union(o Interval) {
	if o.Empty() {
		return
	}
	iv.extend(o.Lo)
	iv.extend(o.Hi)
}

// reach returns the range of the projected polarization p, of R/(g Omega)
// and of the validity excess that a curve takes on the saturation range
// [lo, hi]. A piecewise-linear function takes its extremes at the nodes,
// so the nodes decide.
func (c Curve) reach(b Branch, lo, hi float64) (p, rg, pv, ex Interval, covered bool) {
	p, rg, pv, ex = emptyInterval(), emptyInterval(), emptyInterval(), emptyInterval()
	ss, ok := c.Within(lo, hi)
	for _, s := range ss {
		p.extend(s.Project(b))
		rg.extend(s.RoverGOmega)
		pv.extend(s.PV)
		ex.extend(s.Excess)
	}
	return p, rg, pv, ex, ok
}
