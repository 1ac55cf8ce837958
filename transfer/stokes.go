package transfer

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// This file holds the Stokes step of physics.md section 5: the propagation
// matrix of one channel and its exact exponential.

// Propagation is the propagation matrix of one channel,
//
//	dS/ds = K S,  K = | EtaI  EtaQ  EtaU  EtaV |
//	                  | EtaQ  EtaI -RhoV  RhoU |
//	                  | EtaU  RhoV  EtaI -RhoQ |
//	                  | EtaV -RhoU  RhoQ  EtaI |
//
// for S = (I, Q, U, V). Positive Eta amplifies (a maser); the Rho terms
// rotate the polarization: RhoV > 0 turns the polarization angle
// counterclockwise on the sky (north through east) at the rate RhoV/2.
type Propagation struct {
	EtaI, EtaQ, EtaU, EtaV float64
	RhoQ, RhoU, RhoV       float64
}

// Matrix returns K as a 4x4 matrix.
func (k Propagation) Matrix() *mat.Dense {
	return mat.NewDense(4, 4, []float64{
		k.EtaI, k.EtaQ, k.EtaU, k.EtaV,
		k.EtaQ, k.EtaI, -k.RhoV, k.RhoU,
		k.EtaU, k.RhoV, k.EtaI, -k.RhoQ,
		k.EtaV, -k.RhoU, k.RhoQ, k.EtaI,
	})
}

// Operator returns exp(K s) as a 4x4 matrix, column by column from Apply.
func (k Propagation) Operator(s float64) *mat.Dense {
	o := mat.NewDense(4, 4, nil)
	for c := 0; c < 4; c++ {
		var e [4]float64
		e[c] = 1
		y := k.Apply(s, e)
		for r := 0; r < 4; r++ {
			o.Set(r, c, y[r])
		}
	}
	return o
}

// Apply returns exp(K s) x for constant K.
//
// Without Rho terms, with a = (EtaQ, EtaU, EtaV) and eta = |a| (physics.md
// section 5),
//
//	exp(K s) = e^(EtaI s) | cosh(eta s)          a^T sinh(eta s)/eta              |
//	                      | a sinh(eta s)/eta    1 + (cosh(eta s) - 1) a a^T/eta^2 |.
//
// With Rho terms the traceless part A = K - EtaI has the characteristic
// polynomial x^4 - (eta^2 - rho^2) x^2 - (eta.rho)^2 (Landi Degl'Innocenti &
// Landolfi 2004, Polarization in Spectral Lines, sect. 8.3), so its
// eigenvalues are +-L1 and +-i L2 with
//
//	L1^2 - L2^2 = eta^2 - rho^2,  L1 L2 = |eta.rho|,
//
// and the analytic evolution operator is the cubic polynomial in A
//
//	exp(A s) = c0 + c1 A + c2 A^2 + c3 A^3
//
// whose coefficients are divided differences of cosh and sinh/x on the
// eigenvalues (Sylvester's formula); they are evaluated by series when the
// eigenvalues nearly coincide, so the operator is exact to rounding at any
// step including the degenerate ones.
func (k Propagation) Apply(s float64, x [4]float64) [4]float64 {
	if k.RhoQ == 0 && k.RhoU == 0 && k.RhoV == 0 {
		return applyNoRho(k.EtaI, k.EtaQ, k.EtaU, k.EtaV, s, x)
	}
	return applyGeneral(k, s, x)
}

func applyNoRho(eI, eQ, eU, eV, s float64, x [4]float64) [4]float64 {
	eta2 := eQ*eQ + eU*eU + eV*eV
	z := eta2 * s * s
	ap := eQ*x[1] + eU*x[2] + eV*x[3]
	// e^(eI s) times 1, cosh(r), sinh(r)/r and (cosh(r)-1)/r^2 at r = eta s.
	var e0, ech, esh, ecm float64
	if z < 1e-2 {
		ch, sh, cm := coshSeries(z)
		e0 = math.Exp(eI * s)
		ech, esh, ecm = e0*ch, e0*sh, e0*cm
	} else {
		// Two exponentials instead of exp, cosh and sinh: this is the
		// innermost operation of the integrator.
		r := math.Sqrt(z)
		ep := math.Exp(eI*s + r)
		em := math.Exp(eI*s - r)
		if math.IsInf(ep, 0) || em == 0 {
			e0 = math.Exp(eI * s)
			ech, esh = e0*math.Cosh(r), e0*math.Sinh(r)/r
		} else {
			e0 = math.Sqrt(ep * em)
			ech, esh = (ep+em)/2, (ep-em)/(2*r)
		}
		ecm = (ech - e0) / z
	}
	i := ech*x[0] + esh*s*ap
	c := esh*s*x[0] + ecm*s*s*ap
	return [4]float64{i, e0*x[1] + eQ*c, e0*x[2] + eU*c, e0*x[3] + eV*c}
}

// coshSeries returns cosh(sqrt z), sinh(sqrt z)/sqrt z and
// (cosh(sqrt z) - 1)/z for 0 <= z < 1e-2 (the caller's branch), by Taylor
// series to z^4: truncation below 1e-12 relative.
func coshSeries(z float64) (ch, sh, cm float64) {
	cm = 1.0/2 + z*(1.0/24+z*(1.0/720+z*(1.0/40320+z/3628800)))
	sh = 1 + z*(1.0/6+z*(1.0/120+z*(1.0/5040+z/362880)))
	ch = 1 + z*cm
	return
}

func applyGeneral(k Propagation, s float64, x [4]float64) [4]float64 {
	eta2 := k.EtaQ*k.EtaQ + k.EtaU*k.EtaU + k.EtaV*k.EtaV
	rho2 := k.RhoQ*k.RhoQ + k.RhoU*k.RhoU + k.RhoV*k.RhoV
	b := k.EtaQ*k.RhoQ + k.EtaU*k.RhoU + k.EtaV*k.RhoV
	half := (eta2 - rho2) / 2
	r := math.Hypot(half, b)
	var l1, l2 float64 // L1^2, L2^2, without cancellation
	if half >= 0 {
		l1 = r + half
		if l1 > 0 {
			l2 = b * b / l1
		}
	} else {
		l2 = r - half
		l1 = b * b / l2
	}
	// Arguments of the entire functions C(z) = cosh(sqrt z), S(z) = sinh(sqrt z)/sqrt z.
	zx, zy := l1*s*s, -l2*s*s
	dc, ds := dividedCS(zx, zy)
	cx, sx := entireCS(zx)
	c0 := cx - zx*dc
	c1 := s * (sx - zx*ds)
	c2 := s * s * dc
	c3 := s * s * s * ds
	a1 := k.applyA(x)
	a2 := k.applyA(a1)
	a3 := k.applyA(a2)
	e := math.Exp(k.EtaI * s)
	var y [4]float64
	for i := range y {
		y[i] = e * (c0*x[i] + c1*a1[i] + c2*a2[i] + c3*a3[i])
	}
	return y
}

// applyA returns (K - EtaI) x.
func (k Propagation) applyA(x [4]float64) [4]float64 {
	return [4]float64{
		k.EtaQ*x[1] + k.EtaU*x[2] + k.EtaV*x[3],
		k.EtaQ*x[0] - k.RhoV*x[2] + k.RhoU*x[3],
		k.EtaU*x[0] + k.RhoV*x[1] - k.RhoQ*x[3],
		k.EtaV*x[0] - k.RhoU*x[1] + k.RhoQ*x[2],
	}
}

// entireCS returns C(z) = cosh(sqrt z) and S(z) = sinh(sqrt z)/sqrt z,
// continued to z < 0 as cos(sqrt -z) and sin(sqrt -z)/sqrt -z.
func entireCS(z float64) (c, s float64) {
	switch {
	case math.Abs(z) < 1e-2:
		s = 1 + z*(1.0/6+z*(1.0/120+z*(1.0/5040+z/362880)))
		c = 1 + z*(1.0/2+z*(1.0/24+z*(1.0/720+z/40320)))
	case z > 0:
		r := math.Sqrt(z)
		c, s = math.Cosh(r), math.Sinh(r)/r
	default:
		r := math.Sqrt(-z)
		c, s = math.Cos(r), math.Sin(r)/r
	}
	return
}

// dividedCS returns the divided differences (C(x)-C(y))/(x-y) and
// (S(x)-S(y))/(x-y) for x >= 0 >= y. Close arguments (both small) use the
// power series: C = sum z^n/(2n)!, S = sum z^n/(2n+1)!, and
// (x^n - y^n)/(x - y) = h_{n-1}(x, y), the complete homogeneous polynomial.
func dividedCS(x, y float64) (dc, ds float64) {
	if x-y >= 0.1 {
		cx, sx := entireCS(x)
		cy, sy := entireCS(y)
		return (cx - cy) / (x - y), (sx - sy) / (x - y)
	}
	// |x|, |y| < 0.1: 12 terms leave a truncation below 1e-30.
	h := 1.0  // h_0
	yp := 1.0 // y^0
	fc := 2.0 // (2n)! for n = 1
	fs := 6.0 // (2n+1)! for n = 1
	for n := 1; n <= 12; n++ {
		dc += h / fc
		ds += h / fs
		yp *= y
		h = x*h + yp // h_n = x h_{n-1} + y^n
		fc *= float64((2*n + 1) * (2*n + 2))
		fs *= float64((2*n + 2) * (2*n + 3))
	}
	return
}
