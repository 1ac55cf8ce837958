package interpret

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"maserpol/transfer"
)

// ValidLimit is the largest R/(g Omega) at which the populations-only model
// is taken as valid (physics.md section 4).
const ValidLimit = transfer.ValidLimit

// Mechanism is a way of producing linear polarization that Diagnose tests.
type Mechanism int

const (
	// FieldIsotropic: the magnetic field at angle theta, isotropic pumping,
	// unpolarized seed (Goldreich, Keeley & Kwan 1973).
	FieldIsotropic Mechanism = iota
	// AnisotropicPump: alignment-selective pumping about the field axis.
	AnisotropicPump
	// PolarizedSeed: a linearly polarized background amplified by the maser.
	PolarizedSeed
	// WeakField: a field so weak that R > g Omega (R/(g Omega) from 1 to
	// 1e3), isotropic pumping: the Zeeman coherences turn the molecules'
	// symmetry axis from the field towards the line of sight (density
	// matrix, physics.md section 8).
	WeakField
	numMechanisms
)

var mechanismNames = [...]string{
	FieldIsotropic:  "field, isotropic pumping",
	AnisotropicPump: "anisotropic pumping",
	PolarizedSeed:   "polarized seed",
	WeakField:       "weak field (R > g Omega)",
}

func (m Mechanism) String() string {
	if m < 0 || m >= numMechanisms {
		return "mechanism(" + strconv.Itoa(int(m)) + ")"
	}
	return mechanismNames[m]
}

// Measurement is what the observer measured, with 1-sigma errors.
type Measurement struct {
	Ml, MlErr float64 // fractional linear polarization at the line peak
	// PV and PVErr are the fractional circular polarization
	// (V_max - V_min)/I_peak and its error; used only when HasPV.
	PV, PVErr float64
	HasPV     bool
	Branch    Branch // from the EVPA relative to the projected field
	// SatLo..SatHi is the saturation R/Gamma range of the maser.
	SatLo, SatHi float64
	// NSigma is the number of errors within which a model counts as
	// consistent (default 2).
	NSigma float64
}

// Validate checks the measurement and fills defaults.
func (m *Measurement) Validate() error {
	if m.NSigma == 0 {
		m.NSigma = 2
	}
	switch {
	case !(m.Ml >= 0 && m.Ml <= 1):
		return fmt.Errorf("linear polarization fraction %v out of range (allowed: 0..1)", m.Ml)
	case !(m.MlErr > 0 && m.MlErr < 1):
		return fmt.Errorf("linear polarization error %v out of range (allowed: > 0 and < 1)", m.MlErr)
	case m.HasPV && !(m.PV >= 0 && m.PV <= 2):
		return fmt.Errorf("circular polarization P_V %v out of range (allowed: 0..2, (V_max-V_min)/I_peak)", m.PV)
	case m.HasPV && !(m.PVErr > 0):
		return fmt.Errorf("circular polarization error %v out of range (allowed: > 0)", m.PVErr)
	case !(m.SatLo > 0 && m.SatHi >= m.SatLo && !math.IsInf(m.SatHi, 0)):
		return fmt.Errorf("saturation range %v..%v invalid (allowed: 0 < low <= high, R/Gamma)", m.SatLo, m.SatHi)
	case !(m.NSigma > 0):
		return fmt.Errorf("n-sigma %v out of range (allowed: > 0)", m.NSigma)
	}
	return nil
}

// Grid lists the parameter values Diagnose runs. Angles in rad.
type Grid struct {
	Thetas        []float64 // field angles under isotropic pumping
	Alignments    []float64 // signed pump alignments (transfer.Pump.Alignment)
	AnisoThetas   []float64 // field angles for the anisotropic-pumping cases
	SeedFractions []float64 // seed linear polarization fractions
	SeedThetas    []float64 // field angles for the seed cases
	// WeakRoverGOmega sets the weak fields: R/(g Omega) at the lowest
	// measured saturation, one field per value (default 1, 10, 100, 1000).
	WeakRoverGOmega []float64
	WeakThetas      []float64 // field angles for the weak-field cases
}

func degs(xs ...float64) []float64 {
	out := make([]float64, len(xs))
	for i, x := range xs {
		out[i] = x * math.Pi / 180
	}
	return out
}

// DefaultGrid is the grid of the command without --quick: 19 field angles
// 0..90 deg in 5 deg steps, 8 alignments (+/-0.01 .. +/-0.3: amplification
// turns even a few per cent of pump anisotropy into strong polarization) at
// 3 angles, 4 seed fractions at 2 angles (55 deg, near the angle where the
// field alone gives none, and 90 deg), 4 weak fields (R/(g Omega) = 1 to
// 1e3 at the lowest measured saturation) at 3 angles: 63 models.
func DefaultGrid() Grid {
	var th []float64
	for i := 0; i <= 18; i++ {
		th = append(th, float64(i)*5*math.Pi/180)
	}
	return Grid{
		Thetas:          th,
		Alignments:      []float64{-0.3, -0.1, -0.03, -0.01, 0.01, 0.03, 0.1, 0.3},
		AnisoThetas:     degs(30, 60, 90),
		SeedFractions:   []float64{0.1, 0.3, 0.6, 0.9},
		SeedThetas:      degs(55, 90),
		WeakRoverGOmega: []float64{1, 10, 100, 1000},
		WeakThetas:      degs(30, 60, 90),
	}
}

// QuickGrid is a small grid for tests and previews: 15 models.
func QuickGrid() Grid {
	return Grid{
		Thetas:          degs(0, 30, 55, 70, 90),
		Alignments:      []float64{-0.03, 0.03},
		AnisoThetas:     degs(60, 90),
		SeedFractions:   []float64{0.3, 0.9},
		SeedThetas:      degs(90),
		WeakRoverGOmega: []float64{10},
		WeakThetas:      degs(60, 90),
	}
}

// Case is one model of a diagnosis.
type Case struct {
	Mechanism    Mechanism
	Theta        float64 // rad
	Alignment    float64
	SeedFraction float64
	RoverGOmega  float64 // weak-field cases: R/(g Omega) at the lowest measured saturation
	Params       transfer.Params
}

// Label describes the case's parameters with units.
func (c Case) Label() string {
	th := strconv.FormatFloat(c.Theta*180/math.Pi, 'g', 4, 64) + " deg"
	switch c.Mechanism {
	case AnisotropicPump:
		return "alignment " + strconv.FormatFloat(c.Alignment, 'g', 3, 64) + ", theta " + th
	case WeakField:
		return "R/gOmega " + strconv.FormatFloat(c.RoverGOmega, 'g', 3, 64) + ", theta " + th
	case PolarizedSeed:
		return "seed m_l " + strconv.FormatFloat(c.SeedFraction, 'g', 3, 64) + ", theta " + th
	}
	return "theta " + th
}

// Cases builds the models of a diagnosis from a template. base must carry
// the species, field (gauss, non-zero), line width and column settings;
// weakField is the field strength (gauss) at which R/(g Omega) = 1 at the
// lowest measured saturation; the WeakField cases use weakField/r for
// each r of Grid.WeakRoverGOmega. The seed
// polarization is put along the measured branch (across the projected
// field when the branch is unknown), since only that orientation can
// reproduce the measurement.
func Cases(base transfer.Params, g Grid, b Branch, weakField float64) []Case {
	var cs []Case
	var rg float64
	add := func(m Mechanism, theta, align, seed float64, field float64) {
		p := base
		p.Field = field
		p.Theta = theta
		if align != 0 {
			p.Pump = transfer.Pump{Kind: transfer.Anisotropic, Alignment: align, LowerPump: base.Pump.LowerPump}
		} else {
			p.Pump = transfer.Pump{Kind: transfer.Isotropic, LowerPump: base.Pump.LowerPump}
		}
		if m == PolarizedSeed {
			p.Seed.LinearFraction = seed
			p.Seed.Angle = base.Chi
			if b != Parallel {
				p.Seed.Angle = base.Chi + math.Pi/2
			}
		} else {
			p.Seed.LinearFraction = 0
			p.Seed.CircularFraction = 0
		}
		if m == WeakField {
			// R > g Omega needs the Zeeman coherences throughout.
			p.Population = transfer.Density
		}
		cs = append(cs, Case{Mechanism: m, Theta: theta, Alignment: align, SeedFraction: seed, RoverGOmega: rg, Params: p})
	}
	for _, th := range g.Thetas {
		add(FieldIsotropic, th, 0, 0, base.Field)
	}
	for _, th := range g.AnisoThetas {
		for _, a := range g.Alignments {
			add(AnisotropicPump, th, a, 0, base.Field)
		}
	}
	for _, th := range g.SeedThetas {
		for _, f := range g.SeedFractions {
			add(PolarizedSeed, th, 0, f, base.Field)
		}
	}
	for _, r := range g.WeakRoverGOmega {
		for _, th := range g.WeakThetas {
			rg = r
			add(WeakField, th, 0, 0, weakField/r)
		}
	}
	return cs
}

// Verdict is the answer for one mechanism.
type Verdict struct {
	Mechanism Mechanism
	Parameter string // what was varied, with units
	// Consistent describes the parameter values that reproduce the
	// measurement within NSigma errors ("none" if no grid point does).
	Consistent  string
	NConsistent int
	NModels     int
	// Reach is the range of the projected polarization p that the
	// mechanism's models take over the measured saturation range.
	Reach Interval
	// RGOmega is the range of R/(g Omega) over the measured saturation
	// range, for the consistent models (all models when none is).
	RGOmega Interval
	// Excess is the range of the validity measure over its limit (see
	// Sample.Excess) for the same models; Valid is Excess.Hi <= 1: every
	// checkpoint behind the verdict lies inside the validity of the
	// population model that gave it.
	Excess Interval
	Valid  bool
	// Orientation, for the weak-field mechanism: whether the EVPA of the
	// consistent models lies parallel or perpendicular to the projected
	// field ("parallel", "perpendicular", "both", or "" when none is).
	Orientation string
	// ValidUpTo is, when not Valid, the saturation R/Gamma up to which
	// every model behind RGOmega keeps R/(g Omega) <= ValidLimit (NaN when
	// none does in the measured range): the verdict is then partly
	// outside validity (RGOmega.Lo <= ValidLimit) or wholly.
	ValidUpTo  float64
	Reproduces bool
	Note       string
	// With a measured P_V (Measurement.HasPV): ConsistentMl and
	// NConsistentMl are Consistent and NConsistent from m_l alone, and
	// PVConstrained tells whether adding P_V changed the answer.
	ConsistentMl  string
	NConsistentMl int
	PVConstrained bool
}

// PartlyValid reports whether the verdict's R/(g Omega) range straddles
// ValidLimit: valid at the low-saturation end, outside it at the high one.
func (v Verdict) PartlyValid() bool {
	return !v.Valid && !v.Excess.Empty() && v.Excess.Lo <= 1
}

// CaseResult is the outcome of one case.
type CaseResult struct {
	Case       Case
	Curve      Curve
	Reach      Interval // projected polarization over the saturation range
	PV         Interval // P_V over the saturation range
	RGOmega    Interval
	Excess     Interval // validity measure over its limit (Sample.Excess)
	Covered    bool     // the checkpoints span the whole saturation range
	Consistent bool     // reproduces the measurement (m_l, and P_V when given)
	// ConsistentMl: reproduces m_l alone (equal to Consistent without P_V).
	ConsistentMl bool
	Err          error
}

// Envelope is the band of projected polarization one mechanism spans
// against saturation.
type Envelope struct {
	Mechanism  Mechanism
	Saturation []float64
	Lo, Hi     []float64 // NaN where no model of the mechanism covers the saturation
}

// Diagnosis is the full answer of Diagnose.
type Diagnosis struct {
	Measurement Measurement
	Field       float64 // gauss, of the field cases
	WeakField   float64 // gauss, of the weak-field cases
	Verdicts    []Verdict
	Cases       []CaseResult
	Envelopes   []Envelope
	// FieldMax is the largest projected polarization the field alone
	// (isotropic pumping, any grid angle) gives over the saturation range.
	FieldMax float64
	// ExceedsField is true when Ml - NSigma*MlErr > FieldMax.
	ExceedsField bool
	// Statements are plain-language conclusions; CannotRuleOut lists what
	// the model cannot exclude; Warnings flag validity and coverage.
	Statements    []string
	CannotRuleOut []string
	Warnings      []string
}

// RunFunc runs one model; Run in production.
type RunFunc func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error)

// RunCases runs every case on a pool of workers. Results are in case
// order whatever the number of workers. progress, if not nil, is called
// after each case from the collecting goroutine.
func RunCases(ctx context.Context, cases []Case, workers int, run RunFunc, progress func(done, total int)) []CaseResult {
	res := runTrajectories(ctx, cases, workers, run, progress)
	out := make([]CaseResult, len(cases))
	for i, r := range res {
		out[i] = CaseResult{Case: cases[i], Err: r.err}
		if r.err == nil {
			out[i].Curve = CurveOf(r.tr)
		}
	}
	return out
}

// ErrNoModels is returned by Evaluate when no case produced a trajectory.
var ErrNoModels = errors.New("interpret: no model of the diagnosis ran")

// Evaluate compares the measurement with the case results and writes the
// verdicts. results must come from Cases (their Curves filled in); field
// and weakField are recorded in the diagnosis.
func Evaluate(m Measurement, results []CaseResult, field, weakField float64) (*Diagnosis, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	d := &Diagnosis{Measurement: m, Field: field, WeakField: weakField, Cases: results, FieldMax: math.Inf(-1)}
	lo, hi := m.Ml-m.NSigma*m.MlErr, m.Ml+m.NSigma*m.MlErr
	ran := 0
	for i := range d.Cases {
		r := &d.Cases[i]
		if r.Err != nil || len(r.Curve) == 0 {
			if r.Err == nil {
				r.Err = errors.New("no checkpoints")
			}
			d.Warnings = append(d.Warnings, fmt.Sprintf("%s, %s: model failed: %v", r.Case.Mechanism, r.Case.Label(), r.Err))
			continue
		}
		ran++
		r.Reach, r.RGOmega, r.PV, r.Excess, r.Covered = r.Curve.reach(m.Branch, m.SatLo, m.SatHi)
		r.ConsistentMl = r.Reach.Lo <= hi && r.Reach.Hi >= lo
		r.Consistent = r.ConsistentMl
		if m.HasPV {
			r.Consistent = r.Curve.jointlyConsistent(m)
		}
		if !r.Covered {
			a, b := r.Curve.Span()
			d.Warnings = append(d.Warnings, fmt.Sprintf("%s, %s: checkpoints cover saturation %.3g..%.3g only, the measured range %.3g..%.3g is clamped", r.Case.Mechanism, r.Case.Label(), a, b, m.SatLo, m.SatHi))
		}
		if r.Case.Mechanism == FieldIsotropic {
			d.FieldMax = math.Max(d.FieldMax, r.Reach.Hi)
		}
	}
	if ran == 0 {
		return nil, ErrNoModels
	}
	for mech := Mechanism(0); mech < numMechanisms; mech++ {
		v := verdictOf(mech, d.Cases, m)
		if m.HasPV {
			ml := m
			ml.HasPV = false
			w := verdictOf(mech, d.Cases, ml)
			v.ConsistentMl, v.NConsistentMl = w.Consistent, w.NConsistent
			v.PVConstrained = w.Consistent != v.Consistent || w.NConsistent != v.NConsistent
		}
		d.Verdicts = append(d.Verdicts, v)
	}
	d.Envelopes = envelopes(d.Cases, m.Branch)
	d.conclude()
	return d, nil
}

// jointlyConsistent decides whether m_l and P_V are reproduced at the same
// saturation, sampling the range densely (64 log steps plus the nodes).
func (c Curve) jointlyConsistent(m Measurement) bool {
	ss, _ := c.Within(m.SatLo, m.SatHi)
	if m.SatHi > m.SatLo {
		const n = 64
		r := math.Log(m.SatHi / m.SatLo)
		for k := 1; k < n; k++ {
			s, _ := c.At(m.SatLo * math.Exp(r*float64(k)/n))
			ss = append(ss, s)
		}
	}
	for _, s := range ss {
		if math.Abs(s.Project(m.Branch)-m.Ml) <= m.NSigma*m.MlErr && math.Abs(s.PV-m.PV) <= m.NSigma*m.PVErr {
			return true
		}
	}
	return false
}

// verdictOf sums up one mechanism's cases; without m.HasPV it judges by
// m_l alone (CaseResult.ConsistentMl), so that the P_V-free answer can be
// told from the joint one.
func verdictOf(mech Mechanism, rs []CaseResult, m Measurement) Verdict {
	v := Verdict{Mechanism: mech, Reach: emptyInterval(), RGOmega: emptyInterval(), Excess: emptyInterval(), ValidUpTo: math.NaN()}
	switch mech {
	case FieldIsotropic:
		v.Parameter = "theta (deg)"
	case AnisotropicPump:
		v.Parameter = "alignment (dimensionless) at theta (deg)"
	case PolarizedSeed:
		v.Parameter = "seed m_l (dimensionless) at theta (deg)"
	case WeakField:
		v.Parameter = "R/(g Omega) at the lowest measured saturation (dimensionless) at theta (deg)"
	}
	all, allEx := emptyInterval(), emptyInterval()
	var par, perp bool
	allUpTo, consUpTo := math.Inf(1), math.Inf(1)
	byKey := map[float64][]float64{} // consistent thetas per alignment or seed fraction
	for _, r := range rs {
		if r.Case.Mechanism != mech || r.Err != nil {
			continue
		}
		v.NModels++
		v.Reach.union(r.Reach)
		all.union(r.RGOmega)
		allEx.union(r.Excess)
		upTo := r.Curve.validUpTo()
		allUpTo = math.Min(allUpTo, upTo)
		consistent := r.ConsistentMl
		if m.HasPV {
			consistent = r.Consistent
		}
		if !consistent {
			continue
		}
		v.NConsistent++
		v.RGOmega.union(r.RGOmega)
		v.Excess.union(r.Excess)
		if mech == WeakField {
			// The orientation over the measured range, from q_b.
			ss, _ := r.Curve.Within(m.SatLo, m.SatHi)
			for _, s := range ss {
				par = par || s.Qb > 0
				perp = perp || s.Qb < 0
			}
		}
		consUpTo = math.Min(consUpTo, upTo)
		th := r.Case.Theta * 180 / math.Pi
		switch mech {
		case AnisotropicPump:
			byKey[r.Case.Alignment] = append(byKey[r.Case.Alignment], th)
		case WeakField:
			byKey[r.Case.RoverGOmega] = append(byKey[r.Case.RoverGOmega], th)
		case PolarizedSeed:
			byKey[r.Case.SeedFraction] = append(byKey[r.Case.SeedFraction], th)
		}
	}
	if v.NConsistent == 0 {
		v.RGOmega, v.Excess = all, allEx
		consUpTo = allUpTo
	}
	switch {
	case par && perp:
		v.Orientation = "both"
	case par:
		v.Orientation = "parallel"
	case perp:
		v.Orientation = "perpendicular"
	}
	var thIv []Interval
	if mech == FieldIsotropic {
		thIv = thetaIntervals(rs, m)
	}
	v.Reproduces = v.NConsistent > 0 || len(thIv) > 0
	switch {
	case v.NModels == 0:
		v.Consistent = "not run"
	case mech == FieldIsotropic && len(thIv) > 0:
		v.Consistent = "theta " + formatIntervals(thIv) + " deg"
		if v.NConsistent == 0 {
			// Only angles between grid points reproduce it: validity from the
			// bracketing grid points.
			v.RGOmega, v.Excess = all, allEx
			consUpTo = allUpTo
		}
	case v.NConsistent == 0:
		v.Consistent = "none"
	default:
		keys := make([]float64, 0, len(byKey))
		for k := range byKey {
			keys = append(keys, k)
		}
		sort.Float64s(keys)
		grid := gridOf(rs, mech)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = strconv.FormatFloat(k, 'g', 3, 64) + " (theta " + ranges(byKey[k], grid) + " deg)"
		}
		v.Consistent = strings.Join(parts, "; ")
	}
	v.Valid = !v.Excess.Empty() && v.Excess.Hi <= 1
	if !v.Valid && consUpTo >= m.SatLo && !math.IsInf(consUpTo, 1) {
		v.ValidUpTo = math.Min(consUpTo, m.SatHi)
	}
	switch {
	case mech == WeakField && v.Reproduces && v.Valid:
		v.Note = fmt.Sprintf("density matrix (Zeeman coherences), R/(g Omega) %.3g..%.3g: the EVPA lies %s to the projected field there", v.RGOmega.Lo, v.RGOmega.Hi, orientationText(v.Orientation))
	case v.Reproduces && v.PartlyValid():
		v.Note = fmt.Sprintf("reproduces, but partly outside the validity of its model (%s), valid for R/Gamma <= %.3g only", excessText(v), v.ValidUpTo)
	case v.Reproduces && !v.Valid:
		v.Note = fmt.Sprintf("reproduces, but outside the validity of its model (%s)", excessText(v))
	case !v.Reproduces && !v.Reach.Empty() && v.Reach.Hi < m.Ml-m.NSigma*m.MlErr:
		v.Note = "cannot reach the measured polarization on the measured branch"
	case !v.Reproduces && !v.Reach.Empty() && v.Reach.Lo > m.Ml+m.NSigma*m.MlErr:
		v.Note = "always more polarized than measured"
	}
	return v
}

// thetaIntervals returns the field angles (deg) under isotropic pumping
// that reproduce the measurement, using that q_b (and P_V) are continuous
// in theta: between neighbouring grid angles both are interpolated
// linearly at each saturation of the measured range (the checkpoints and
// 64 log steps), and the angles where m_l (and, with HasPV, P_V at the
// same angle and saturation) lie within NSigma errors are collected and
// merged. Gaps narrower than a tenth of the grid spacing are closed: they
// come from sampling the saturation, and linear interpolation between grid
// angles does not resolve angles that finely.
func thetaIntervals(rs []CaseResult, m Measurement) []Interval {
	type node struct {
		th float64
		c  Curve
	}
	var ns []node
	for _, r := range rs {
		if r.Case.Mechanism == FieldIsotropic && r.Err == nil && len(r.Curve) > 0 {
			ns = append(ns, node{r.Case.Theta * 180 / math.Pi, r.Curve})
		}
	}
	sort.Slice(ns, func(i, j int) bool { return ns[i].th < ns[j].th })
	sats := []float64{m.SatLo, m.SatHi}
	for _, n := range ns {
		for _, s := range n.c {
			if s.Saturation > m.SatLo && s.Saturation < m.SatHi {
				sats = append(sats, s.Saturation)
			}
		}
	}
	if m.SatHi > m.SatLo {
		for k := 1; k < 64; k++ {
			sats = append(sats, m.SatLo*math.Pow(m.SatHi/m.SatLo, float64(k)/64))
		}
	}
	lo, hi := m.Ml-m.NSigma*m.MlErr, m.Ml+m.NSigma*m.MlErr
	pvLo, pvHi := m.PV-m.NSigma*m.PVErr, m.PV+m.NSigma*m.PVErr
	var ivs []Interval
	for _, sat := range sats {
		for i := range ns {
			a, _ := ns[i].c.At(sat)
			if i+1 == len(ns) {
				// The last node (or the only one) on its own.
				if within(a.Project(m.Branch), lo, hi) && (!m.HasPV || within(a.PV, pvLo, pvHi)) {
					ivs = append(ivs, Interval{ns[i].th, ns[i].th})
				}
				continue
			}
			b, _ := ns[i+1].c.At(sat)
			t1, t2 := linearWithin(a.Project(m.Branch), b.Project(m.Branch), lo, hi)
			if m.HasPV {
				u1, u2 := linearWithin(a.PV, b.PV, pvLo, pvHi)
				t1, t2 = math.Max(t1, u1), math.Min(t2, u2)
			}
			if t1 <= t2 {
				d := ns[i+1].th - ns[i].th
				ivs = append(ivs, Interval{ns[i].th + t1*d, ns[i].th + t2*d})
			}
		}
	}
	spacing := math.Inf(1)
	for i := 1; i < len(ns); i++ {
		if d := ns[i].th - ns[i-1].th; d > 0 {
			spacing = math.Min(spacing, d)
		}
	}
	gap := 0.1 // the printed precision, deg
	if !math.IsInf(spacing, 1) {
		gap = math.Max(gap, spacing/10)
	}
	return mergeIntervals(ivs, gap)
}

func within(x, lo, hi float64) bool { return x >= lo && x <= hi }

// linearWithin returns the range [t1, t2] of t in [0, 1] where
// a + t (b - a) lies in [lo, hi]; t1 > t2 when there is none.
func linearWithin(a, b, lo, hi float64) (t1, t2 float64) {
	if a == b {
		if within(a, lo, hi) {
			return 0, 1
		}
		return 1, 0
	}
	t1, t2 = (lo-a)/(b-a), (hi-a)/(b-a)
	if t1 > t2 {
		t1, t2 = t2, t1
	}
	return math.Max(t1, 0), math.Min(t2, 1)
}

// mergeIntervals sorts and joins intervals that overlap or lie within gap.
func mergeIntervals(ivs []Interval, gap float64) []Interval {
	sort.Slice(ivs, func(i, j int) bool { return ivs[i].Lo < ivs[j].Lo })
	var out []Interval
	for _, iv := range ivs {
		if n := len(out); n > 0 && iv.Lo <= out[n-1].Hi+gap {
			out[n-1].Hi = math.Max(out[n-1].Hi, iv.Hi)
			continue
		}
		out = append(out, iv)
	}
	return out
}

func formatIntervals(ivs []Interval) string {
	f := func(x float64) string { return strconv.FormatFloat(math.Round(x*10)/10, 'f', -1, 64) }
	parts := make([]string, len(ivs))
	for i, iv := range ivs {
		if iv.Hi-iv.Lo < 0.05 {
			parts[i] = f(iv.Lo)
		} else {
			parts[i] = f(iv.Lo) + "-" + f(iv.Hi)
		}
	}
	return strings.Join(parts, ", ")
}

// gridOf returns the sorted distinct field angles (deg) a mechanism ran.
func gridOf(rs []CaseResult, mech Mechanism) []float64 {
	seen := map[float64]bool{}
	var g []float64
	for _, r := range rs {
		if r.Case.Mechanism == mech && r.Err == nil {
			th := r.Case.Theta * 180 / math.Pi
			if !seen[th] {
				seen[th] = true
				g = append(g, th)
			}
		}
	}
	sort.Float64s(g)
	return g
}

// ranges writes values drawn from grid as runs of neighbouring grid points,
// e.g. "0-15, 75-90".
func ranges(vals, grid []float64) string {
	in := map[float64]bool{}
	for _, v := range vals {
		in[v] = true
	}
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 4, 64) }
	var parts []string
	for i := 0; i < len(grid); {
		if !in[grid[i]] {
			i++
			continue
		}
		j := i
		for j+1 < len(grid) && in[grid[j+1]] {
			j++
		}
		if j == i {
			parts = append(parts, f(grid[i]))
		} else {
			parts = append(parts, f(grid[i])+"-"+f(grid[j]))
		}
		i = j + 1
	}
	return strings.Join(parts, ", ")
}

// envelopes samples each mechanism's band on a common log-saturation grid
// spanning all curves.
func envelopes(rs []CaseResult, b Branch) []Envelope {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, r := range rs {
		if r.Err == nil && len(r.Curve) > 0 {
			a, z := r.Curve.Span()
			lo, hi = math.Min(lo, a), math.Max(hi, z)
		}
	}
	if !(lo < hi) {
		return nil
	}
	const n = 80
	sat := make([]float64, n)
	for k := range sat {
		sat[k] = lo * math.Pow(hi/lo, float64(k)/(n-1))
	}
	var out []Envelope
	for mech := Mechanism(0); mech < numMechanisms; mech++ {
		e := Envelope{Mechanism: mech, Saturation: sat, Lo: make([]float64, n), Hi: make([]float64, n)}
		any := false
		for k, s := range sat {
			// The band is drawn only where every model of the mechanism
			// reaches: at the ends of the grid, where some curves stop,
			// a min/max over fewer models would show false jumps.
			iv := emptyInterval()
			models, covered := 0, 0
			for _, r := range rs {
				if r.Case.Mechanism != mech || r.Err != nil || len(r.Curve) == 0 {
					continue
				}
				models++
				if x, ok := r.Curve.At(s); ok {
					covered++
					iv.extend(x.Project(b))
				}
			}
			if iv.Empty() || covered < models {
				e.Lo[k], e.Hi[k] = math.NaN(), math.NaN()
				continue
			}
			any = true
			e.Lo[k], e.Hi[k] = iv.Lo, iv.Hi
		}
		if any {
			out = append(out, e)
		}
	}
	return out
}

// conclude writes the plain-language statements.
func (d *Diagnosis) conclude() {
	m := d.Measurement
	pct := func(x float64) string { return strconv.FormatFloat(100*x, 'f', 1, 64) + " %" }
	satRange := fmt.Sprintf("R/Gamma %.3g..%.3g", m.SatLo, m.SatHi)
	branch := "on the " + m.Branch.String() + " branch"
	if m.Branch == AnyBranch {
		branch = "(orientation not tested: no EVPA relative to the field)"
	}
	var field, other *Verdict
	for i := range d.Verdicts {
		if d.Verdicts[i].Mechanism == FieldIsotropic {
			field = &d.Verdicts[i]
		}
	}
	if !math.IsInf(d.FieldMax, -1) {
		d.ExceedsField = m.Ml-m.NSigma*m.MlErr > d.FieldMax
		if d.ExceedsField {
			d.Statements = append(d.Statements, fmt.Sprintf(
				"m_l = %s +/- %s exceeds by more than %g sigma the largest polarization the field alone gives %s at %s under isotropic pumping, %s: a mechanism other than the field (or one this model lacks) is needed.",
				pct(m.Ml), pct(m.MlErr), m.NSigma, branch, satRange, pct(d.FieldMax)))
		} else if field != nil && field.Reproduces {
			d.Statements = append(d.Statements, fmt.Sprintf("The field alone under isotropic pumping reproduces m_l = %s +/- %s %s at %s for %s.", pct(m.Ml), pct(m.MlErr), branch, satRange, field.Consistent))
		} else {
			d.Statements = append(d.Statements, fmt.Sprintf("The field alone does not reproduce m_l = %s +/- %s %s at %s, although it can reach %s there.", pct(m.Ml), pct(m.MlErr), branch, satRange, pct(d.FieldMax)))
		}
	}
	if m.HasPV {
		d.Statements = append(d.Statements, pvStatement(m, d.Verdicts))
	}
	var names []string
	for i := range d.Verdicts {
		v := &d.Verdicts[i]
		if v.Mechanism != FieldIsotropic && v.Reproduces {
			names = append(names, v.Mechanism.String())
			if other == nil {
				other = v
			}
		}
	}
	if len(names) > 0 {
		d.Statements = append(d.Statements, "Mechanisms other than the field that reproduce it: "+strings.Join(names, ", ")+".")
	} else {
		d.Statements = append(d.Statements, "No non-field mechanism on the grid reproduces it.")
	}
	if d.ExceedsField && other == nil {
		d.Statements = append(d.Statements, "Nothing on the grid reproduces it: widen the grid, check the saturation estimate, or consider effects outside the model (below).")
	}
	if field != nil && !field.RGOmega.Empty() {
		switch {
		case field.PartlyValid():
			d.Warnings = append(d.Warnings, fmt.Sprintf("at B = %.4g G the model is partly outside its validity over %s (%s), valid for R/Gamma <= %.3g only", d.Field, satRange, excessText(*field), field.ValidUpTo))
		case !field.Valid:
			d.Warnings = append(d.Warnings, fmt.Sprintf("at B = %.4g G the model is OUTSIDE its validity over %s (%s)", d.Field, satRange, excessText(*field)))
		default:
			d.Statements = append(d.Statements, fmt.Sprintf("Validity: at B = %.4g G, R/(g Omega) = %.3g..%.3g over %s; every checkpoint lies within the validity of its population model (rate equations while R/(g Omega) <= %g, the density matrix with its Zeeman coherences beyond).", d.Field, field.RGOmega.Lo, field.RGOmega.Hi, satRange, ValidLimit))
		}
	}
	for i := range d.Verdicts {
		if v := &d.Verdicts[i]; v.Mechanism == WeakField && v.Reproduces && v.Orientation != "" {
			d.Statements = append(d.Statements, fmt.Sprintf("A weak field (R > g Omega, isotropic pumping) also reproduces it: the EVPA then lies %s to the projected field.", orientationText(v.Orientation)))
		}
	}
	d.CannotRuleOut = []string{
		"the dispersive (magneto-optical) terms of the maser line itself, which the density matrix neglects, and Stokes V where R >~ g Omega (a few per cent from the flat-spectrum rule of the coherence terms)",
		"combinations of mechanisms (each is tested alone) and parameter values between grid points",
		"Faraday rotation inside or in front of the maser, which changes the EVPA relative to the field and so the branch",
		"depolarization by a tangled field, several unresolved features or beam averaging: a measurement below a model does not exclude the field",
		"velocity gradients, 3-D geometry and beaming other than a single 1-D column; hyperfine-selective pumping",
		"saturation outside the stated range: the verdicts hold only for the given T_b dOmega or R/Gamma",
	}
	for _, v := range d.Verdicts {
		if v.NModels == 0 {
			d.CannotRuleOut = append(d.CannotRuleOut, fmt.Sprintf("the %s mechanism: none of its models was computed (see the warnings)", v.Mechanism))
		}
	}
}

// pvStatement says whether the measured P_V constrained the answer beyond
// m_l: for the field, by the angles; for the other mechanisms, by the
// number of consistent models.
func pvStatement(m Measurement, vs []Verdict) string {
	pct := func(x float64) string { return strconv.FormatFloat(100*x, 'f', 1, 64) + " %" }
	head := fmt.Sprintf("P_V = %s +/- %s", pct(m.PV), pct(m.PVErr))
	var parts []string
	removed, kept := 0, 0
	for _, v := range vs {
		if v.Mechanism == FieldIsotropic {
			switch {
			case !v.PVConstrained:
				parts = append(parts, fmt.Sprintf("it did not narrow the field angles (%s from m_l alone)", v.Consistent))
			case !v.Reproduces:
				parts = append(parts, fmt.Sprintf("it excludes every field angle that m_l alone allows (%s)", v.ConsistentMl))
			default:
				parts = append(parts, fmt.Sprintf("it narrowed the field angles from %s (m_l alone) to %s", v.ConsistentMl, v.Consistent))
			}
			continue
		}
		if v.Mechanism == WeakField {
			continue // P_V at a different (weak) field: not the measured one
		}
		removed += v.NConsistentMl - v.NConsistent
		kept += v.NConsistent
	}
	if removed > 0 {
		parts = append(parts, fmt.Sprintf("it rules out %d of the %d non-field models that m_l alone allows", removed, removed+kept))
	} else if kept > 0 {
		parts = append(parts, fmt.Sprintf("it rules out none of the %d non-field models that m_l alone allows", kept))
	}
	if len(parts) == 0 {
		return head + ": nothing reproduces m_l, so P_V did not constrain the answer."
	}
	return head + " (compared at B, the field of the field cases): " + strings.Join(parts, "; ") + "."
}

// validUpTo returns the saturation at which the curve first leaves the
// validity of its population model (Excess exceeds 1), interpolated in
// log-log between checkpoints; +Inf when it never does.
func (c Curve) validUpTo() float64 {
	for j, s := range c {
		if !(s.Excess > 1) {
			continue
		}
		if j == 0 || !(c[j-1].Excess > 0) {
			return s.Saturation / s.Excess
		}
		a := c[j-1]
		t := math.Log(1/a.Excess) / math.Log(s.Excess/a.Excess)
		return a.Saturation * math.Pow(s.Saturation/a.Saturation, t)
	}
	return math.Inf(1)
}

// orientationText phrases Verdict.Orientation.
func orientationText(o string) string {
	if o == "both" {
		return "parallel or perpendicular (depending on theta and saturation)"
	}
	return o
}

// excessText says how far a verdict's models lie from their validity.
func excessText(v Verdict) string {
	return fmt.Sprintf("R/(g Omega) %.3g..%.3g; validity measure up to %.3g times its limit", v.RGOmega.Lo, v.RGOmega.Hi, v.Excess.Hi)
}
