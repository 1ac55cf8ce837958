package interpret

import (
	"fmt"
	"math"
)

// Saturated-maser relation between the fractional linear polarization and
// the field angle, Goldreich, Keeley & Kwan 1973 (ApJ 179, 111), for a
// J = 1-0 line with g Omega >> R >> Gamma and isotropic pumping. In the
// field frame (q_b > 0: electric vector along the projected field),
//
//	q_b = (2 - 3 sin^2 theta) / (3 sin^2 theta)   for sin^2 theta >= 1/3,
//	q_b -> 1                                      for sin^2 theta <  1/3,
//
// so m_l = |q_b| and the polarization is parallel to the projected field
// below the angle theta_F = asin(sqrt(2/3)) = 54.7356 deg and perpendicular
// above it. Inverting, for a measured m_l:
//
//	parallel:      sin^2 theta = 2 / (3 (1 + m_l)),  theta in [35.26, 54.74] deg
//	               (m_l = 1 for every theta below 35.26 deg);
//	perpendicular: sin^2 theta = 2 / (3 (1 - m_l)),  theta in [54.74, 90] deg,
//	               only for m_l <= 1/3.
//
// Below m_l = 1/3 both branches give an angle; the branch is then not fixed
// by m_l alone. GKKBranches weighs the two with the density of m_l that
// field directions uniform on the sphere (cos theta uniform) produce on each
// branch, |d cos theta / d m_l|; that prior is our choice and is stated
// wherever it is used.

// ThetaF is the angle at which the GKK polarization changes from parallel
// to perpendicular to the projected field: sin^2 theta_F = 2/3 (54.7356 deg).
var ThetaF = math.Asin(math.Sqrt(2.0 / 3))

// thetaC is the angle below which the GKK parallel polarization is
// complete: sin^2 theta_C = 1/3 (35.2644 deg).
var thetaC = math.Asin(math.Sqrt(1.0 / 3))

// GKKMl returns the saturated GKK fractional linear polarization q_b at
// field angle theta (rad): positive parallel, negative perpendicular to the
// projected field.
func GKKMl(theta float64) float64 {
	s2 := math.Sin(theta) * math.Sin(theta)
	if s2 < 1.0/3 {
		return 1
	}
	return (2 - 3*s2) / (3 * s2)
}

// ThetaParallel inverts GKK on the parallel branch: the angle (rad) at
// which q_b = +ml. ml >= 1 gives theta_C (35.26 deg), the largest angle of
// complete polarization; ml <= 0 gives theta_F.
func ThetaParallel(ml float64) float64 {
	switch {
	case ml >= 1:
		return thetaC
	case ml <= 0:
		return ThetaF
	}
	return math.Asin(math.Sqrt(2 / (3 * (1 + ml))))
}

// ThetaPerpendicular inverts GKK on the perpendicular branch: the angle
// (rad) at which q_b = -ml. It is defined for 0 <= ml <= 1/3 (ok false
// otherwise); ml = 1/3 gives 90 deg.
func ThetaPerpendicular(ml float64) (theta float64, ok bool) {
	switch {
	case ml > 1.0/3:
		return math.NaN(), false
	case ml <= 0:
		return ThetaF, true
	}
	return math.Asin(math.Min(1, math.Sqrt(2/(3*(1-ml))))), true
}

// Orientation says how the projected field lies against the EVPA.
type Orientation int

const (
	// OrientUnknown: no angle, or no measured m_l.
	OrientUnknown Orientation = iota
	// OrientParallel: theta < theta_F, the field is along the EVPA.
	OrientParallel
	// OrientPerpendicular: theta > theta_F, the field is across the EVPA.
	OrientPerpendicular
)

func (o Orientation) String() string {
	switch o {
	case OrientParallel:
		return "parallel"
	case OrientPerpendicular:
		return "perpendicular"
	}
	return "unknown"
}

// ThetaEstimate is the field angle inferred from a measured m_l.
type ThetaEstimate struct {
	// Theta is the angle (rad) on the chosen branch and ThetaErr its
	// 1-sigma half-width: the middle and half-width of the angles whose
	// GKK m_l lies within ml +/- mlErr on that branch.
	Theta, ThetaErr float64
	// Orientation of the projected field against the EVPA, from the
	// chosen branch (the 54.7 deg rule).
	Orientation Orientation
	// Alt is the angle on the other branch (NaN when m_l - mlErr > 1/3:
	// only the parallel branch reaches it).
	Alt, AltErr float64
	// PPerpendicular is the probability of the perpendicular branch for
	// field directions uniform on the sphere (0 when it is excluded; 1
	// when the user fixed that branch).
	PPerpendicular float64
	// Ambiguous: the data allow both orientations: the branch was not
	// given and both branches reach m_l within its error, or the chosen
	// angle lies within ThetaErr of theta_F.
	Ambiguous bool
}

// GKKTheta infers the field angle from m_l +/- mlErr (fractions). branch
// fixes the branch (Parallel or Perpendicular) or leaves it to the data
// (AnyBranch): parallel when m_l - mlErr > 1/3, else the more probable
// branch under field directions uniform on the sphere, flagged ambiguous.
func GKKTheta(ml, mlErr float64, branch Branch) (ThetaEstimate, error) {
	if !(ml >= 0) || !(mlErr >= 0) || math.IsInf(ml, 0) || math.IsInf(mlErr, 0) {
		return ThetaEstimate{}, fmt.Errorf("m_l = %g +/- %g: allowed m_l >= 0 and an error >= 0", ml, mlErr)
	}
	lo, hi := math.Max(0, ml-mlErr), ml+mlErr
	par := func() (float64, float64) {
		// theta decreases as m_l grows on this branch.
		a, b := ThetaParallel(hi), ThetaParallel(lo)
		if hi >= 1 {
			a = 0 // complete polarization: any angle below theta_C
		}
		return (a + b) / 2, (b - a) / 2
	}
	perp := func() (float64, float64, bool) {
		a, ok := ThetaPerpendicular(lo)
		if !ok {
			return math.NaN(), math.NaN(), false
		}
		b, ok := ThetaPerpendicular(hi)
		if !ok {
			b = math.Pi / 2
		}
		return (a + b) / 2, (b - a) / 2, true
	}
	tp, ep := par()
	tq, eq, hasPerp := perp()
	e := ThetaEstimate{Alt: math.NaN(), AltErr: math.NaN()}
	switch branch {
	case Parallel:
		e.Theta, e.ThetaErr, e.Orientation = tp, ep, OrientParallel
		if hasPerp {
			e.Alt, e.AltErr = tq, eq
		}
	case Perpendicular:
		if !hasPerp {
			return ThetaEstimate{}, fmt.Errorf("m_l = %g +/- %g is above 1/3 beyond its error: the perpendicular GKK branch does not reach it (allowed m_l - error <= 1/3)", ml, mlErr)
		}
		e.Theta, e.ThetaErr, e.Orientation, e.PPerpendicular = tq, eq, OrientPerpendicular, 1
		e.Alt, e.AltErr = tp, ep
	default:
		if !hasPerp {
			e.Theta, e.ThetaErr, e.Orientation = tp, ep, OrientParallel
			break
		}
		e.PPerpendicular = PerpendicularProbability(math.Min(ml, 1.0/3))
		e.Ambiguous = true
		if e.PPerpendicular >= 0.5 {
			e.Theta, e.ThetaErr, e.Orientation = tq, eq, OrientPerpendicular
			e.Alt, e.AltErr = tp, ep
		} else {
			e.Theta, e.ThetaErr, e.Orientation = tp, ep, OrientParallel
			e.Alt, e.AltErr = tq, eq
		}
	}
	if math.Abs(e.Theta-ThetaF) <= e.ThetaErr {
		e.Ambiguous = true
	}
	return e, nil
}

// PerpendicularProbability is the probability that a measured m_l (0 <=
// m_l <= 1/3, where both branches exist) comes from the perpendicular
// branch, for field directions uniform on the sphere: the prior density
// of m_l on each branch is |d cos theta / d m_l|, and
//
//	cos^2 theta = (1 + 3m)/(3(1 + m))  (parallel),   |d cos^2/dm| = 2/(3(1+m)^2)
//	cos^2 theta = (1 - 3m)/(3(1 - m))  (perpendicular), |d cos^2/dm| = 2/(3(1-m)^2)
//
// with |d cos/dm| = |d cos^2/dm| / (2 cos). At m_l = 0 the two are equal
// (1/2); towards m_l = 1/3 the perpendicular branch takes over.
func PerpendicularProbability(ml float64) float64 {
	if ml >= 1.0/3 {
		return 1
	}
	m := math.Max(ml, 0)
	cp := math.Sqrt((1 + 3*m) / (3 * (1 + m)))
	cq := math.Sqrt((1 - 3*m) / (3 * (1 - m)))
	dp := 2 / (3 * (1 + m) * (1 + m)) / (2 * cp)
	dq := 2 / (3 * (1 - m) * (1 - m)) / (2 * cq)
	return dq / (dp + dq)
}

// PeakPolarization measures the fractional linear polarization and the
// EVPA of a full-Stokes spectrum at the channel of peak I:
//
//	m_l = sqrt(Q^2 + U^2 - sigma_P^2) / I,   EVPA = atan2(U, Q)/2,
//
// with the noise bias of the polarized intensity removed to first order
// (Wardle & Kronberg 1974; sigma_P^2 = (sigma_Q^2 + sigma_U^2)/2; zero when
// P is below its noise). The error of m_l is sigma_P / I (P well above its
// noise) and that of the EVPA sigma_P / (2 P) rad. ok is false when the
// spectrum lacks Q or U or their errors.
func PeakPolarization(o *Observed) (ml, mlErr, evpa, evpaErr float64, ok bool) {
	if !o.Use[0] || !o.Use[1] || !o.Use[2] || o.Err[1] == nil || o.Err[2] == nil {
		return 0, 0, 0, 0, false
	}
	pk := 0
	for k, x := range o.Stokes[0] {
		if x > o.Stokes[0][pk] {
			pk = k
		}
	}
	I, Q, U := o.Stokes[0][pk], o.Stokes[1][pk], o.Stokes[2][pk]
	if !(I > 0) {
		return 0, 0, 0, 0, false
	}
	sp := math.Sqrt((o.Err[1][pk]*o.Err[1][pk] + o.Err[2][pk]*o.Err[2][pk]) / 2)
	p2 := Q*Q + U*U - sp*sp
	p := math.Sqrt(math.Max(p2, 0))
	ml, mlErr = p/I, sp/I
	evpa = math.Atan2(U, Q) / 2
	evpaErr = math.Pi / 2 / math.Sqrt(3) // uniform in [-pi/4, pi/4] when P is noise
	if p > 0 {
		evpaErr = math.Min(evpaErr, sp/(2*p))
	}
	return ml, mlErr, evpa, evpaErr, true
}
