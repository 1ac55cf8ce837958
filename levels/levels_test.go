package levels

import (
	"math"
	"sort"
	"strings"
	"testing"
)

// casimir is the quadrupole energy of Townes & Schawlow 1955 (Microwave
// Spectroscopy, ch. 6): eQq [3/4 C(C+1) - I(I+1)J(J+1)] / [2I(2I-1)J(2J-1)].
func casimir(eqq, J, I, F float64) float64 {
	C := F*(F+1) - I*(I+1) - J*(J+1)
	return eqq * (0.75*C*(C+1) - I*(I+1)*J*(J+1)) / (2 * I * (2*I - 1) * J * (2*J - 1))
}

// zeroFieldCheck compares every zero-field state with want(F) and checks the
// degeneracy 2F+1 of each F (tolerance 1e-9 of the largest energy: rounding
// of a dense eigen-solver).
func zeroFieldCheck(t *testing.T, name string, l Level, want func(F float64) float64) {
	t.Helper()
	st, err := l.Solve(0)
	if err != nil {
		t.Fatal(err)
	}
	scale := 0.0
	count := map[float64]int{}
	for _, s := range st.States {
		scale = math.Max(scale, math.Abs(s.Energy))
		count[s.F]++
	}
	for _, s := range st.States {
		if w := want(s.F); math.Abs(s.Energy-w) > 1e-9*scale {
			t.Errorf("%s: F=%g M=%g: E = %.9g Hz, want %.9g", name, s.F, s.M, s.Energy, w)
		}
	}
	for F, n := range count {
		if n != int(2*F+1) {
			t.Errorf("%s: F=%g has %d states, want %d", name, F, n, int(2*F+1))
		}
	}
}

func TestCasimir(t *testing.T) {
	// Townes & Schawlow 1955: single-spin quadrupole, J=2 I=1 and J=3 I=3/2.
	for _, c := range []struct{ J, I, eqq float64 }{{2, 1, 1.3e6}, {3, 1.5, -2.7e5}, {1, 1, 0.942e6}, {6, 2.5, 4e4}} {
		l := Level{J: c.J, Spins: []Spin{{Name: "X", I: c.I}},
			Couplings: []Coupling{{Kind: Quadrupole, Spins: []int{0}, Value: c.eqq}}}
		zeroFieldCheck(t, "casimir", l, func(F float64) float64 { return casimir(c.eqq, c.J, c.I, F) })
	}
}

func TestSpinRotation(t *testing.T) {
	// E = (c/2)[F(F+1) - I(I+1) - J(J+1)], eigenvalue of c I.J (standard).
	for _, c := range []struct{ J, I, c float64 }{{3, 1.5, 25e3}, {0.5, 0.5, 1e6}, {6, 1, -30e3}} {
		l := Level{J: c.J, Spins: []Spin{{Name: "X", I: c.I}},
			Couplings: []Coupling{{Kind: SpinRotation, Spins: []int{0}, Value: c.c}}}
		zeroFieldCheck(t, "spin-rotation", l, func(F float64) float64 {
			return c.c / 2 * (F*(F+1) - c.I*(c.I+1) - c.J*(c.J+1))
		})
	}
}

// Two spins with equal spin-rotation constants: c (I1 + I2).J = c T.J with
// T the total spin, so E = (c/2)[F(F+1) - T(T+1) - J(J+1)] for T = 0, 1
// (standard angular-momentum algebra); checks the multi-spin basis.
func TestEqualSpinRotationTwoSpins(t *testing.T) {
	c := 40e3
	l := Level{J: 2, Spins: []Spin{{Name: "a", I: 0.5}, {Name: "b", I: 0.5}},
		Couplings: []Coupling{
			{Kind: SpinRotation, Spins: []int{0}, Value: c},
			{Kind: SpinRotation, Spins: []int{1}, Value: c},
		}}
	st, err := l.Solve(0)
	if err != nil {
		t.Fatal(err)
	}
	var want []float64
	for _, T := range []float64{0, 1} {
		for F := math.Abs(2 - T); F <= 2+T; F++ {
			for k := 0; k < int(2*F+1); k++ {
				want = append(want, c/2*(F*(F+1)-T*(T+1)-6))
			}
		}
	}
	var got []float64
	for _, s := range st.States {
		got = append(got, s.Energy)
	}
	sort.Float64s(want)
	sort.Float64s(got)
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-9*c {
			t.Fatalf("state %d: %g want %g", i, got[i], want[i])
		}
	}
}

// breitRabi returns the energies of H = A I.J + s mu B (gJ Jz + gI Iz) for
// J = 1/2 (Breit & Rabi 1931, Phys. Rev. 38, 2082), per twice M, sorted.
func breitRabi(A, I, gJ, gI, smu, B float64) map[int][]float64 {
	dE := A * (I + 0.5)
	x := (gJ - gI) * smu * B / dE
	out := map[int][]float64{}
	for tM := -int(2*I + 1); tM <= int(2*I+1); tM += 2 {
		M := float64(tM) / 2
		if math.Abs(M) == I+0.5 {
			// Stretched state |mJ = ±1/2, mI = ±I>: exact.
			sg := math.Copysign(1, M)
			out[tM] = []float64{A*I/2 + sg*smu*B*(gJ/2+gI*I)}
			continue
		}
		r := math.Sqrt(1 + 4*M*x/(2*I+1) + x*x)
		base := -dE/(2*(2*I+1)) + gI*smu*M*B
		out[tM] = []float64{base - dE/2*r, base + dE/2*r}
	}
	return out
}

func TestBreitRabi(t *testing.T) {
	// Breit & Rabi 1931: J = 1/2 with one spin I = 3/2 coupled by A I.J, at
	// fields from zero through the decoupling region into Paschen-Back.
	// Tolerance 1e-9 of the largest energy (eigen-solver rounding).
	for _, c := range []struct {
		name   string
		mag    Magneton
		A, gJ  float64
		gI     float64
		fields []float64
	}{
		{"nuclear", Nuclear, 50e3, 0.8, 2.1, []float64{0, 1, 30, 100, 300, 1e3, 1e4, 1e5}},
		{"bohr", Bohr, 100e6, 2.0023, -0.0003, []float64{0, 1, 10, 50, 100, 500, 5e3}},
	} {
		l := Level{J: 0.5, G: c.gJ, Magneton: c.mag, Spins: []Spin{{Name: "X", I: 1.5, G: c.gI}},
			Couplings: []Coupling{{Kind: SpinRotation, Spins: []int{0}, Value: c.A}}}
		s, err := NewSolver(l)
		if err != nil {
			t.Fatal(err)
		}
		smu := c.mag.zeemanSign() * c.mag.HzPerGauss()
		var st Structure
		for _, B := range c.fields {
			if err := s.Solve(B, &st); err != nil {
				t.Fatal(err)
			}
			want := breitRabi(c.A, 1.5, c.gJ, c.gI, smu, B)
			got := map[int][]float64{}
			scale := 0.0
			for _, x := range st.States {
				tM := int(math.Round(2 * x.M))
				got[tM] = append(got[tM], x.Energy)
				scale = math.Max(scale, math.Abs(x.Energy))
			}
			for tM, w := range want {
				g := got[tM]
				sort.Float64s(g)
				if len(g) != len(w) {
					t.Fatalf("%s B=%g 2M=%d: %d states, want %d", c.name, B, tM, len(g), len(w))
				}
				for i := range w {
					if math.Abs(g[i]-w[i]) > 1e-9*scale {
						t.Errorf("%s B=%g G 2M=%d: E=%.10g want %.10g", c.name, B, tM, g[i], w[i])
					}
				}
			}
		}
	}
}

func TestLandeWeakField(t *testing.T) {
	// Weak-field limit: dE/dB = s mu g_F M with the Lande projection formula
	// (standard). Checked both by the Hellmann-Feynman slope at B = 0 (exact:
	// tolerance 1e-9) and by a finite difference at 1e-4 G, where the
	// second-order shift (mu B)^2/dE_hfs ~ 1e-7 of the linear one.
	J, I := 3.0, 1.5
	gJ, gI := 0.31, 1.7
	l := Level{J: J, G: gJ, Spins: []Spin{{Name: "X", I: I, G: gI}},
		Couplings: []Coupling{
			{Kind: SpinRotation, Spins: []int{0}, Value: 30e3},
			{Kind: Quadrupole, Spins: []int{0}, Value: -80e3},
		}}
	s, err := NewSolver(l)
	if err != nil {
		t.Fatal(err)
	}
	smu := -Nuclear.HzPerGauss()
	var z, w Structure
	s.Solve(0, &z)
	const B = 1e-4
	s.Solve(B, &w)
	for i := range z.States {
		a := &z.States[i]
		want := smu * LandeG(J, I, a.F, gJ, gI) * a.M
		if got := s.FirstOrder(a); math.Abs(got-want) > 1e-9*math.Abs(smu) {
			t.Errorf("F=%g M=%g: Hellmann-Feynman slope %g, Lande %g Hz/G", a.F, a.M, got, want)
		}
		b := &w.States[i]
		if b.F != a.F || b.M != a.M {
			t.Fatalf("label changed at %g G: F %g->%g", B, a.F, b.F)
		}
		if got := (b.Energy - a.Energy) / B; math.Abs(got-want) > 1e-5*math.Abs(smu) {
			t.Errorf("F=%g M=%g: finite-difference slope %g, Lande %g Hz/G", a.F, a.M, got, want)
		}
	}
}

func TestPaschenBack(t *testing.T) {
	// Strong field: slopes s mu (gJ mJ + gI mI) (standard Paschen-Back
	// limit). At 1e8 G the nuclear Zeeman energy is 7.6 GHz against 100 kHz
	// of hyperfine: residual slope deviations ~ (A/mu B)^2, tolerance 1e-6.
	l := Level{J: 2, G: 0.4, Spins: []Spin{{Name: "a", I: 1, G: 1.3}, {Name: "b", I: 0.5, G: -2.2}},
		Couplings: []Coupling{
			{Kind: SpinRotation, Spins: []int{0}, Value: 40e3},
			{Kind: SpinSpin, Spins: []int{0, 1}, Value: 10e3},
			{Kind: Quadrupole, Spins: []int{0}, Value: 90e3},
		}}
	s, _ := NewSolver(l)
	var a, b Structure
	B1, B2 := 1e8, 1.01e8
	s.Solve(B1, &a)
	s.Solve(B2, &b)
	smu := -Nuclear.HzPerGauss()
	byM := map[float64][2][]float64{}
	for i := range a.States {
		m := a.States[i].M
		e := byM[m]
		e[0] = append(e[0], (b.States[i].Energy-a.States[i].Energy)/(B2-B1))
		byM[m] = e
	}
	for _, bs := range s.Basis() {
		m := bs.MJ + bs.MI[0] + bs.MI[1]
		e := byM[m]
		e[1] = append(e[1], smu*(0.4*bs.MJ+1.3*bs.MI[0]-2.2*bs.MI[1]))
		byM[m] = e
	}
	for m, e := range byM {
		sort.Float64s(e[0])
		sort.Float64s(e[1])
		for i := range e[0] {
			if math.Abs(e[0][i]-e[1][i]) > 1e-6*math.Abs(smu) {
				t.Errorf("M=%g: slope %g want %g", m, e[0][i], e[1][i])
			}
		}
	}
}

func TestZeemanSign(t *testing.T) {
	// Fixed convention (doc.go): nuclear magneton, g_J > 0: m_J = +J lowest;
	// Bohr magneton (electron sign), g_J > 0: m_J = -J lowest.
	for _, c := range []struct {
		mag  Magneton
		want float64
	}{{Nuclear, 2}, {Bohr, -2}} {
		st, err := Level{J: 2, G: 0.7, Magneton: c.mag}.Solve(10)
		if err != nil {
			t.Fatal(err)
		}
		low := st.States[0]
		for _, s := range st.States {
			if s.Energy < low.Energy {
				low = s
			}
		}
		if low.M != c.want || math.Abs(low.MJ2-4) > 1e-12 {
			t.Errorf("%v: lowest state M=%g, want %g", c.mag, low.M, c.want)
		}
	}
}

func synthetic() *Species {
	sp := &Species{Name: "synthetic test", Frequency: 20e9, EinsteinA: 1e-8, Mass: 30}
	spins := []Spin{{Name: "A", I: 1.5, G: 1.2}, {Name: "B", I: 0.5, G: 5}}
	sp.Upper = Level{J: 6, G: 0.5, Spins: spins, Couplings: []Coupling{
		{Kind: SpinRotation, Spins: []int{0}, Value: 30e3},
		{Kind: SpinRotation, Spins: []int{1}, Value: -15e3},
		{Kind: SpinSpin, Spins: []int{0, 1}, Value: 8e3},
		{Kind: SpinSpinTensor, Spins: []int{0, 1}, Value: 12e3},
		{Kind: Quadrupole, Spins: []int{0}, Value: 60e3},
	}}
	sp.Lower = Level{J: 5, G: 0.45, Spins: spins, Couplings: []Coupling{
		{Kind: SpinRotation, Spins: []int{0}, Value: 26e3},
		{Kind: SpinRotation, Spins: []int{1}, Value: -15e3},
		{Kind: Quadrupole, Spins: []int{0}, Value: -45e3},
	}}
	return sp
}

func TestSumRule(t *testing.T) {
	// sum_b S_ab = 1 for every upper eigenstate at any field and mixing
	// (physics.md section 2; follows from 3j orthogonality, Edmonds eq. 3.7.8).
	// Tolerance: dropped components below 1e-12 each.
	sp := synthetic()
	ts, err := NewTransitionSolver(sp)
	if err != nil {
		t.Fatal(err)
	}
	var tr Transition
	for _, B := range []float64{0, 0.01, 1, 30, 1e3, 1e6} {
		if err := ts.Solve(B, &tr); err != nil {
			t.Fatal(err)
		}
		sum := make([]float64, len(tr.Upper.States))
		for _, ln := range tr.Lines {
			u, l := tr.Upper.States[ln.Upper], tr.Lower.States[ln.Lower]
			if float64(ln.Q) != u.M-l.M || ln.Q < -1 || ln.Q > 1 {
				t.Fatalf("B=%g: q=%d but M_u-M_l=%g", B, ln.Q, u.M-l.M)
			}
			if math.Abs(ln.Offset-(u.Energy-l.Energy)) > 1e-6 {
				t.Fatalf("offset mismatch")
			}
			sum[ln.Upper] += ln.Strength
		}
		for a, s := range sum {
			if math.Abs(s-1) > 1e-9 {
				t.Errorf("B=%g G: upper state %d: sum S = %.12g", B, a, s)
			}
		}
	}
}

func TestLabelsAndMultiplets(t *testing.T) {
	// Zero-field multiplets of J=6 with spins 3/2, 1/2: F1 in 9/2..15/2 and
	// F = F1 ± 1/2 (angular-momentum addition), each with 2F+1 states; the
	// labels survive a weak field unchanged and every state keeps its block.
	sp := synthetic()
	s, err := NewSolver(sp.Upper)
	if err != nil {
		t.Fatal(err)
	}
	want := map[[2]float64]bool{}
	for F1 := 4.5; F1 <= 7.5; F1++ {
		want[[2]float64{F1 - 0.5, F1}] = true
		want[[2]float64{F1 + 0.5, F1}] = true
	}
	if len(s.Multiplets()) != len(want) {
		t.Fatalf("%d multiplets, want %d", len(s.Multiplets()), len(want))
	}
	for _, m := range s.Multiplets() {
		if !want[[2]float64{m.F, m.F1}] || m.States != int(2*m.F+1) {
			t.Errorf("unexpected multiplet %+v", m)
		}
	}
	var z, w Structure
	s.Solve(0, &z)
	s.Solve(1e-3, &w)
	for i := range z.States {
		if z.States[i].Multiplet != w.States[i].Multiplet || z.States[i].M != w.States[i].M {
			t.Errorf("state %d: label changed from %d to %d at 1 mG", i, z.States[i].Multiplet, w.States[i].Multiplet)
		}
		if math.Abs(w.States[i].Energy-z.States[i].Energy) > 10 {
			t.Errorf("state %d moved %g Hz at 1 mG", i, w.States[i].Energy-z.States[i].Energy)
		}
	}
}

func hcnLike() *Species {
	// eQq_J = -eQq/5 with eQq = -4.71 MHz (physics.md; value from memory).
	spins := []Spin{{Name: "N", I: 1, G: 0.40376}}
	return &Species{Name: "HCN-like", Frequency: 88.6316e9, EinsteinA: 2.4e-5, Mass: 27,
		Upper: Level{J: 1, G: -0.098, Spins: spins, Couplings: []Coupling{{Kind: Quadrupole, Spins: []int{0}, Value: 0.942e6}}},
		Lower: Level{J: 0, G: -0.098, Spins: spins}}
}

func TestHCNTriplet(t *testing.T) {
	// J=1-0 with one I=1: strengths F=0-1 : 1-1 : 2-1 = 1:3:5 (common
	// practice; the HCN J=1-0 ratio), equal to (2Fu+1)(2Fl+1){Ju Fu I; Fl Jl 1}^2
	// / (2I+1) (physics.md section 2). Offsets from eQq = -4.71 MHz (value from
	// memory): F=1 1.413 MHz below F=2, F=0 2.120 MHz above it.
	cs, err := Components(hcnLike())
	if err != nil {
		t.Fatal(err)
	}
	if len(cs) != 3 {
		t.Fatalf("%d components, want 3", len(cs))
	}
	want := map[float64]float64{0: 1.0 / 9, 1: 3.0 / 9, 2: 5.0 / 9}
	off := map[float64]float64{}
	for _, c := range cs {
		if math.Abs(c.Strength-want[c.Fu]) > 1e-12 {
			t.Errorf("F=%g-%g strength %g want %g", c.Fu, c.Fl, c.Strength, want[c.Fu])
		}
		sixj := (2*c.Fu + 1) * (2*c.Fl + 1) * math.Pow(Wigner6j(1, c.Fu, 1, c.Fl, 0, 1), 2) / 3
		if math.Abs(c.Strength-sixj) > 1e-12 {
			t.Errorf("F=%g-%g strength %g, 6j formula %g", c.Fu, c.Fl, c.Strength, sixj)
		}
		off[c.Fu] = c.Offset
	}
	if d := off[2] - off[1]; math.Abs(d-1.413e6) > 1e3 {
		t.Errorf("F=2 - F=1 = %g Hz, want 1.413 MHz", d)
	}
	if d := off[0] - off[2]; math.Abs(d-2.1195e6) > 1e3 {
		t.Errorf("F=0 - F=2 = %g Hz, want 2.1195 MHz", d)
	}
}

func TestSixjStrengthsOneSpin(t *testing.T) {
	// Zero-field strengths (2Fu+1)(2Fl+1){Ju Fu I; Fl Jl 1}^2/(2I+1)
	// (physics.md section 2; Edmonds 1957 eq. 7.1.7) for J=6-5, I=1 with
	// spin-rotation and quadrupole in both levels.
	spins := []Spin{{Name: "H", I: 1, G: 5.5857}}
	sp := &Species{Name: "J6-5 I1", Frequency: 22e9,
		Upper: Level{J: 6, G: 0.6, Spins: spins, Couplings: []Coupling{{Kind: SpinRotation, Spins: []int{0}, Value: -30e3}, {Kind: Quadrupole, Spins: []int{0}, Value: 20e3}}},
		Lower: Level{J: 5, G: 0.5, Spins: spins, Couplings: []Coupling{{Kind: SpinRotation, Spins: []int{0}, Value: -25e3}}}}
	cs, err := Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	total := 0.0
	for _, c := range cs {
		want := (2*c.Fu + 1) * (2*c.Fl + 1) * math.Pow(Wigner6j(6, c.Fu, 1, c.Fl, 5, 1), 2) / 3
		if math.Abs(c.Strength-want) > 1e-12 {
			t.Errorf("F=%g-%g: %g, 6j %g", c.Fu, c.Fl, c.Strength, want)
		}
		total += c.Strength
	}
	if math.Abs(total-1) > 1e-12 || len(cs) != 6 {
		t.Errorf("%d components summing to %g, want 6 (7-6, 6-6, 6-5, 5-6, 5-5, 5-4) summing to 1", len(cs), total)
	}
}

func TestComponentSplitting(t *testing.T) {
	// Effective Lande factor of a line, sigma centroid shift:
	// gbar = (g_u + g_l)/2 + (g_u - g_l)/4 [F_u(F_u+1) - F_l(F_l+1)]
	// (Landi Degl'Innocenti & Landolfi 2004, Polarization in Spectral Lines,
	// eq. 3.44), with g_F from the Lande formula. Split = s mu gbar.
	sp := hcnLike()
	cs, err := Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	smu := -Nuclear.HzPerGauss()
	for _, c := range cs {
		gu := LandeG(1, 1, c.Fu, -0.098, 0.40376)
		gl := LandeG(0, 1, c.Fl, -0.098, 0.40376)
		if c.Fu == 0 {
			gu = 0
		}
		gbar := (gu+gl)/2 + (gu-gl)/4*(c.Fu*(c.Fu+1)-c.Fl*(c.Fl+1))
		if math.Abs(c.SplitHzPerG-smu*gbar) > 1e-9 {
			t.Errorf("F=%g-%g: split %g Hz/G, want %g", c.Fu, c.Fl, c.SplitHzPerG, smu*gbar)
		}
		if math.Abs(c.SplitKmsPerG-c.SplitHzPerG*SpeedOfLight/1e3/sp.Frequency) > 1e-15 {
			t.Errorf("km/s conversion")
		}
	}
}

func TestLinearUpTo(t *testing.T) {
	// Self-consistency of the scan: at half LinearUpTo the centroid splitting
	// is linear to better than 1 %, at twice it is not.
	sp := synthetic()
	cs, err := Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	ts, _ := NewTransitionSolver(sp)
	var best Component
	for _, c := range cs {
		if c.Strength > best.Strength {
			best = c
		}
	}
	if !(best.LinearUpTo > 0) || math.IsInf(best.LinearUpTo, 0) {
		t.Fatalf("LinearUpTo = %g", best.LinearUpTo)
	}
	dev := func(B float64) float64 {
		var tr Transition
		ts.Solve(B, &tr)
		var s, sum [3]float64
		for _, ln := range tr.Lines {
			u, l := tr.Upper.States[ln.Upper], tr.Lower.States[ln.Lower]
			if u.F != best.Fu || u.F1 != best.F1u || l.F != best.Fl || l.F1 != best.F1l {
				continue
			}
			mu, ml := ts.Upper().Multiplets()[u.Multiplet], ts.Lower().Multiplets()[l.Multiplet]
			s[ln.Q+1] += ln.Strength
			sum[ln.Q+1] += ln.Strength * (ln.Offset - (mu.Energy - ml.Energy))
		}
		c0 := sum[1] / s[1]
		d := 0.0
		for _, q := range []int{-1, 1} {
			d = math.Max(d, math.Abs(sum[q+1]/s[q+1]-c0-float64(q)*best.SplitHzPerG*B)/math.Abs(best.SplitHzPerG*B))
		}
		return d
	}
	if d := dev(best.LinearUpTo / 2); d >= 0.01 {
		t.Errorf("deviation %g at LinearUpTo/2 = %g G", d, best.LinearUpTo/2)
	}
	if d := dev(best.LinearUpTo * 2); d <= 0.01 {
		t.Errorf("deviation %g at 2 LinearUpTo = %g G", d, best.LinearUpTo*2)
	}
	// A spin-free line has no hyperfine structure to decouple.
	sio := &Species{Name: "J1-0", Frequency: 43e9, Upper: Level{J: 1, G: -0.155}, Lower: Level{J: 0, G: -0.155}}
	cs, err = Components(sio)
	if err != nil || len(cs) != 1 || !math.IsInf(cs[0].LinearUpTo, 1) || math.Abs(cs[0].SplitHzPerG-(-Nuclear.HzPerGauss()*-0.155)) > 1e-12 {
		t.Errorf("spin-free J=1-0: %+v %v", cs, err)
	}
}

func TestValidation(t *testing.T) {
	sp1 := []Spin{{Name: "a", I: 0.5}}
	for _, c := range []struct {
		name string
		l    Level
		msg  string
	}{
		{"negative J", Level{J: -1}, "non-negative multiple of 1/2"},
		{"J not half-integer", Level{J: 1.3}, "non-negative multiple of 1/2"},
		{"spin not half-integer", Level{J: 1, Spins: []Spin{{Name: "x", I: 0.7}}}, "multiple of 1/2"},
		{"quadrupole I<1", Level{J: 2, Spins: sp1, Couplings: []Coupling{{Kind: Quadrupole, Spins: []int{0}, Value: 1}}}, "needs I >= 1"},
		{"quadrupole J=1/2", Level{J: 0.5, Spins: []Spin{{Name: "x", I: 1}}, Couplings: []Coupling{{Kind: Quadrupole, Spins: []int{0}, Value: 1}}}, "J = 0 and J = 1/2"},
		{"quadrupole J=0", Level{J: 0, Spins: []Spin{{Name: "x", I: 1}}, Couplings: []Coupling{{Kind: Quadrupole, Spins: []int{0}, Value: 1}}}, "needs J >= 1"},
		{"bad spin index", Level{J: 1, Spins: sp1, Couplings: []Coupling{{Kind: SpinRotation, Spins: []int{3}, Value: 1}}}, "out of range"},
		{"spin count", Level{J: 1, Spins: sp1, Couplings: []Coupling{{Kind: SpinSpin, Spins: []int{0}, Value: 1}}}, "needs 2 spin"},
		{"self coupling", Level{J: 1, Spins: append(sp1, sp1...), Couplings: []Coupling{{Kind: SpinSpin, Spins: []int{1, 1}, Value: 1}}}, "with itself"},
		{"unknown kind", Level{J: 1, Spins: sp1, Couplings: []Coupling{{Kind: 9, Spins: []int{0}, Value: 1}}}, "unknown kind"},
	} {
		_, err := NewSolver(c.l)
		if err == nil || !strings.Contains(err.Error(), c.msg) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.msg)
		}
	}
	for _, c := range []struct{ ju, jl float64 }{{3, 1}, {0, 0}, {1.5, 1}} {
		sp := &Species{Name: "x", Upper: Level{J: c.ju}, Lower: Level{J: c.jl}}
		if _, err := NewTransition(sp, 1); err == nil || !strings.Contains(err.Error(), "no electric-dipole transition") {
			t.Errorf("J %g-%g: %v", c.ju, c.jl, err)
		}
	}
	sp := &Species{Name: "x", Upper: Level{J: 1, Spins: sp1}, Lower: Level{J: 0}}
	if _, err := NewTransition(sp, 1); err == nil || !strings.Contains(err.Error(), "same spins") {
		t.Errorf("spin mismatch: %v", err)
	}
}

func TestTensorSpinSpinTwoHalfSpins(t *testing.T) {
	// For two spins 1/2, the Pauli identity (I.J)^2 = J^2/4 - (I.J)/2 turns
	// the tensor term into a quadrupole of the total spin T = 1 with
	// eQq = 2J d_T/(2J+3), and zero on T = 0. So the spectrum is the Casimir
	// formula (Townes & Schawlow 1955) for J, I = 1 plus 2J+1 states at zero.
	J, dT := 3.0, 50e3
	l := Level{J: J, Spins: []Spin{{Name: "a", I: 0.5}, {Name: "b", I: 0.5}},
		Couplings: []Coupling{{Kind: SpinSpinTensor, Spins: []int{0, 1}, Value: dT}}}
	st, err := l.Solve(0)
	if err != nil {
		t.Fatal(err)
	}
	eqq := 2 * J * dT / (2*J + 3)
	var want, got []float64
	for F := J - 1; F <= J+1; F++ {
		for k := 0; k < int(2*F+1); k++ {
			want = append(want, casimir(eqq, J, 1, F))
		}
	}
	for k := 0; k < int(2*J+1); k++ {
		want = append(want, 0)
	}
	for _, s := range st.States {
		got = append(got, s.Energy)
	}
	sort.Float64s(want)
	sort.Float64s(got)
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-9*dT {
			t.Fatalf("state %d: %g want %g", i, got[i], want[i])
		}
	}
}

// TestLabelsThroughDecoupling follows the HCN-like J=1 level (one I=1
// nucleus with a quadrupole) from zero field into the Paschen-Back regime
// on a fine geometric grid. Label carrying is a naming convention: the one
// held here is the adiabatic connection (common practice), under which a
// state keeps its zero-field name along the path it follows as B grows.
// Within one M block nothing but M is conserved, so levels do not cross
// (non-crossing rule, von Neumann & Wigner 1929) and the adiabatic name of
// the k-th lowest state of a block is that of the k-th lowest at B = 0.
// Checked at every field: (a) the (F, M) labels are the zero-field multiset,
// each used once; (b) between neighbouring fields each state keeps the label
// of the state at the previous field with which it overlaps most, and that
// overlap is unambiguous; the same labels follow from the energy order in
// each block; (c) at the strongest field every state is a product state
// (m_J, m_I) with slope s mu_N (g_J m_J + g_I m_I) (Paschen-Back), and no
// two states share a label.
func TestLabelsThroughDecoupling(t *testing.T) {
	l := hcnLike().Upper
	s, err := NewSolver(l)
	if err != nil {
		t.Fatal(err)
	}
	gJ, gI := l.G, l.Spins[0].G
	smu := -Nuclear.HzPerGauss()
	// Decoupling: |g_I| mu_N B equals eQq_J = 0.942 MHz near 3 kG. The grid
	// runs from 1e-3 G (Zeeman below 1e-6 of the hyperfine) to 1e8 G (hyperfine
	// 3e-5 of the Zeeman), 40 points per decade.
	fields := []float64{0}
	for k := 0; k <= 11*40; k++ {
		fields = append(fields, 1e-3*math.Pow(10, float64(k)/40))
	}
	type label struct{ F, M float64 }
	var zero, prev, cur Structure
	if err := s.Solve(0, &zero); err != nil {
		t.Fatal(err)
	}
	want := map[label]int{}
	for _, st := range zero.States {
		want[label{st.F, st.M}]++
	}
	for F := 0.0; F <= 2; F++ {
		for M := -F; M <= F; M++ {
			if want[label{F, M}] != 1 {
				t.Fatalf("zero field: label F=%g M=%g used %d times, want once", F, M, want[label{F, M}])
			}
		}
	}
	// rank[i] is the zero-field label of the state with the same energy
	// rank in the block of state i.
	block := func(st *Structure, i int) []int {
		var idx []int
		for j := range st.States {
			if st.States[j].M == st.States[i].M {
				idx = append(idx, j)
			}
		}
		sort.SliceStable(idx, func(a, b int) bool { return st.States[idx[a]].Energy < st.States[idx[b]].Energy })
		return idx
	}
	dot := func(a, b []float64) float64 {
		x := 0.0
		for i := range a {
			x += a[i] * b[i]
		}
		return x
	}
	prev = zero
	prev.States = append([]State(nil), zero.States...)
	for fi, B := range fields[1:] {
		if err := s.Solve(B, &cur); err != nil {
			t.Fatal(err)
		}
		// (a) every zero-field label once.
		got := map[label]int{}
		for _, st := range cur.States {
			got[label{st.F, st.M}]++
		}
		for lb, n := range want {
			if got[lb] != n {
				t.Errorf("B=%.4g G: label F=%g M=%g used %d times, want %d", B, lb.F, lb.M, got[lb], n)
			}
		}
		// (b) continuity by overlap with the previous field.
		for i, st := range cur.States {
			best, second, bj := 0.0, 0.0, -1
			for j, p := range prev.States {
				if p.M != st.M {
					continue
				}
				o := math.Abs(dot(st.Vector, p.Vector))
				if o > best {
					best, second, bj = o, best, j
				} else if o > second {
					second = o
				}
			}
			// On this grid (a factor 10^(1/40) = 1.06 per step) neighbouring
			// eigenvectors overlap by more than 0.9 and others by less than
			// 0.45, so the connection is unambiguous (checked, not assumed).
			if best < 0.9 || second > 0.45 {
				t.Fatalf("B=%.4g G, state %d: overlaps %.3f and %.3f with the previous field (%.4g G): grid too coarse to connect", B, i, best, second, fields[fi])
			}
			if p := prev.States[bj]; p.F != st.F || p.Multiplet != st.Multiplet {
				t.Errorf("B=%.4g G: state M=%g (E = %.6g MHz) is labelled F=%g, but at %.4g G its adiabatic predecessor (overlap %.4f) was F=%g",
					B, st.M, st.Energy/1e6, st.F, fields[fi], best, p.F)
			}
		}
		// (b') non-crossing: the k-th lowest of a block keeps the label of
		// the k-th lowest at zero field.
		for i := range cur.States {
			if i > 0 && cur.States[i-1].M == cur.States[i].M {
				continue // one pass per block (States are ordered by M)
			}
			bc, bz := block(&cur, i), block(&zero, i)
			for k := range bc {
				if c, z := cur.States[bc[k]], zero.States[bz[k]]; c.F != z.F {
					t.Errorf("B=%.4g G, M=%g: energy rank %d is labelled F=%g, the non-crossing rule gives F=%g", B, c.M, k, c.F, z.F)
				}
			}
		}
		prev.States, cur.States = cur.States, prev.States
		prev.Field = B
	}
	if t.Failed() {
		return
	}
	// (c) Paschen-Back at the end of the grid: each state is dominated by one
	// product state (weight > 1 - 1e-6: the mixing is (eQq_J/(g mu_N B))^2
	// ~ 1e-9), the slope matches, and labels map one-to-one to (m_J, m_I).
	hi := prev
	var hi2 Structure
	B2 := fields[len(fields)-1] * 1.01
	if err := s.Solve(B2, &hi2); err != nil {
		t.Fatal(err)
	}
	seen := map[[2]float64]label{}
	for i, st := range hi.States {
		k, w := 0, 0.0
		for j, a := range st.Vector {
			if a*a > w {
				k, w = j, a*a
			}
		}
		if w < 1-1e-6 {
			t.Errorf("B=%.4g G: state F=%g M=%g is not a product state (largest weight %.9f)", hi.Field, st.F, st.M, w)
		}
		bs := s.Basis()[k]
		pb := [2]float64{bs.MJ, bs.MI[0]}
		if old, ok := seen[pb]; ok {
			t.Errorf("labels F=%g M=%g and F=%g M=%g both decouple to m_J=%g m_I=%g", old.F, old.M, st.F, st.M, pb[0], pb[1])
		}
		seen[pb] = label{st.F, st.M}
		slope := (hi2.States[i].Energy - st.Energy) / (B2 - hi.Field)
		if wantS := smu * (gJ*bs.MJ + gI*bs.MI[0]); math.Abs(slope-wantS) > 1e-6*math.Abs(smu) {
			t.Errorf("F=%g M=%g (m_J=%g m_I=%g): slope %g Hz/G, Paschen-Back %g", st.F, st.M, bs.MJ, bs.MI[0], slope, wantS)
		}
	}
}
