package transfer

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/unit/constant"

	"maserpol/levels"
)

// line is one allowed component with its coupling to the shared grid
// precomputed: velocity class j interacts with the channel at fractional
// position j + i0 + f through the 4-point cubic B-spline weights w[t+1] on
// channels j+i0+t, t = -1..2. The transfer uses the transpose of the same
// weights (the same kernel at the mirrored position), which is what makes
// the energy the beam gains equal the energy the molecules give.
//
// Why this kernel: its weights are positive (a physical Stokes vector stays
// physical, rates stay >= 0 even across the steep exponential wings of an
// amplified line), and its second moment is h^2/3 for every fraction f, so
// it acts as the same slight broadening (variance dv^2/3) of every line.
// Linear interpolation has an f-dependent error f(1-f) dv^2/2 phi” that
// differs between the sigma+ and sigma- lines of hyperfine components and
// shows as spurious V; Lagrange cubics ring negative in steep wings.
type line struct {
	up, lo int
	q      int     // m_u - m_l
	s      float64 // strength S_ab
	amp    float64 // signed dipole amplitude, amp^2 = s (levels.Line.Amplitude)
	offset float64 // Hz
	i0     int
	f      float64
	w      [4]float64
	ci     int // channel of the u = 0 class (line centre), with fraction cf
	cf     float64
}

// bspline4 returns the cubic B-spline weights B3(t - f) at fraction f of
// the nodes t = -1, 0, 1, 2 (sum 1, all positive, mean f, variance 1/3).
func bspline4(f float64) [4]float64 {
	g := 1 - f
	return [4]float64{
		g * g * g / 6,
		(4 - 6*f*f + 3*f*f*f) / 6,
		(4 - 6*g*g + 3*g*g*g) / 6,
		f * f * f / 6,
	}
}

// state is the radiation and the populations at one point of the column.
type state struct {
	st [4][]float64 // I, Q_f, U_f, V per channel, units of the saturation intensity
	// src holds what each velocity class deposits on the channels, slot
	// by slot and padded by Model.pad on each side: first the inversion
	// n_a - n_b of every line, then (density matrix only) the coherence
	// slots of coherent.slots.
	src            []float64
	coherent       bool      // src holds density-matrix values (coherence slots valid)
	eI, eQ, eU, eV []float64 // propagation per channel
	sat            float64   // max over lines of R/Gamma at line centre
	// cls holds the rate-equation inversions class by class (class j -
	// jlo, then line), the source of src's line slots; clsAll says that
	// every class of src came from it (no density matrix).
	cls    []float64
	clsAll bool
}

// Model is a saturating polarized maser column for one transition and one
// set of parameters. It owns all workspaces: Run may be called repeatedly
// and the integration itself does not allocate.
type Model struct {
	p  Params
	tr *levels.Transition

	n      int
	v      []float64 // channel and velocity-class grid, m/s
	dv     float64
	phi    []float64
	jlo    int // active velocity classes [jlo, jhi)
	jhi    int
	pad    int
	stride int // n + 2 pad

	lines []line
	w     [3][3]float64 // 3 x (w_I, w_Q, w_V) by q+1 (physics.md section 3)
	// etaW holds the (I, Q, U, V) propagation weights of one unit in each
	// accumulator: 0..2 the diagonal combinations q = -1, 0, +1, then the
	// real and imaginary parts of (-1,0), (-1,+1), (0,+1) (coherence.go).
	etaW [numAcc][4]float64
	// wc holds the Stokes weights of u1^T J conj(u2) for the cross
	// combinations (-1,0), (-1,+1), (0,+1) (density matrix only).
	wc [3][4]complex128

	// The population model: the rate equations, and the density matrix
	// where the run uses it (cs nil when it never does).
	rs       *rateSolver
	cs       *coherent
	csOn     bool // the density matrix is in use (Auto latches it on)
	csFrom   float64
	gamma    float64 // reference decay rate, s^-1
	kappa    float64 // gain normalization: unsaturated peak EtaI = 1
	rhoV     float64 // Faraday rotation per unit gain
	seed     [4]float64
	tsat     float64 // T_b dOmega (K sr) per unit intensity
	gOmega   float64 // s^-1
	warnings []string

	cur, mid, end *state
	mh            midHistory      // K at earlier step starts (extrapolated K_mid)
	dense         *state          // checkpoint inside a step (radiation and saturation only)
	y             [3][]float64    // 3 w.S per channel by q+1, padded
	yAll          []float64       // the three y, one after the other
	taps          []rateTap       // the rate interpolation of every line (allRates)
	rcls          []float64       // rates of every class (class j - jlo, then line)
	yc            [6][]float64    // Re, Im of u1^T J conj(u2) for (-1,0), (-1,+1), (0,+1), padded (density matrix only)
	r             []float64       // rates of one class
	dn            classInversions // rate-equation inversions of every class, stored once per populate
	acc           [numAcc][]float64
	steps, rej    int
	clamped       int // interpolated rates below zero (under-resolved spectrum)
	// unphysical is the last trial step whose density matrix came out
	// with negative populations: such a step is rejected and retried
	// shorter, and the run fails with this error only when the step size
	// collapses.
	unphysical error
}

// numAcc is the number of propagation accumulators (see Model.etaW).
const numAcc = 9

// AutoCoherenceFrom is the R/(g Omega) from which Auto uses the density
// matrix. q_b and P_V of the two models differ at second order in
// R/(g Omega), but u_b (the EVPA's turn from the projected field, zero in
// the rate equations) is first order, about 0.35 R/(g Omega) for J=1-0 at
// theta = 60 deg (the SciPy reference of testdata/coherence), and what the
// beam gathers before the switch stays in it: at 1e-3, u_b was 3.5e-4 off
// the density matrix at every later checkpoint; at 1e-4 it is within
// 3e-5, q_b within 1e-5 (TestAutoMatchesDensity), for about a tenth more
// class solves on water (project choice).
const AutoCoherenceFrom = 1e-4

// autoMaxDim and autoMaxStrong bound the class systems that Auto takes
// on: the real unknowns (the cost of the sparse products of the iterative
// class solve, classsolve.go) and the strong block at the target
// saturation (the populations and the pairs with |omega| < R, factored
// densely in every class at the peak). Above either, Auto keeps the rate
// equations with a warning; Density runs the system anyway. Measured
// (2 shared cores): h2o-22 at 0.3 G to R/Gamma = 1e3, 886 unknowns with
// a strong block of 152, about a minute per 256-channel model before the
// adiabatic sweep (classsolve.go), 8 s after it; at 10 mG to R/Gamma =
// 100 the strong block is 378 and a 5-angle zeeman-factor table took over
// ten minutes, which is why the strong limit is 200; h2o-22 at 0.9 G to
// R/Gamma = 1e4 (2610 unknowns, strong block 414) still takes 2 min per
// 512-channel model, and the synthetic J=6-5 line at 1 G to 1e3 (2650,
// 328) 40 s at 256 channels, 56 times its rate equations.
const (
	autoMaxDim    = 1500
	autoMaxStrong = 200
)

// strongAt returns the size of the strong block of the class system at a
// class rate r (units of Gamma).
func (cs *coherent) strongAt(r float64) int {
	return cs.nU + cs.nL + 2*searchBelow(cs.keptW, strongFactor*r)
}

// NewModel builds a Model for the already-solved transition tr. p.Species
// and p.Field may be left zero; they are taken from tr. Defaults are
// applied to a copy of p, then validated.
func NewModel(tr *levels.Transition, p Params) (*Model, error) {
	if tr == nil {
		return nil, errors.New("transfer: nil Transition")
	}
	if p.Species == nil {
		p.Species = tr.Species
	}
	if p.Field == 0 {
		p.Field = tr.Field
	} else if p.Field != tr.Field {
		return nil, fmt.Errorf("transfer: Params.Field = %g G differs from the transition's field %g G", p.Field, tr.Field)
	}
	if err := validateSpecies(p.Species); err != nil {
		return nil, err
	}
	p.Defaults()
	if err := p.Validate(); err != nil {
		return nil, err
	}
	if tr.Upper == nil || tr.Lower == nil || len(tr.Upper.States) == 0 || len(tr.Lower.States) == 0 {
		return nil, fmt.Errorf("transfer: species %q: transition has no level structure", p.Species.Name)
	}
	m := &Model{p: p, tr: tr, n: p.Channels}
	if err := m.setup(); err != nil {
		return nil, err
	}
	return m, nil
}

// Params returns the parameters of the model with defaults filled in.
func (m *Model) Params() Params { return m.p }

// Velocity returns the channel grid (m/s, radio convention); the model owns it.
func (m *Model) Velocity() []float64 { return m.v }

// GOmega returns the Zeeman splitting in rate units, s^-1 (see doc.go).
func (m *Model) GOmega() float64 { return m.gOmega }

// Coherent reports whether the density matrix is available to the run:
// always with Density, and with Auto when the species' class system lies
// within the automatic model's limits (Auto still runs the rate equations
// while R/(g Omega) < AutoCoherenceFrom). Callers that compare runs, such
// as a linearity test at two fields, use it to hold one model throughout.
func (m *Model) Coherent() bool { return m.cs != nil }

// DensitySize returns the density matrix's real unknowns per velocity
// class and the size of its strongly coupled block at the target
// saturation (zeros when the run has no density matrix), and whether both
// lie within the limits the automatic model takes on: above them a run
// with the density matrix can take hours (see autoMaxStrong).
func (m *Model) DensitySize() (unknowns, strong int, practical bool) {
	if m.cs == nil {
		return 0, 0, false
	}
	unknowns, strong = m.cs.dim, m.cs.strongAt(m.p.Saturation)
	return unknowns, strong, unknowns <= autoMaxDim && strong <= autoMaxStrong
}

func (m *Model) warnf(format string, args ...any) {
	m.warnings = append(m.warnings, fmt.Sprintf(format, args...))
}

// setup builds the model in four parts: the lines and the channel grid,
// the polarization weights, the population model, and the physical scales
// with the gain normalization.
func (m *Model) setup() error {
	if err := m.setupGrid(); err != nil {
		return err
	}
	m.setupWeights()
	if err := m.setupPopulations(); err != nil {
		return err
	}
	return m.setupScales()
}

// setupGrid selects the lines, lays out the channel grid and couples every
// line to it.
func (m *Model) setupGrid() error {
	p := &m.p
	sp := p.Species
	c := float64(constant.LightSpeedInVacuum)
	nu0 := sp.Frequency

	// Lines with non-negligible strength.
	maxS := 0.0
	for _, l := range m.tr.Lines {
		maxS = math.Max(maxS, l.Strength)
	}
	if !(maxS > 0) {
		return fmt.Errorf("transfer: species %q at %g G has no allowed transition", sp.Name, p.Field)
	}
	nU, nL := len(m.tr.Upper.States), len(m.tr.Lower.States)
	vmin, vmax := math.Inf(1), math.Inf(-1)
	for _, l := range m.tr.Lines {
		if !(l.Strength > 1e-12*maxS) {
			continue
		}
		if l.Q < -1 || l.Q > 1 || l.Upper < 0 || l.Upper >= nU || l.Lower < 0 || l.Lower >= nL {
			return fmt.Errorf("transfer: species %q: malformed line %+v", sp.Name, l)
		}
		if math.IsNaN(l.Offset) || math.IsInf(l.Offset, 0) || math.IsNaN(l.Strength) || math.IsNaN(l.Amplitude) {
			return fmt.Errorf("transfer: species %q: non-finite line %+v", sp.Name, l)
		}
		m.lines = append(m.lines, line{up: l.Upper, lo: l.Lower, q: l.Q, s: l.Strength, amp: l.Amplitude, offset: l.Offset})
		vl := -c * l.Offset / nu0 // radio convention: higher frequency, lower velocity
		vmin, vmax = math.Min(vmin, vl), math.Max(vmax, vl)
	}

	vd := p.Doppler
	var lo, hi float64
	if p.Span == 0 {
		lo, hi = vmin-spanDopplers*vd, vmax+spanDopplers*vd
	} else {
		mid := (vmin + vmax) / 2
		if sp.ReferenceShift != 0 {
			mid = 0 // velocities are measured from a chosen line: centre on it
		}
		lo, hi = mid-p.Span/2, mid+p.Span/2
		// A line the span cuts through would lose part of its emission:
		// widen the span to hold it whole. Lines wholly outside stay out
		// (no channel sees them; warned below).
		cut := 0
		for _, l := range m.lines {
			vl := -c * l.offset / nu0
			if vl+2*vd >= lo && vl-2*vd <= hi && (vl-2*vd < lo || vl+2*vd > hi) {
				cut++
				lo, hi = math.Min(lo, vl-spanDopplers*vd), math.Max(hi, vl+spanDopplers*vd)
			}
		}
		if cut > 0 {
			m.warnf("channel span %.4g km/s cut through %d line component(s): widened to %.4g km/s (%.4g to %.4g km/s) so that none is clipped",
				p.Span/1e3, cut, (hi-lo)/1e3, lo/1e3, hi/1e3)
		}
		// Lines outside the span that the kernel setup below keeps (those
		// farther away it drops and names itself).
		far, dv := 0, (hi-lo)/float64(m.n-1)
		for _, l := range m.lines {
			vl := -c * l.offset / nu0
			if (vl+2*vd < lo || vl-2*vd > hi) && math.Abs(vl)/dv <= float64(m.n+1) {
				far++
			}
		}
		if far > 0 {
			m.warnf("%d line component(s) lie outside the channel span (%.4g to %.4g km/s): no radiation reaches them, so they do not mase in this model; widen line.span to include them", far, lo/1e3, hi/1e3)
		}
	}
	m.dv = (hi - lo) / float64(m.n-1)
	m.v = make([]float64, m.n)
	m.phi = make([]float64, m.n)
	m.jlo, m.jhi = m.n, 0
	for k := range m.v {
		m.v[k] = lo + float64(k)*m.dv
		x := m.v[k] / vd
		m.phi[k] = math.Exp(-x * x)
		// Classes below 1e-14 of the peak contribute nothing measurable.
		if m.phi[k] > 1e-14 {
			m.jlo = min(m.jlo, k)
			m.jhi = max(m.jhi, k+1)
		}
	}
	if m.jhi <= m.jlo {
		return fmt.Errorf("transfer: channel grid %.4g to %.4g km/s does not contain the Doppler profile (v_D = %.4g km/s)", lo/1e3, hi/1e3, vd/1e3)
	}

	// Line couplings on the grid; drop lines that never meet the grid.
	jc := -lo / m.dv
	maxI0 := 0
	kept := m.lines[:0]
	dropped := 0
	for _, l := range m.lines {
		l.i0, l.f, l.w = m.placeAt(l.offset)
		if l.i0 > m.n+1 || l.i0 < -m.n-1 {
			dropped++
			continue
		}
		xc := jc - c*l.offset/(nu0*m.dv)
		l.ci = int(math.Floor(xc))
		l.cf = xc - float64(l.ci)
		maxI0 = max(maxI0, abs(l.i0))
		kept = append(kept, l)
	}
	m.lines = kept
	if dropped > 0 {
		m.warnf("%d line components lie outside the channel grid and are ignored", dropped)
	}
	if len(m.lines) == 0 {
		return fmt.Errorf("transfer: species %q: no allowed transition falls on the channel grid", sp.Name)
	}
	m.pad = maxI0 + 3
	m.stride = m.n + 2*m.pad
	return nil
}

// placeAt returns the coupling of a resonance at frequency offset (Hz) to
// the grid: class j meets it at channel position j + i0 + f, read with the
// cubic B-spline weights w (see line).
func (m *Model) placeAt(offset float64) (i0 int, f float64, w [4]float64) {
	sigma := float64(constant.LightSpeedInVacuum) * offset / (m.p.Species.Frequency * m.dv)
	i0 = int(math.Floor(-sigma))
	f = -sigma - float64(i0)
	return i0, f, bspline4(f)
}

// setupWeights sets the polarization weights of physics.md section 3,
// times 3 so that the direction-averaged unpolarized rate of an upper
// state is the scalar one (<w_I> = 1/3 for every q), and the propagation
// weights of every accumulator.
func (m *Model) setupWeights() {
	st, ct := math.Sin(m.p.Theta), math.Cos(m.p.Theta)
	s2, c2 := st*st, ct*ct
	m.w[1] = [3]float64{3 * s2 / 2, 3 * s2 / 2, 0}
	m.w[2] = [3]float64{3 * (1 + c2) / 4, -3 * s2 / 4, 3 * ct / 2}
	m.w[0] = [3]float64{3 * (1 + c2) / 4, -3 * s2 / 4, -3 * ct / 2}
	for q := 0; q < 3; q++ {
		m.etaW[q] = etaWeights(q, false, m.p.Theta)
	}
	for c := 3; c < 6; c++ {
		m.etaW[3+2*(c-3)] = etaWeights(c, false, m.p.Theta)
		m.etaW[4+2*(c-3)] = etaWeights(c, true, m.p.Theta)
		m.wc[c-3] = stokesWeights(uq(comboQ[c][0], m.p.Theta), uq(comboQ[c][1], m.p.Theta))
	}
}

// setupPopulations builds the pump and the population model(s) of the run.
func (m *Model) setupPopulations() error {
	p := &m.p
	// Rates in units of the reference Gamma: the harmonic mean, so that a
	// two-level line saturates as 1/(1 + 2R/Gamma) for any Gamma_u, Gamma_l.
	m.gamma = 2 * p.GammaUpper * p.GammaLower / (p.GammaUpper + p.GammaLower)
	gU, gL := p.GammaUpper/m.gamma, p.GammaLower/m.gamma
	wU, err := levelPumpWeights(p.Pump, m.tr.Upper, true)
	if err != nil {
		return err
	}
	wL, err := levelPumpWeights(p.Pump, m.tr.Lower, false)
	if err != nil {
		return err
	}
	for i := range wU {
		wU[i] *= gU
	}
	for i := range wL {
		wL[i] *= p.Pump.LowerPump * gU
	}
	nU, nL := len(m.tr.Upper.States), len(m.tr.Lower.States)
	m.rs = newRateSolver(nU, nL, m.lines, gU, gL, wU, wL)
	m.gOmega = m.zeemanRate()
	if p.Population == Rates {
		return nil
	}
	cs, err := newCoherent(m, gU, gL, wU, wL, p.Saturation)
	switch {
	case err != nil && p.Population == Density:
		return err
	case err != nil:
		m.warnf("the density matrix is not available (%v): the populations-only model is used throughout", err)
	case p.Population == Auto && (cs.dim > autoMaxDim || cs.strongAt(p.Saturation) > autoMaxStrong):
		m.warnf("the density matrix of %s has %d real unknowns per velocity class, %d of them strongly coupled at R/Gamma = %.3g (automatic model limits %d and %d): the populations-only model is used throughout; set the population model to \"density\" to run it anyway",
			p.Species.Name, cs.dim, cs.strongAt(p.Saturation), p.Saturation, autoMaxDim, autoMaxStrong)
	default:
		if ns := cs.strongAt(p.Saturation); ns > autoMaxStrong {
			m.warnf("the density matrix of %s couples %d of its %d real unknowns per velocity class strongly at R/Gamma = %.3g: each such class solve factors a dense block of that size, so the run may take hours",
				p.Species.Name, ns, cs.dim, p.Saturation)
		}
		m.cs = cs
	}
	return nil
}

// setupScales sets the physical scales, the seed, the workspaces and the
// gain normalization from the unsaturated populations.
func (m *Model) setupScales() error {
	p := &m.p
	sp := p.Species
	c := float64(constant.LightSpeedInVacuum)
	nu0 := sp.Frequency
	m.tsat = SaturationTbdOmega(nu0, sp.EinsteinA, m.gamma)
	sj := p.Seed.Tb * p.BeamSolid / m.tsat
	psi := p.Seed.Angle - p.Chi // seed angle in the field frame
	m.seed = [4]float64{sj, sj * p.Seed.LinearFraction * math.Cos(2*psi), sj * p.Seed.LinearFraction * math.Sin(2*psi), sj * p.Seed.CircularFraction}
	if p.ElectronDensity > 0 {
		lambda := c / nu0
		bpar := p.Field * 1e-4 * math.Cos(p.Theta) // tesla along +k
		m.rhoV = 2 * FaradayCoefficient * p.ElectronDensity * 1e6 * bpar * lambda * lambda * p.GainLength
	}
	m.checkChannels(*p, sj, m.v[m.n-1]-m.v[0])
	if w := sp.UnverifiedWarning(); w != "" {
		m.warnf("%s", w)
	}

	m.cur, m.mid, m.end = m.newState(), m.newState(), m.newState()
	m.mh = newMidHistory(m.n)
	m.dense = &state{}
	for i := range m.dense.st {
		m.dense.st[i] = make([]float64, m.n)
	}
	m.yAll = make([]float64, len(m.y)*m.stride)
	for q := range m.y {
		m.y[q] = m.yAll[q*m.stride : (q+1)*m.stride]
	}
	m.taps = rateTaps(m.lines, m.stride, m.pad)
	m.rcls = make([]float64, (m.jhi-m.jlo)*len(m.lines))
	if m.cs != nil {
		for i := range m.yc {
			m.yc[i] = make([]float64, m.stride)
		}
	}
	for i := range m.acc {
		m.acc[i] = make([]float64, m.n)
	}
	m.r = make([]float64, len(m.lines))
	m.dn = classInversions{nl: len(m.lines), jlo: m.jlo, done: make([]bool, m.jhi-m.jlo)}

	// Gain normalization from the unsaturated populations (no radiation:
	// both population models give the same, coherence-free state).
	m.kappa = 1
	m.csOn = false
	if err := m.populate(m.cur, 0); err != nil {
		return err
	}
	peak := 0.0
	for _, e := range m.cur.eI {
		peak = math.Max(peak, e)
	}
	if !(peak > 0) {
		return fmt.Errorf("transfer: species %q: the pump gives no inversion (peak unsaturated gain %g)", sp.Name, peak)
	}
	m.kappa = 1 / peak
	m.buildK(m.cur)
	return nil
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

func (m *Model) newState() *state {
	slots := len(m.lines)
	if m.cs != nil {
		slots += len(m.cs.slots)
	}
	s := &state{src: make([]float64, slots*m.stride), cls: make([]float64, (m.jhi-m.jlo)*len(m.lines))}
	for i := range s.st {
		s.st[i] = make([]float64, m.n)
	}
	s.eI, s.eQ, s.eU, s.eV = make([]float64, m.n), make([]float64, m.n), make([]float64, m.n), make([]float64, m.n)
	return s
}

// zeemanRate returns g Omega (s^-1): 2 pi times the smallest energy
// separation (Hz) between two sublevels of the same rotational level that
// are radiatively coupled to a common sublevel of the other level (lines
// above 1e-3 of the strongest). Coherence between such a pair is what the
// populations-only rate equations neglect; for J=1-0 this is the splitting
// between the pi and sigma components.
func (m *Model) zeemanRate() float64 {
	maxS := 0.0
	for _, l := range m.lines {
		maxS = math.Max(maxS, l.s)
	}
	up, lo := m.tr.Upper.States, m.tr.Lower.States
	minSep := math.Inf(1)
	byLo := make(map[int][]int)
	byUp := make(map[int][]int)
	for _, l := range m.lines {
		if l.s < 1e-3*maxS {
			continue
		}
		byLo[l.lo] = append(byLo[l.lo], l.up)
		byUp[l.up] = append(byUp[l.up], l.lo)
	}
	scan := func(groups map[int][]int, states []levels.State) {
		for _, g := range groups {
			for i := range g {
				for j := i + 1; j < len(g); j++ {
					minSep = math.Min(minSep, math.Abs(states[g[i]].Energy-states[g[j]].Energy))
				}
			}
		}
	}
	scan(byLo, up)
	scan(byUp, lo)
	if math.IsInf(minSep, 1) {
		// No pair of coupled sublevels (e.g. J=1/2-1/2 without spins): no
		// coherence to neglect.
		return math.Inf(1)
	}
	return 2 * math.Pi * minSep
}

// useCoherent reports whether the density matrix solves the classes for a
// radiation of saturation sat, latching Auto on once R/(g Omega) passes
// AutoCoherenceFrom.
func (m *Model) useCoherent(sat float64) bool {
	if m.cs == nil {
		return false
	}
	if m.csOn {
		return true
	}
	if m.p.Population == Density || sat*m.gamma >= AutoCoherenceFrom*m.gOmega {
		m.csOn = true
		m.csFrom = sat
	}
	return m.csOn
}

// classCoherentFrom is the R/(g Omega) of a class below which the density
// matrix, once in use, leaves the class to the rate equations: the
// automatic model's threshold for Auto, and 1e-5 for Density, where the
// neglected coherences (~1e-5 of the populations, in far-wing classes
// that feed channels well below the peak) change nothing reported
// (project choices; physics.md section 8; the SciPy comparison runs with
// it).
func (m *Model) classCoherentFrom() float64 {
	if m.p.Population == Density {
		return 1e-5
	}
	return AutoCoherenceFrom
}

// populate solves every velocity class for the radiation st.st with the
// population model in use, then builds the propagation matrix of every
// channel and the saturation measure. pos is the position along the
// column, for errors.
func (m *Model) populate(st *state, pos float64) error {
	n, pad := m.n, m.pad
	// Weighted Stokes per q: y_q = 3 (w_I I + w_Q Q_f + w_V V). Beyond the
	// grid the radiation is the seed (the grid extends past the last line
	// by spanDopplers Doppler widths): a smooth continuation, so the cubic
	// interpolation does not ring at the edges.
	for q := 0; q < 3; q++ {
		w := m.w[q]
		y := m.y[q][pad : pad+n]
		I, Q, V := st.st[0][:n], st.st[1][:n], st.st[3][:n]
		for k := range y {
			y[k] = w[0]*I[k] + w[1]*Q[k] + w[2]*V[k]
		}
		ys := w[0]*m.seed[0] + w[1]*m.seed[1] + w[2]*m.seed[3]
		for k := 0; k < pad; k++ {
			m.y[q][k] = ys
			m.y[q][pad+n+k] = ys
		}
	}
	// Saturation at line centre.
	st.sat = 0
	for _, l := range m.lines {
		st.sat = math.Max(st.sat, l.s*m.interpY(l.q+1, l.ci, l.cf))
	}
	coh := m.useCoherent(st.sat)
	if coh {
		m.weightCross(st)
	}
	// Populations, class by class. With the density matrix in use, a class
	// whose largest rate is below classCoherentFrom x g Omega (a far wing
	// of a narrowed line) is solved by the rate equations, which agree with
	// it to second order in that ratio; its coherence slots are zero.
	r := m.r
	nl := len(m.lines)
	rFloor := m.classCoherentFrom() * m.gOmega / m.gamma
	m.allRates()
	for j := m.jlo; j < m.jhi; j++ {
		rmax := m.classRates(j, r)
		if coh && rmax >= rFloor {
			if err := m.cs.solve(m, st, j, rmax); err != nil {
				return m.classError(pos, j, st.sat, err)
			}
			continue
		}
		if err := m.rs.solve(r, m.phi[j], m.dn.class(st.cls, j)); err != nil {
			return m.classError(pos, j, st.sat, err)
		}
		if coh {
			for s := range m.cs.slots {
				st.src[(nl+s)*m.stride+pad+j] = 0
			}
		}
	}
	m.dn.store(st.cls, st.src, m.stride, pad)
	st.coherent, st.clsAll = coh, !coh
	m.buildK(st)
	return nil
}

// classError reports a failed class solve with its position, class and
// saturation.
func (m *Model) classError(pos float64, j int, sat float64, err error) error {
	m.dn.clear() // the populate is abandoned: no class of it is to be stored
	model := "rate equations"
	if m.csOn {
		model = "density matrix"
	}
	msg := fmt.Sprintf("%s of velocity class %d (u = %.4g km/s) at saturation R/Gamma = %.3g: %v", model, j, m.v[j]/1e3, sat, err)
	if errors.Is(err, errNotPhysical) {
		msg += " (the mean-resonance rule of the coherence terms is outside its validity here: Zeeman shifts too large against the Doppler width at this saturation; see physics.md section 8)"
	}
	return &StepError{Position: pos, Channel: j, Velocity: m.v[j], Msg: msg, cause: err}
}

// weightCross fills m.yc with u1^T J conj(u2) per channel for the three
// cross combinations (-1,0), (-1,+1), (0,+1), continued by the seed.
func (m *Model) weightCross(st *state) {
	n, pad := m.n, m.pad
	for c := 3; c < 6; c++ {
		wc := &m.wc[c-3]
		yr, yi := m.yc[2*(c-3)], m.yc[2*(c-3)+1]
		at := func(x [4]float64) (float64, float64) {
			var re, im float64
			for s := 0; s < 4; s++ {
				re += real(wc[s]) * x[s]
				im += imag(wc[s]) * x[s]
			}
			return re, im
		}
		for k := 0; k < n; k++ {
			yr[pad+k], yi[pad+k] = at([4]float64{st.st[0][k], st.st[1][k], st.st[2][k], st.st[3][k]})
		}
		sr, si := at(m.seed)
		for k := 0; k < pad; k++ {
			yr[k], yi[k] = sr, si
			yr[pad+n+k], yi[pad+n+k] = sr, si
		}
	}
}

// interpY interpolates the weighted Stokes y_q linearly at channel
// position k + f (the seed beyond the grid).
func (m *Model) interpY(q, k int, f float64) float64 {
	get := func(k int) float64 {
		k = max(-m.pad, min(k, m.n+m.pad-1))
		return m.y[q][k+m.pad]
	}
	return (1-f)*get(k) + f*get(k+1)
}

// buildK deposits what every class gives onto the channels it amplifies
// (the transpose of the rate interpolation) and forms EtaI, EtaQ, EtaU,
// EtaV from the accumulators.
func (m *Model) buildK(st *state) {
	n, pad := m.n, m.pad
	nAcc := 3
	if st.coherent {
		nAcc = numAcc
	}
	for a := 0; a < nAcc; a++ {
		d := m.acc[a]
		for k := range d {
			d[k] = 0
		}
	}
	deposit := func(slot, i0 int, w [4]float64, coef float64, d []float64) {
		// Channel k takes class k - i0 - t with weight w[t+1]; only the
		// channels that meet an active class [jlo, jhi) are touched (src
		// is zero elsewhere).
		base := slot*m.stride + pad - i0
		src := st.src[base-2 : base+n+1]
		w0, w1, w2, w3 := coef*w[0], coef*w[1], coef*w[2], coef*w[3]
		klo, khi := max(0, m.jlo+i0-1), min(n, m.jhi+i0+2)
		for k := klo; k < khi; k++ {
			// src[k+2] is class k - i0; src[k+3] is t = -1, src[k] is t = 2.
			d[k] += w0*src[k+3] + w1*src[k+2] + w2*src[k+1] + w3*src[k]
		}
	}
	for i := range m.lines {
		l := &m.lines[i]
		deposit(i, l.i0, l.w, l.s, m.acc[l.q+1])
	}
	if st.coherent {
		nl := len(m.lines)
		for s := range m.cs.slots {
			sl := &m.cs.slots[s]
			pr := &m.cs.pairs[sl.pair]
			deposit(nl+s, pr.i0, pr.w, sl.coef, m.acc[sl.acc])
		}
	}
	kap := m.kappa
	for k := 0; k < n; k++ {
		var e [4]float64
		for a := 0; a < nAcc; a++ {
			v := m.acc[a][k]
			w := &m.etaW[a]
			e[0] += w[0] * v
			e[1] += w[1] * v
			e[2] += w[2] * v
			e[3] += w[3] * v
		}
		st.eI[k], st.eQ[k], st.eU[k], st.eV[k] = kap*e[0], kap*e[1], kap*e[2], kap*e[3]
	}
}

// StepError reports a failure of the integration: where along the column
// (in units of unsaturated line-centre gain) and in which channel.
type StepError struct {
	Position float64 // unsaturated line-centre gain reached
	Channel  int
	Velocity float64 // m/s
	Msg      string
	cause    error
}

// Unwrap returns the class solver's error behind e, if any.
func (e *StepError) Unwrap() error { return e.cause }

func (e *StepError) Error() string {
	return fmt.Sprintf("transfer: at gain %.6g along the column, channel %d (v = %.4g km/s): %s",
		e.Position, e.Channel, e.Velocity/1e3, e.Msg)
}

// MinChannelsPerWidth is the fewest channels per gain-narrowed line width
// v_D/sqrt(G) that keep P_V within 0.5 % of its value at twice the
// channels. An amplified line narrows to about v_D/sqrt(G) by the gain G
// at which it saturates (unsaturated gain narrowing of a Gaussian
// profile, exp(-G x^2) for G >> 1: standard, e.g. Elitzur 1992,
// Astronomical Masers, ch. 4; from memory), with G about ln(1/I_seed) in
// saturation units. The value 6 comes from doubling the channels of the
// SiO, HCN-like and H2O presets (TestDefaultChannelsConverged): below 5.5
// channels P_V moved by 0.5-0.8 %, from 6 on by less than 0.45 %.
const MinChannelsPerWidth = 6

// checkChannels warns when the channels resolve the gain-narrowed line
// too coarsely for P_V (see MinChannelsPerWidth); seed is the seed
// intensity in saturation units and span the grid's width, m/s.
func (m *Model) checkChannels(p Params, seed, span float64) {
	g := 1.0
	if seed > 0 && seed < 1 {
		g = math.Max(1, math.Log(1/seed))
	}
	if p.Gain > 0 { // an unsaturated column stops at its own gain
		g = math.Max(1, math.Min(g, p.Gain))
	}
	width := p.Doppler / math.Sqrt(g)
	if per := width / m.dv; per < MinChannelsPerWidth {
		need := 64 * int(math.Ceil((span*MinChannelsPerWidth/width+1)/64)) // a round count
		m.warnf("only %.2g channels per line width after gain narrowing (v_D/sqrt(G) = %.3g km/s at gain G = %.0f); P_V may be off by more than 0.5 %%: use at least %d channels (line.channels)",
			per, width/1e3, g, need)
	}
}
