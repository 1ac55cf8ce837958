package levels

import (
	"math"
	"math/big"
)

// Wigner symbols from the Racah formulae (Edmonds 1957, Angular Momentum in
// Quantum Mechanics, eqs. 3.7.3 and 6.3.7). The *Twice variants take every
// argument as twice its value, so half-integers are exact integers; the
// float64 variants round each argument to the nearest multiple of 1/2.
//
// The Racah sums alternate in sign. They are first summed in float64 from a
// table of log-factorials, scaled by the largest term; when the sum has
// cancelled by more than cancelLimit relative to the sum of magnitudes (which
// happens for large J) the symbol is recomputed exactly in rational
// arithmetic, so the result is accurate to float64 precision for any J.

const (
	lnFactTableSize = 1024
	cancelLimit     = 1e2
)

// lnFactTable[n] = ln(n!). Read-only after package initialization.
var lnFactTable = func() []float64 {
	// Compensated (Kahan) sum of correctly rounded logarithms: ~1 ulp,
	// several times better than math.Lgamma at large n.
	t := make([]float64, lnFactTableSize)
	sum, comp := 0.0, 0.0
	for n := 2; n < lnFactTableSize; n++ {
		y := math.Log(float64(n)) - comp
		s := sum + y
		comp = (s - sum) - y
		sum = s
		t[n] = sum
	}
	return t
}()

func lnFact(n int) float64 {
	if n < lnFactTableSize {
		return lnFactTable[n]
	}
	v, _ := math.Lgamma(float64(n + 1))
	return v
}

func twice(x float64) int { return int(math.Round(2 * x)) }

// Wigner3j returns the 3j symbol (j1 j2 j3; m1 m2 m3).
func Wigner3j(j1, j2, j3, m1, m2, m3 float64) float64 {
	return Wigner3jTwice(twice(j1), twice(j2), twice(j3), twice(m1), twice(m2), twice(m3))
}

// Wigner6j returns the 6j symbol {j1 j2 j3; j4 j5 j6}.
func Wigner6j(j1, j2, j3, j4, j5, j6 float64) float64 {
	return Wigner6jTwice(twice(j1), twice(j2), twice(j3), twice(j4), twice(j5), twice(j6))
}

// triangle reports whether twice-values a, b, c satisfy the triangle rule
// with an integer sum.
func triangle(a, b, c int) bool {
	return a >= 0 && b >= 0 && c >= 0 && c >= abs(a-b) && c <= a+b && (a+b+c)%2 == 0
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}

func parity(n int) float64 {
	if n%2 != 0 {
		return -1
	}
	return 1
}

// Wigner3jTwice returns (j1 j2 j3; m1 m2 m3) with every argument given as
// twice its value (tj1 = 2*j1, ...).
func Wigner3jTwice(tj1, tj2, tj3, tm1, tm2, tm3 int) float64 {
	if tm1+tm2+tm3 != 0 || !triangle(tj1, tj2, tj3) {
		return 0
	}
	if abs(tm1) > tj1 || abs(tm2) > tj2 || abs(tm3) > tj3 ||
		(tj1+tm1)%2 != 0 || (tj2+tm2)%2 != 0 || (tj3+tm3)%2 != 0 {
		return 0
	}
	// Integer quantities of the Racah formula.
	a1 := (tj1 + tj2 - tj3) / 2 // j1+j2-j3
	a2 := (tj1 - tj2 + tj3) / 2
	a3 := (-tj1 + tj2 + tj3) / 2
	s := (tj1 + tj2 + tj3) / 2
	p1, q1 := (tj1+tm1)/2, (tj1-tm1)/2
	p2, q2 := (tj2+tm2)/2, (tj2-tm2)/2
	p3, q3 := (tj3+tm3)/2, (tj3-tm3)/2
	b1 := (tj3 - tj2 + tm1) / 2 // j3-j2+m1
	b2 := (tj3 - tj1 - tm2) / 2 // j3-j1-m2
	kmin := max(0, -b1, -b2)
	kmax := min(a1, q1, p2)
	if kmin > kmax {
		return 0
	}
	sign := parity((tj1 - tj2 - tm3) / 2)
	lnPref := 0.5 * (lnFact(a1) + lnFact(a2) + lnFact(a3) - lnFact(s+1) +
		lnFact(p1) + lnFact(q1) + lnFact(p2) + lnFact(q2) + lnFact(p3) + lnFact(q3))
	den := func(k int) [6]int { return [6]int{k, b1 + k, b2 + k, a1 - k, q1 - k, p2 - k} }

	// Float path.
	var lt [64]float64
	terms := lt[:0]
	if kmax-kmin+1 > len(lt) {
		terms = make([]float64, 0, kmax-kmin+1)
	}
	lmax := math.Inf(-1)
	for k := kmin; k <= kmax; k++ {
		d := den(k)
		l := -(lnFact(d[0]) + lnFact(d[1]) + lnFact(d[2]) + lnFact(d[3]) + lnFact(d[4]) + lnFact(d[5]))
		terms = append(terms, l)
		lmax = math.Max(lmax, l)
	}
	sum, mag := 0.0, 0.0
	for i, l := range terms {
		t := math.Exp(l - lmax)
		mag += t
		if (kmin+i)%2 != 0 {
			t = -t
		}
		sum += t
	}
	if math.Abs(sum)*cancelLimit >= mag {
		return sign * sum * math.Exp(lnPref+lmax)
	}

	// Exact path: value^2 = pref^2 * sum^2 with both rational.
	pref2 := new(big.Rat).SetFrac(
		prodFact(a1, a2, a3, p1, q1, p2, q2, p3, q3),
		fact(s+1))
	rs := new(big.Rat)
	for k := kmin; k <= kmax; k++ {
		d := den(k)
		t := new(big.Rat).SetFrac(big.NewInt(1), prodFact(d[:]...))
		if k%2 != 0 {
			t.Neg(t)
		}
		rs.Add(rs, t)
	}
	return sign * exactSqrtTimes(pref2, rs)
}

// Wigner6jTwice returns {j1 j2 j3; j4 j5 j6} with every argument given as
// twice its value.
func Wigner6jTwice(tj1, tj2, tj3, tj4, tj5, tj6 int) float64 {
	if !triangle(tj1, tj2, tj3) || !triangle(tj1, tj5, tj6) ||
		!triangle(tj4, tj2, tj6) || !triangle(tj4, tj5, tj3) {
		return 0
	}
	type tri3 struct{ x, y, z, s int } // (a+b-c), (a-b+c), (-a+b+c), (a+b+c)
	mk := func(a, b, c int) tri3 {
		return tri3{(a + b - c) / 2, (a - b + c) / 2, (-a + b + c) / 2, (a + b + c) / 2}
	}
	ts := [4]tri3{mk(tj1, tj2, tj3), mk(tj1, tj5, tj6), mk(tj4, tj2, tj6), mk(tj4, tj5, tj3)}
	lnPref := 0.0
	for _, t := range ts {
		lnPref += 0.5 * (lnFact(t.x) + lnFact(t.y) + lnFact(t.z) - lnFact(t.s+1))
	}
	u1 := (tj1 + tj2 + tj4 + tj5) / 2
	u2 := (tj2 + tj3 + tj5 + tj6) / 2
	u3 := (tj3 + tj1 + tj6 + tj4) / 2
	tmin := max(ts[0].s, ts[1].s, ts[2].s, ts[3].s)
	tmax := min(u1, u2, u3)
	if tmin > tmax {
		return 0
	}
	den := func(t int) [7]int {
		return [7]int{t - ts[0].s, t - ts[1].s, t - ts[2].s, t - ts[3].s, u1 - t, u2 - t, u3 - t}
	}
	var lt [64]float64
	terms := lt[:0]
	if tmax-tmin+1 > len(lt) {
		terms = make([]float64, 0, tmax-tmin+1)
	}
	lmax := math.Inf(-1)
	for t := tmin; t <= tmax; t++ {
		l := lnFact(t + 1)
		for _, d := range den(t) {
			l -= lnFact(d)
		}
		terms = append(terms, l)
		lmax = math.Max(lmax, l)
	}
	sum, mag := 0.0, 0.0
	for i, l := range terms {
		v := math.Exp(l - lmax)
		mag += v
		if (tmin+i)%2 != 0 {
			v = -v
		}
		sum += v
	}
	if math.Abs(sum)*cancelLimit >= mag {
		return sum * math.Exp(lnPref+lmax)
	}
	pref2 := new(big.Rat).SetInt64(1)
	for _, t := range ts {
		pref2.Mul(pref2, new(big.Rat).SetFrac(prodFact(t.x, t.y, t.z), fact(t.s+1)))
	}
	rs := new(big.Rat)
	for t := tmin; t <= tmax; t++ {
		d := den(t)
		v := new(big.Rat).SetFrac(fact(t+1), prodFact(d[:]...))
		if t%2 != 0 {
			v.Neg(v)
		}
		rs.Add(rs, v)
	}
	return exactSqrtTimes(pref2, rs)
}

func fact(n int) *big.Int { return new(big.Int).MulRange(1, int64(max(n, 1))) }

func prodFact(ns ...int) *big.Int {
	p := big.NewInt(1)
	for _, n := range ns {
		p.Mul(p, fact(n))
	}
	return p
}

// exactSqrtTimes returns sqrt(p2) * s for rational p2 >= 0 and s, rounded to float64.
func exactSqrtTimes(p2, s *big.Rat) float64 {
	if s.Sign() == 0 {
		return 0
	}
	v2 := new(big.Rat).Mul(p2, new(big.Rat).Mul(s, s))
	f := new(big.Float).SetPrec(256).SetRat(v2)
	f.Sqrt(f)
	r, _ := f.Float64()
	if s.Sign() < 0 {
		r = -r
	}
	return r
}
