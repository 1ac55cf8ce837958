package transfer

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/unit/constant"
)

// Step-control constants (common practice for embedded-pair control,
// except where a measurement is named).
const (
	maxDLnI = 2.0 // largest change of ln I in any channel per step
	maxDPop = 0.2 // largest change of an inversion per step, units of the unsaturated central inversion
	// errFloor is the fraction of the peak intensity below which a
	// channel's error counts in proportion to its intensity: the reported
	// quantities (q_b, m_l at the peak, P_V = (V_max - V_min)/I_peak) are
	// insensitive to relative errors in channels far below the peak.
	// Measured on J=1-0 at tolerance 1e-4: a floor of 0 (the plain
	// relative norm), 1e-3, 1e-2 and 1e-1 took 352, 328, 275 and 217 steps
	// with the same q_b and P_V errors against a 1e-6 run (3.6e-5,
	// 0.022 %); 1e-2 keeps the tabulated wing spectra accurate down to a
	// hundredth of the peak.
	errFloor     = 1e-2
	checkpointEp = 1e-6 // relative precision of the interpolated checkpoint saturation
	ctxEvery     = 8    // steps between context checks
	maxSteps     = 1 << 20
)

// advance sets dst = exp(K h) src channel by channel with K from
// (eI, eQ, eV) and the Faraday term.
func (m *Model) advance(dst, src *[4][]float64, eI, eQ, eU, eV []float64, h float64) {
	rv := m.rhoV
	for k := 0; k < m.n; k++ {
		x := [4]float64{src[0][k], src[1][k], src[2][k], src[3][k]}
		var y [4]float64
		if rv == 0 {
			y = applyNoRho(eI[k], eQ[k], eU[k], eV[k], h, x)
		} else {
			y = applyGeneral(Propagation{EtaI: eI[k], EtaQ: eQ[k], EtaU: eU[k], EtaV: eV[k], RhoV: rv}, h, x)
		}
		dst[0][k], dst[1][k], dst[2][k], dst[3][k] = y[0], y[1], y[2], y[3]
	}
}

// step advances m.cur by h into m.end with the exponential midpoint rule:
// predictor exp(K0 h/2) S0, populations there, then S1 = exp(K_mid h) S0 and
// the populations at S1 (the next step's K0). The error estimate compares
// S1 with the trapezoidal exponential exp((K0+K1)/2 h) S0, both second
// order, and adds the step limits on ln I and on the populations. It
// returns the error in units of the allowed one and the worst channel.
func (m *Model) step(pos, h float64) (float64, int, error) {
	c, md, e := m.cur, m.mid, m.end
	// With two earlier step starts at hand, K_mid is extrapolated
	// instead of solved (see midHistory).
	extrap := m.mh.n == len(m.mh.h)
	var wb, w0, w1 float64 // interpolation of K_mid from K_a, K_b (history), K0, K1
	if extrap {
		ha, hb := &m.mh.h[0], &m.mh.h[1]
		xa, xb, x0 := lagrange3(ha.s, hb.s, pos, pos+h/2)
		for k := 0; k < m.n; k++ {
			md.eI[k] = xa*ha.e[0][k] + xb*hb.e[0][k] + x0*c.eI[k]
			md.eQ[k] = xa*ha.e[1][k] + xb*hb.e[1][k] + x0*c.eQ[k]
			md.eU[k] = xa*ha.e[2][k] + xb*hb.e[2][k] + x0*c.eU[k]
			md.eV[k] = xa*ha.e[3][k] + xb*hb.e[3][k] + x0*c.eV[k]
		}
		wb, w0, w1 = lagrange3(hb.s, pos, pos+h, pos+h/2)
	} else {
		m.advance(&md.st, &c.st, c.eI, c.eQ, c.eU, c.eV, h/2)
		if err := m.populate(md, pos+h/2); err != nil {
			return m.trialFailed(err)
		}
	}
	m.advance(&e.st, &c.st, md.eI, md.eQ, md.eU, md.eV, h)
	if err := m.populate(e, pos+h); err != nil {
		return m.trialFailed(err)
	}
	hb := &m.mh.h[1]
	tol := m.p.Tolerance
	worst, wk := 0.0, 0
	rv := m.rhoV
	floor := 0.0
	for _, v := range e.st[0][:m.n] {
		if v > floor {
			floor = v
		}
	}
	floor *= errFloor
	// The ln I limit needs only the extreme ratios (log is monotonic).
	rmax, rmin, kmax, kmin := 1.0, 1.0, 0, 0
	for k := 0; k < m.n; k++ {
		x := [4]float64{c.st[0][k], c.st[1][k], c.st[2][k], c.st[3][k]}
		kt := Propagation{EtaI: (c.eI[k] + e.eI[k]) / 2, EtaQ: (c.eQ[k] + e.eQ[k]) / 2, EtaU: (c.eU[k] + e.eU[k]) / 2, EtaV: (c.eV[k] + e.eV[k]) / 2, RhoV: rv}
		var t [4]float64
		if rv == 0 {
			t = applyNoRho(kt.EtaI, kt.EtaQ, kt.EtaU, kt.EtaV, h, x)
		} else {
			t = applyGeneral(kt, h, x)
		}
		i1 := e.st[0][k]
		if !(i1 > 0) || !(t[0] > 0) || math.IsInf(i1, 0) {
			return math.Inf(1), k, nil
		}
		// |ln r| = |r - 1| to 0.5 % for |r - 1| < 1e-2.
		err := i1/t[0] - 1
		if err < 0 {
			err = -err
		}
		if err > 1e-2 {
			err = math.Abs(math.Log(i1 / t[0]))
		}
		inv1, inv0 := 1/i1, 1/t[0]
		for s := 1; s < 4; s++ {
			d := e.st[s][k]*inv1 - t[s]*inv0
			if d < 0 {
				d = -d
			}
			if d > err {
				err = d
			}
		}
		// For commuting K the midpoint error is a third of its difference
		// from the trapezoidal result (-h^3/24 against +h^3/12 K'').
		err /= 3
		if extrap {
			// An extrapolated K_mid adds E_x = h (K_mid - K(mid)) S0 to
			// S1 and also to the difference D above, so the error is
			// D/3 + 2/3 E_x. K(mid) is interpolated through K_b, K0 and
			// K1; |q|, |u|, |v| <= 1 bound the Stokes terms.
			dI := md.eI[k] - (wb*hb.e[0][k] + w0*c.eI[k] + w1*e.eI[k])
			dQ := md.eQ[k] - (wb*hb.e[1][k] + w0*c.eQ[k] + w1*e.eQ[k])
			dU := md.eU[k] - (wb*hb.e[2][k] + w0*c.eU[k] + w1*e.eU[k])
			dV := md.eV[k] - (wb*hb.e[3][k] + w0*c.eV[k] + w1*e.eV[k])
			err += 2.0 / 3 * h * (math.Abs(dI) + math.Abs(dQ) + math.Abs(dU) + math.Abs(dV))
		}
		// Channels far below the peak count in proportion to their
		// intensity (errFloor): |dS|/max(I, errFloor I_peak).
		if i1 < floor {
			err *= i1 / floor
		}
		err /= tol
		if err > worst {
			worst, wk = err, k
		}
		if r := i1 / x[0]; r > rmax {
			rmax, kmax = r, k
		} else if r < rmin {
			rmin, kmin = r, k
		}
	}
	if d := math.Log(rmax) / maxDLnI; d > worst {
		worst, wk = d, kmax
	}
	if d := -math.Log(rmin) / maxDLnI; d > worst {
		worst, wk = d, kmin
	}
	// Population change, relative to the unsaturated central inversion
	// (1): the line inversions, and the coherences when both ends have them.
	dp := 0.0
	nsrc := len(m.lines) * m.stride
	if c.coherent && e.coherent {
		nsrc = len(e.src)
	}
	if c.clsAll && e.clsAll {
		// The same inversions, contiguous.
		cc := c.cls[:len(e.cls)]
		for i, d := range e.cls {
			if a := math.Abs(d - cc[i]); a > dp {
				dp = a
			}
		}
		nsrc = 0
	}
	for off := 0; off < nsrc; off += m.stride {
		// Only the active classes [jlo, jhi) of each slot are ever set.
		cs := c.src[off+m.pad+m.jlo : off+m.pad+m.jhi]
		for i, d := range e.src[off+m.pad+m.jlo : off+m.pad+m.jhi] {
			if a := math.Abs(d - cs[i]); a > dp {
				dp = a
			}
		}
	}
	worst = math.Max(worst, dp/maxDPop)
	if math.IsNaN(worst) {
		worst = math.Inf(1)
	}
	return worst, wk, nil
}

// trialFailed turns a class solve that came out unphysical in a trial
// state into a rejected step (a shorter step may stay physical: only
// accepted states must be); other errors stop the run.
func (m *Model) trialFailed(err error) (float64, int, error) {
	var se *StepError
	if errors.Is(err, errNotPhysical) && errors.As(err, &se) {
		m.unphysical = err
		return math.Inf(1), se.Channel, nil
	}
	return 0, 0, err
}

// Run integrates the column from the seed until the saturation target (or
// the total gain Params.Gain when set), recording checkpoints.
func (m *Model) Run(ctx context.Context) (*Trajectory, error) {
	p := &m.p
	m.steps, m.rej, m.clamped = 0, 0, 0
	m.csOn, m.csFrom = false, math.Inf(1)
	m.unphysical = nil
	m.mh.n = 0
	tr := &Trajectory{
		Velocity:           append([]float64(nil), m.v...),
		GOmega:             m.gOmega,
		SaturationTbdOmega: m.tsat,
		Warnings:           append([]string(nil), m.warnings...),
		Population:         p.Population,
	}
	// Start: the seed in every channel, populations consistent with it.
	for s := 0; s < 4; s++ {
		for k := range m.cur.st[s] {
			m.cur.st[s][k] = m.seed[s]
		}
	}
	if err := m.populate(m.cur, 0); err != nil {
		return nil, err
	}
	tr.SeedSaturation = m.cur.sat
	// Checkpoint levels, evenly spaced in log saturation.
	targets := m.targets(m.cur.sat)
	if len(targets) > 0 && m.cur.sat > p.FirstCheckpoint {
		tr.Warnings = append(tr.Warnings, fmt.Sprintf("seed already saturates the line to R/Gamma = %.3g above the first checkpoint %.3g: lower checkpoints are skipped", m.cur.sat, p.FirstCheckpoint))
	}
	ti := 0
	pos := 0.0
	peak := 0.0
	for _, e := range m.cur.eI {
		peak = math.Max(peak, e)
	}
	h := 0.5 / math.Max(peak, 1e-3)
	maxGain := maxGainDefault
	if p.Gain > 0 {
		maxGain = p.Gain
	}
	hmin := 1e-12
	for it := 0; ; it++ {
		if it%ctxEvery == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		if it > maxSteps {
			return nil, &StepError{Position: pos, Channel: m.peakChannel(), Velocity: m.v[m.peakChannel()], Msg: fmt.Sprintf("no convergence after %d steps", maxSteps)}
		}
		if p.Gain == 0 && ti >= len(targets) {
			break
		}
		if pos >= maxGain*(1-1e-12) {
			if p.Gain > 0 {
				break
			}
			return nil, &StepError{Position: pos, Channel: m.peakChannel(), Velocity: m.v[m.peakChannel()],
				Msg: fmt.Sprintf("saturation R/Gamma = %.3g has not reached the target %.3g", m.cur.sat, p.Saturation)}
		}
		hs := math.Min(h, maxGain-pos)
		err, wk, serr := m.step(pos, hs)
		if serr != nil {
			return nil, serr
		}
		if err > 1 {
			m.rej++
			h = hs * math.Max(0.1, 0.9*math.Pow(err, -1.0/3))
			if h < hmin*math.Max(1, pos) {
				if m.unphysical != nil {
					return nil, m.unphysical
				}
				return nil, &StepError{Position: pos, Channel: wk, Velocity: m.v[wk],
					Msg: fmt.Sprintf("step size %.3g cannot meet the tolerance %.3g", h, p.Tolerance)}
			}
			continue
		}
		// Checkpoint levels the step passed are reached by dense output
		// inside the step instead of shortening it.
		for ti < len(targets) && m.end.sat >= targets[ti]*(1-checkpointEp) {
			if m.end.sat <= targets[ti]*(1+checkpointEp) || !(m.cur.sat < targets[ti]) {
				tr.Checkpoints = append(tr.Checkpoints, m.checkpoint(m.end, pos+hs))
			} else {
				theta := m.denseAt(targets[ti], hs)
				tr.Checkpoints = append(tr.Checkpoints, m.checkpoint(m.dense, pos+theta*hs))
			}
			ti++
		}
		m.mh.push(pos, m.cur)
		m.cur, m.end = m.end, m.cur
		pos += hs
		m.steps++
		m.unphysical = nil
		grow := 5.0
		if err > 0 {
			grow = math.Min(grow, 0.9*math.Pow(err, -1.0/3))
		}
		h = math.Max(h, hs) * math.Max(grow, 0.2)
	}
	if p.Gain > 0 {
		if n := len(tr.Checkpoints); n == 0 || tr.Checkpoints[n-1].Gain != pos {
			tr.Checkpoints = append(tr.Checkpoints, m.checkpoint(m.cur, pos))
		}
	}
	tr.Steps, tr.Rejected = m.steps, m.rej
	tr.CoherentFrom = m.csFrom
	if m.csOn && tr.CoherentFrom <= tr.SeedSaturation {
		tr.CoherentFrom = 0
	}
	if m.clamped > 0 {
		tr.Warnings = append(tr.Warnings, fmt.Sprintf(
			"the channel grid under-resolves the line (%.2g channels per Doppler width): interpolated stimulated rates went negative %d times and were set to zero, so energy is conserved only approximately; use more channels",
			m.p.Doppler/m.dv, m.clamped))
	}
	m.validityWarnings(tr)
	return tr, nil
}

// targets returns the checkpoint saturation levels above start.
func (m *Model) targets(start float64) []float64 {
	p := &m.p
	var t []float64
	top := p.Saturation
	if p.Gain > 0 {
		top = math.Inf(1)
	}
	// A gain-limited column may never reach FirstCheckpoint (a thin or
	// weakly amplifying maser): there the same log grid is continued down
	// to the seed, so the history is recorded all the same.
	i0 := 0
	if p.Gain > 0 && start > 0 && start < p.FirstCheckpoint {
		i0 = int(math.Floor(float64(p.CheckpointsPerDecade) * math.Log10(start/p.FirstCheckpoint)))
	}
	for i := i0; ; i++ {
		v := p.FirstCheckpoint * math.Pow(10, float64(i)/float64(p.CheckpointsPerDecade))
		if v > top*(1+1e-9) || i-i0 > 100*p.CheckpointsPerDecade {
			break
		}
		if v > start {
			t = append(t, v)
		}
	}
	if p.Gain == 0 && (len(t) == 0 || t[len(t)-1] < p.Saturation*(1-1e-9)) {
		t = append(t, p.Saturation)
	}
	return t
}

func (m *Model) peakChannel() int { return peakOf(m.cur) }

// peakOf returns the channel of the largest I of st.
func peakOf(st *state) int {
	k0, best := 0, math.Inf(-1)
	for k, v := range st.st[0] {
		if v > best {
			k0, best = k, v
		}
	}
	return k0
}

// denseAt fills m.dense with the state at the fraction theta of the step
// of length h just taken from m.cur (through m.mid to m.end) at which the
// saturation equals target, and returns theta. The dense output integrates
// the quadratic through K0, K_mid and K1:
//
//	S(theta h) = exp(h [theta K0 + theta^2/2 (-3 K0 + 4 K_mid - K1)
//	                    + theta^3/3 (2 K0 - 4 K_mid + 2 K1)]) S0,
//
// exact for commuting K that is quadratic along the step; at theta = 1 it
// is Simpson's rule, which differs from the accepted end state by less than
// the step's error estimate. theta is found by regula falsi (Illinois) in
// log saturation.
func (m *Model) denseAt(target, h float64) float64 {
	lt := math.Log(target)
	ta, fa := 0.0, math.Log(m.cur.sat)-lt
	tb, fb := 1.0, math.Log(m.end.sat)-lt
	theta := 1.0
	side := 0
	for it := 0; it < 60; it++ {
		theta = ta - fa*(tb-ta)/(fb-fa)
		if !(theta > ta && theta < tb) {
			theta = (ta + tb) / 2
		}
		f := math.Log(m.denseSat(theta, h)) - lt
		if math.Abs(f) <= checkpointEp || tb-ta < 1e-12 {
			break
		}
		if (f > 0) == (fb > 0) {
			tb, fb = theta, f
			if side == -1 {
				fa /= 2
			}
			side = -1
		} else {
			ta, fa = theta, f
			if side == 1 {
				fb /= 2
			}
			side = 1
		}
	}
	m.denseFill(theta, h)
	return theta
}

// denseStokes is the dense output (see denseAt) of channel k at theta of
// the step h.
func (m *Model) denseStokes(k int, theta, h float64) [4]float64 {
	c, md, e := m.cur, m.mid, m.end
	a := 1 - 1.5*theta + 2*theta*theta/3
	b := 2*theta - 4*theta*theta/3
	g := -0.5*theta + 2*theta*theta/3
	kt := Propagation{
		EtaI: a*c.eI[k] + b*md.eI[k] + g*e.eI[k],
		EtaQ: a*c.eQ[k] + b*md.eQ[k] + g*e.eQ[k],
		EtaU: a*c.eU[k] + b*md.eU[k] + g*e.eU[k],
		EtaV: a*c.eV[k] + b*md.eV[k] + g*e.eV[k],
		RhoV: m.rhoV,
	}
	x := [4]float64{c.st[0][k], c.st[1][k], c.st[2][k], c.st[3][k]}
	if m.rhoV == 0 {
		return applyNoRho(kt.EtaI, kt.EtaQ, kt.EtaU, kt.EtaV, theta*h, x)
	}
	return applyGeneral(kt, theta*h, x)
}

// denseSat is the saturation measure of the dense output at theta of the
// step h, evaluated on the line-centre channels alone (see saturation).
func (m *Model) denseSat(theta, h float64) float64 {
	yAt := func(q, k int) float64 {
		w := &m.w[q]
		if k < 0 || k >= m.n {
			return w[0]*m.seed[0] + w[1]*m.seed[1] + w[2]*m.seed[3]
		}
		s := m.denseStokes(k, theta, h)
		return w[0]*s[0] + w[1]*s[1] + w[2]*s[3]
	}
	sat := 0.0
	for _, l := range m.lines {
		sat = math.Max(sat, l.s*((1-l.cf)*yAt(l.q+1, l.ci)+l.cf*yAt(l.q+1, l.ci+1)))
	}
	return sat
}

// denseFill sets m.dense to the dense output at theta of the step h (see
// denseAt), with its saturation measure.
func (m *Model) denseFill(theta, h float64) {
	c, e, d := m.cur, m.end, m.dense
	for k := 0; k < m.n; k++ {
		y := m.denseStokes(k, theta, h)
		d.st[0][k], d.st[1][k], d.st[2][k], d.st[3][k] = y[0], y[1], y[2], y[3]
	}
	d.sat = m.saturation(&d.st)
	d.coherent = c.coherent
	if theta > 0.5 {
		d.coherent = e.coherent
	}
}

// saturation returns the largest R/Gamma over the lines at their line
// centre for the radiation st: the measure populate stores in state.sat
// (the weighted Stokes interpolated linearly, the seed beyond the grid).
func (m *Model) saturation(st *[4][]float64) float64 {
	yAt := func(q, k int) float64 {
		w := &m.w[q]
		if k < 0 || k >= m.n {
			return w[0]*m.seed[0] + w[1]*m.seed[1] + w[2]*m.seed[3]
		}
		return w[0]*st[0][k] + w[1]*st[1][k] + w[2]*st[3][k]
	}
	sat := 0.0
	for _, l := range m.lines {
		k := max(-m.pad, min(l.ci, m.n+m.pad-1))
		k1 := max(-m.pad, min(l.ci+1, m.n+m.pad-1))
		sat = math.Max(sat, l.s*((1-l.cf)*yAt(l.q+1, k)+l.cf*yAt(l.q+1, k1)))
	}
	return sat
}

// checkpoint records the emergent spectrum of the state cs at position pos
// (physics.md section 6).
func (m *Model) checkpoint(cs *state, pos float64) Checkpoint {
	p := &m.p
	n := m.n
	toK := m.tsat / p.BeamSolid
	c2, s2 := math.Cos(2*p.Chi), math.Sin(2*p.Chi)
	cp := Checkpoint{
		Saturation: cs.sat,
		Gain:       pos,
		I:          make([]float64, n),
		Q:          make([]float64, n),
		U:          make([]float64, n),
		V:          make([]float64, n),
	}
	st := &cs.st
	for k := 0; k < n; k++ {
		qf, uf := st[1][k], st[2][k]
		cp.I[k] = toK * st[0][k]
		cp.Q[k] = toK * (qf*c2 - uf*s2)
		cp.U[k] = toK * (qf*s2 + uf*c2)
		cp.V[k] = toK * st[3][k]
	}
	kp := peakOf(cs)
	ip := st[0][kp]
	cp.IPeak = cp.I[kp]
	cp.TbdOmega = ip * m.tsat
	cp.Ml = math.Hypot(st[1][kp], st[2][kp]) / ip
	cp.Qb = st[1][kp] / ip
	cp.Ub = st[2][kp] / ip
	cp.VIPeak = st[3][kp] / ip
	cp.EVPA = 0.5 * math.Atan2(cp.U[kp], cp.Q[kp])
	vmax, vmin := math.Inf(-1), math.Inf(1)
	for _, v := range st[3] {
		vmax, vmin = math.Max(vmax, v), math.Min(vmin, v)
	}
	cp.PV = (vmax - vmin) / ip
	// Intensity-weighted m_l over the channels above half of the line's
	// peak above the seed background.
	bg := m.seed[0]
	half := bg + 0.5*(ip-bg)
	var sw, sm float64
	for k := 0; k < n; k++ {
		if i := st[0][k]; i >= half && i > bg {
			w := i - bg
			sw += w
			sm += w * math.Hypot(st[1][k], st[2][k]) / i
		}
	}
	cp.MlInt = cp.Ml
	if sw > 0 {
		cp.MlInt = sm / sw
	}
	cp.RoverGOmega = cs.sat * m.gamma / m.gOmega
	cp.RoverDoppler = cs.sat * m.gamma * float64(constant.LightSpeedInVacuum) / (2 * math.Pi * p.Species.Frequency * p.Doppler)
	cp.Coherent = cs.coherent
	if cp.Coherent {
		cp.FlatSpectrum = m.cs.flatness(cs.sat)
		cp.Valid = cp.FlatSpectrum <= FlatLimit
	} else {
		cp.Valid = cp.RoverGOmega <= ValidLimit
	}
	cp.Valid = cp.Valid && cp.RoverDoppler <= BroadbandLimit
	return cp
}

// BroadbandLimit is the largest R/(2 pi Delta nu_D) at which a checkpoint
// counts as valid: the rate (broadband) approximation that eliminates the
// optical coherences needs the stimulated rate small against the line
// width; at 0.1 its correction is of order 1 % (project choice).
const BroadbandLimit = 0.1

// FlatLimit is the largest Checkpoint.FlatSpectrum at which a density-matrix
// checkpoint counts as valid: the coherences then carry a relative error
// of the mean-resonance rule below about 1 % (project choice, from the
// (dv/v_D)^2 order of that rule; physics.md section 8).
const FlatLimit = 0.01

func (m *Model) validityWarnings(tr *Trajectory) {
	if m.gOmega == 0 && m.cs == nil {
		tr.Warnings = append(tr.Warnings, "zero Zeeman splitting (g Omega = 0): the populations-only model is outside its validity (R/gOmega infinite) at every checkpoint")
		return
	}
	if w := ValidityWarning(tr); w != "" {
		tr.Warnings = append(tr.Warnings, w)
	}
	// Where R >~ g Omega, V depends on the frequency rule of the coherence
	// terms at the level of a few per cent (physics.md section 8, caution 2).
	for _, cp := range tr.Checkpoints {
		if cp.Coherent && cp.RoverGOmega >= 0.3 && cp.PV > 0 {
			tr.Warnings = append(tr.Warnings, fmt.Sprintf("from R/Gamma = %.3g on R/gOmega >= 0.3 with the density matrix: Stokes V (P_V, V/I) carries an uncertainty of a few per cent from the mean-resonance rule of the coherence terms; m_l, q_b and the EVPA do not",
				cp.Saturation))
			break
		}
	}
}

// ValidLimit is the largest R/(g Omega) at which a checkpoint counts as
// inside the populations-only regime (Checkpoint.Valid).
const ValidLimit = 0.1

// ValidityWarning says from which saturation on a trajectory lies outside
// the validity of the model used there, and why, or returns "" when every
// checkpoint is valid. Populations-only checkpoints are invalid where
// R/(g Omega) > ValidLimit (Zeeman coherences neglected); density-matrix
// checkpoints where the flat-spectrum measure exceeds FlatLimit.
func ValidityWarning(tr *Trajectory) string {
	var rates, flat, broad []Checkpoint
	for _, cp := range tr.Checkpoints {
		if cp.RoverDoppler > BroadbandLimit {
			broad = append(broad, cp)
		}
		switch {
		case cp.Valid:
		case cp.Coherent && cp.FlatSpectrum <= FlatLimit:
		case !cp.Coherent && cp.RoverGOmega <= ValidLimit:
		case cp.Coherent:
			flat = append(flat, cp)
		default:
			rates = append(rates, cp)
		}
	}
	var msgs []string
	if len(rates) > 0 && tr.GOmega > 0 {
		maxR := 0.0
		for _, cp := range rates {
			maxR = math.Max(maxR, cp.RoverGOmega)
		}
		msgs = append(msgs, fmt.Sprintf("R/gOmega exceeds %g from R/Gamma = %.3g on with the populations-only model (g Omega = %.3g s^-1, max R/gOmega = %.3g; %d of %d checkpoints): Zeeman coherences, neglected by the rate equations, matter there (valid = False in the tables; the density-matrix or automatic population model keeps them)",
			ValidLimit, rates[0].Saturation, tr.GOmega, maxR, len(rates), len(tr.Checkpoints)))
	}
	if len(flat) > 0 {
		maxF := 0.0
		for _, cp := range flat {
			maxF = math.Max(maxF, cp.FlatSpectrum)
		}
		msgs = append(msgs, fmt.Sprintf("the flat-spectrum measure of the Zeeman coherences exceeds %g from R/Gamma = %.3g on (max %.3g; %d of %d checkpoints): coherent sublevels whose lines lie a sizeable fraction of the Doppler width apart carry the error of the mean-resonance rule (valid = False in the tables)",
			FlatLimit, flat[0].Saturation, maxF, len(flat), len(tr.Checkpoints)))
	}
	if len(broad) > 0 {
		msgs = append(msgs, fmt.Sprintf("the stimulated rate exceeds %g of the Doppler width in rate units from R/Gamma = %.3g on (%d of %d checkpoints): the rate approximation behind both population models weakens there (valid = False in the tables)",
			BroadbandLimit, broad[0].Saturation, len(broad), len(tr.Checkpoints)))
	}
	return strings.Join(msgs, "; ")
}

// midHistory holds the propagation matrix at the starts of the last two
// accepted steps. With it the exponential midpoint rule takes K_mid from
// the quadratic through K at those two points and at the current start
// (error O(h^3) in K_mid, O(h^4) in S1, against the rule's own O(h^3)),
// so that a step costs one population solve instead of two: the solve
// at the end of the step, which is also the next step's K0. The step's
// error estimate adds the extrapolation error, measured against the
// quadratic through K_b, K0 and K1 (interpolation, several times more
// accurate than the extrapolation). Both population models use it (the
// integrator does not know which model ran).
type midHistory struct {
	h [2]kPoint // oldest first
	n int       // valid points
}

// kPoint is the propagation matrix of every channel at position s.
type kPoint struct {
	s float64
	e [4][]float64 // EtaI, EtaQ, EtaU, EtaV
}

// newMidHistory returns an empty history for n channels.
func newMidHistory(n int) midHistory {
	var mh midHistory
	for i := range mh.h {
		for j := range mh.h[i].e {
			mh.h[i].e[j] = make([]float64, n)
		}
	}
	return mh
}

// push records the propagation of st at position s, dropping the oldest.
func (mh *midHistory) push(s float64, st *state) {
	mh.h[0], mh.h[1] = mh.h[1], mh.h[0]
	p := &mh.h[1]
	p.s = s
	for i, src := range [4][]float64{st.eI, st.eQ, st.eU, st.eV} {
		copy(p.e[i], src)
	}
	mh.n = min(mh.n+1, len(mh.h))
}

// lagrange3 returns the weights of the values at a, b and c in the
// quadratic through them evaluated at t.
func lagrange3(a, b, c, t float64) (wa, wb, wc float64) {
	wa = (t - b) * (t - c) / ((a - b) * (a - c))
	wb = (t - a) * (t - c) / ((b - a) * (b - c))
	wc = (t - a) * (t - b) / ((c - a) * (c - b))
	return wa, wb, wc
}
