package species

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/unit/constant"

	"maserpol/levels"
)

// Outside checks of the presets against the sources cited in them. The
// derived values of the presets are re-derived here from the read inputs.

// ohFineStructure diagonalizes the 2x2 Hund's case (a) matrix of the
// 2Pi(3/2)/2Pi(1/2) J = 3/2 pair with the spin-orbit constant a and the
// rotational constant b (any unit) and returns the effective g_J of the
// lower (2Pi(3/2)) state and the amplitude of Omega = 1/2 in it.
//
// Matrix (standard 2Pi form, e.g. Brown & Carrington 2003, Rotational
// Spectroscopy of Diatomic Molecules, ch. 9; centrifugal and gamma terms
// neglected as species-sources.md states), x = J + 1/2:
//
//	<3/2|H|3/2> = a/2 + b (x^2 - 2),  <1/2|H|1/2> = -a/2 + b x^2,
//	<3/2|H|1/2> = -b sqrt(x^2 - 1) = -2b <3/2|(J.S)_perp|1/2>.
//
// The Zeeman operator projected on J, (L_z + g_s S).J / J(J+1), is
// diagonal Omega (Lambda + g_s Sigma) / J(J+1) and has the off-diagonal
// element g_s <3/2|(J.S)_perp|1/2> / J(J+1) = g_s sqrt(x^2-1)/2 / J(J+1).
func ohFineStructure(a, b float64) (gJ, mix float64) {
	const J, gs = 1.5, 2.00232
	x := J + 0.5
	h := mat.NewSymDense(2, []float64{
		a/2 + b*(x*x-2), -b * math.Sqrt(x*x-1),
		-b * math.Sqrt(x*x-1), -a/2 + b*x*x,
	})
	var eig mat.EigenSym
	if !eig.Factorize(h, true) {
		panic("EigenSym failed")
	}
	var v mat.Dense
	eig.VectorsTo(&v)
	// Lowest eigenvalue first (EigenSym sorts ascending).
	c32, c12 := v.At(0, 0), v.At(1, 0)
	jj := J * (J + 1)
	d32 := 1.5 * (1 + gs*0.5) // Omega=3/2: Lambda=1, Sigma=+1/2
	d12 := 0.5 * (1 - gs*0.5) // Omega=1/2: Lambda=1, Sigma=-1/2
	off := gs * math.Sqrt(x*x-1) / 2
	gJ = (c32*c32*d32 + c12*c12*d12 + 2*c32*c12*off) / jj
	return gJ, math.Abs(c12)
}

func TestOHFromSources(t *testing.T) {
	sp, err := Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	// Brown, Kerr, Wayne, Evenson & Radford 1981, J. Mol. Spectrosc. 86,
	// 544: A0 = -4168.63913 GHz, B0 = 555.66097 GHz.
	gJ, mix := ohFineStructure(-4168.63913, 555.66097)
	// species-sources.md (derived the same way): g_J = 0.9346, mixing 0.174.
	if math.Abs(gJ-0.9346) > 1e-4 || math.Abs(mix-0.174) > 1e-3 {
		t.Errorf("g_J = %.5f, Omega=1/2 amplitude %.4f; want 0.9346, 0.174", gJ, mix)
	}
	for _, lv := range []levels.Level{sp.Upper, sp.Lower} {
		if math.Abs(lv.G-gJ) > 5e-5 {
			t.Errorf("preset g_J = %g, derived %.5f", lv.G, gJ)
		}
	}
	// g_F from the projection formula with the preset's proton g (CODATA
	// g_p m_e/m_p): 1.1683 (F=1) and 0.7010 (F=2), species-sources.md; the
	// proton term moves them by 1e-3 relative, inside the 4th digit budget.
	gI := sp.Upper.Spins[0].G
	if g := levels.LandeG(1.5, 0.5, 1, gJ, gI); math.Abs(g-1.1683) > 2e-3 {
		t.Errorf("g_F(F=1) = %.4f, want 1.1683", g)
	}
	if g := levels.LandeG(1.5, 0.5, 2, gJ, gI); math.Abs(g-0.7010) > 2e-3 {
		t.Errorf("g_F(F=2) = %.4f, want 0.7010", g)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	// Line frequencies, LAMDA oh@hfs.dat (Schoier et al. 2005), to 1 kHz:
	// the preset's two spin-rotation constants and rest frequency are
	// derived from them. Einstein A of each line from the same file.
	lines := []struct {
		fu, fl  float64
		nu, a   float64 // MHz, s^-1
		kmsPerM float64 // sigma+/sigma- separation, km/s per mG; 0 = not checked
	}{
		{1, 2, 1612.231, 1.283e-11, 0},
		{1, 1, 1665.402, 7.070e-11, 0.589}, // species-sources.md (derived); 0.590 common practice
		{2, 2, 1667.359, 7.663e-11, 0.353}, // 0.354 common practice
		{2, 1, 1720.530, 9.355e-12, 0},
	}
	nu0 := sp.Frequency
	for _, ln := range lines {
		var c *levels.Component
		for i := range cs {
			if cs[i].Fu == ln.fu && cs[i].Fl == ln.fl {
				c = &cs[i]
			}
		}
		if c == nil {
			t.Fatalf("no component F=%g-%g", ln.fu, ln.fl)
		}
		nu := nu0 + c.Offset
		if math.Abs(nu-ln.nu*1e6) > 1e3 {
			t.Errorf("F=%g-%g at %.6f MHz, LAMDA %.3f MHz", ln.fu, ln.fl, nu/1e6, ln.nu)
		}
		// Einstein A of the component: A_J (nu/nu0)^3 times its branching
		// ratio, which the zero-field strengths give as
		// Strength * N_upper / (2F_u+1). LAMDA's four values agree with the
		// preset's A_J within 0.5 %.
		branch := c.Strength * 8 / (2*ln.fu + 1)
		a := sp.EinsteinA * math.Pow(nu/nu0, 3) * branch
		if math.Abs(a/ln.a-1) > 5e-3 {
			t.Errorf("F=%g-%g: A = %.4g s^-1, LAMDA %.4g (branching %.4f)", ln.fu, ln.fl, a, ln.a, branch)
		}
		if ln.kmsPerM > 0 {
			sep := 2 * c.SplitKmsPerG / 1e3 // sigma+ minus sigma-, km/s per mG
			if math.Abs(math.Abs(sep)/ln.kmsPerM-1) > 5e-3 {
				t.Errorf("F=%g-%g: sigma separation %.4f km/s/mG, want %.3f within 0.5 %%", ln.fu, ln.fl, sep, ln.kmsPerM)
			}
		}
	}
}

// hcnFit solves nu = nu0 + eQq_J q(F) + c s(F) for the three Lovas lines
// of HCN J=1-0 (the J=0 level has no hyperfine structure): q(F) the
// Casimir factor of J=1, I=1 (2.5, -1.25, 0.25 for F = 0, 1, 2; Townes &
// Schawlow 1955) and s(F) = C_F/2 (-2, -1, 1).
func hcnFit(nu [3]float64) (nu0, eqqJ, c float64) {
	q := [3]float64{-1.25, 0.25, 2.5} // F = 1, 2, 0
	s := [3]float64{-1, 1, -2}
	a := mat.NewDense(3, 3, nil)
	for i := range 3 {
		a.SetRow(i, []float64{1, q[i], s[i]})
	}
	var x mat.VecDense
	if err := x.SolveVec(a, mat.NewVecDense(3, nu[:])); err != nil {
		panic(err)
	}
	return x.AtVec(0), x.AtVec(1), x.AtVec(2)
}

func TestHCNFromSources(t *testing.T) {
	sp, err := Preset("hcn-like-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	// Lovas 1992, J. Phys. Chem. Ref. Data 21, 181: F=1-1, 2-1, 0-1 in MHz.
	lovas := [3]float64{88630.4157, 88631.8473, 88633.9360}
	nu0, eqqJ, c := hcnFit(lovas)
	// eQq = -5 eQq_J = -4.707 MHz and C_N = 9.8 kHz (species-sources.md).
	if math.Abs(-5*eqqJ+4.707) > 1e-3 || math.Abs(c*1e3-9.8) > 0.05 {
		t.Errorf("fit: eQq = %.5f MHz, C_N = %.3f kHz; want -4.707, 9.8", -5*eqqJ, c*1e3)
	}
	if math.Abs(sp.Frequency/1e6-nu0) > 1e-4 {
		t.Errorf("preset rest frequency %.6f MHz, fitted %.6f", sp.Frequency/1e6, nu0)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	want := map[float64][2]float64{1: {lovas[0], 3. / 9}, 2: {lovas[1], 5. / 9}, 0: {lovas[2], 1. / 9}}
	if len(cs) != 3 {
		t.Fatalf("%d components, want 3", len(cs))
	}
	for _, c := range cs {
		w := want[c.Fu]
		// Lovas frequencies within 5 kHz (the tolerance: the fitted
		// constants are rounded in the preset); strengths 3:5:1 exactly.
		if d := (sp.Frequency + c.Offset) - w[0]*1e6; math.Abs(d) > 5e3 {
			t.Errorf("F=%g-1: %.4f MHz, Lovas %.4f (%.1f kHz off)", c.Fu, (sp.Frequency+c.Offset)/1e6, w[0], d/1e3)
		}
		if math.Abs(c.Strength-w[1]) > 1e-9 {
			t.Errorf("F=%g-1: strength %g, want %g (3:5:1)", c.Fu, c.Strength, w[1])
		}
	}
	// Einstein A read from LAMDA hcn@hfs.dat (Schoier et al. 2005).
	if sp.EinsteinA != 2.407e-5 {
		t.Errorf("A = %g, LAMDA 2.407e-5 s^-1", sp.EinsteinA)
	}
}

// dipoleA is the Einstein A of a J_u -> J_u-1 rotational line of a linear
// molecule with permanent dipole mu (debye) at frequency nu (Hz):
// A = 16 pi^3 nu^3 mu^2 J_u / (3 eps0 h c^3 (2J_u+1)) in SI, the Gaussian
// 64 pi^4 nu^3 mu^2 J_u / (3 h c^3 (2J_u+1)) of species-sources.md
// (standard; e.g. Townes & Schawlow 1955).
func dipoleA(nu, muDebye, ju float64) float64 {
	c := float64(constant.LightSpeedInVacuum)
	mu := muDebye * 1e-21 / c // 1 D = 1e-21/c C m
	h := float64(constant.Planck)
	eps0 := float64(constant.ElectricConstant)
	return 16 * math.Pow(math.Pi, 3) * nu * nu * nu * mu * mu * ju / (3 * eps0 * h * c * c * c * (2*ju + 1))
}

func TestDipoleEinsteinA(t *testing.T) {
	// The formula reproduces LAMDA's HCN J=1-0 A (2.407e-5 s^-1, Schoier et
	// al. 2005) with mu = 2.985 D within 0.5 %.
	if a := dipoleA(88631.6e6, 2.985, 1); math.Abs(a/2.407e-5-1) > 5e-3 {
		t.Errorf("HCN: A = %.4g s^-1, LAMDA 2.407e-5", a)
	}
	// SiO v=1 with mu = 3.0982 D (Raymonda, Muenter & Klemperer 1970, from
	// memory): the presets carry the formula's value to 3 digits.
	for _, c := range []struct {
		name string
		ju   float64
	}{{"sio-v1-j1-0", 1}, {"sio-v1-j2-1", 2}} {
		sp, err := Preset(c.name)
		if err != nil {
			t.Fatal(err)
		}
		a := dipoleA(sp.Frequency, 3.0982, c.ju)
		if math.Abs(sp.EinsteinA/a-1) > 2e-3 {
			t.Errorf("%s: A = %g s^-1, dipole formula %.4g", c.name, sp.EinsteinA, a)
		}
		if sp.Upper.J != c.ju {
			t.Errorf("%s: J_u = %g", c.name, sp.Upper.J)
		}
	}
}

func TestWaterStrengthsFrom6j(t *testing.T) {
	// species-sources.md: (2F+1)(2F'+1){J F I; F' J' 1}^2 for J = 6 -> 5,
	// I = 1, normalized to sum 1, rounded to 4 decimals.
	want := []struct{ fu, fl, s float64 }{
		{7, 6, 0.3846}, {6, 5, 0.3241}, {5, 4, 0.2727}, {6, 6, 0.0093}, {5, 5, 0.0093}, {5, 6, 0.0001},
	}
	sixj := func(fu, fl float64) float64 {
		w := levels.Wigner6j(6, fu, 1, fl, 5, 1)
		return (2*fu + 1) * (2*fl + 1) * w * w
	}
	sum := 0.0
	for fu := 5.0; fu <= 7; fu++ {
		for fl := 4.0; fl <= 6; fl++ {
			sum += sixj(fu, fl)
		}
	}
	sp, err := Preset("h2o-22")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range want {
		s := sixj(w.fu, w.fl) / sum
		if math.Abs(s-w.s) > 0.5e-4+1e-12 {
			t.Errorf("F=%g-%g: 6j strength %.5f, species-sources.md %.4f", w.fu, w.fl, s, w.s)
		}
		// The preset's eigenvectors give the same zero-field strengths.
		found := false
		for _, c := range cs {
			if c.Fu == w.fu && c.Fl == w.fl {
				found = true
				if math.Abs(c.Strength-s) > 1e-9 {
					t.Errorf("h2o-22 F=%g-%g: strength %.6f, 6j %.6f", w.fu, w.fl, c.Strength, s)
				}
			}
		}
		if !found {
			t.Errorf("h2o-22: no component F=%g-%g", w.fu, w.fl)
		}
	}
}

// Velocities of OH referenced to the 1665 MHz line: its component sits at
// offset 0, the 1667 MHz line at +1.957 MHz from it (LAMDA), and the
// splittings do not change.
func TestReferenced(t *testing.T) {
	sp, err := Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	i, err := levels.SelectComponent(cs, "1-1")
	if err != nil {
		t.Fatal(err)
	}
	ref := sp.Referenced(cs[i].Offset)
	if math.Abs(ref.Frequency-1665.402e6) > 1e3 {
		t.Errorf("reference frequency %.6f MHz, want 1665.402", ref.Frequency/1e6)
	}
	rc, err := levels.Components(ref)
	if err != nil {
		t.Fatal(err)
	}
	for k := range cs {
		if math.Abs(rc[k].Offset-(cs[k].Offset-cs[i].Offset)) > 1e-6 || rc[k].SplitHzPerG != cs[k].SplitHzPerG || rc[k].LinearUpTo != cs[k].LinearUpTo {
			t.Errorf("component %d: referenced %+v, original %+v", k, rc[k], cs[k])
		}
	}
	if j, _ := levels.SelectComponent(rc, "2-2"); math.Abs(rc[j].Offset-1.957e6) > 1e3 {
		t.Errorf("1667 MHz line at %.4f MHz from 1665, want 1.957", rc[j].Offset/1e6)
	}
	tr, err := levels.NewTransition(ref, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	tr0, _ := levels.NewTransition(sp, 1e-3)
	for k := range tr.Lines {
		if math.Abs(tr.Lines[k].Offset-(tr0.Lines[k].Offset-cs[i].Offset)) > 1e-6 {
			t.Fatalf("line %d offset %g, want %g", k, tr.Lines[k].Offset, tr0.Lines[k].Offset-cs[i].Offset)
		}
	}
}

// The OH ground state as a component table from LAMDA's Einstein A values
// (testdata/species/oh-ground-table.toml) agrees with the Hamiltonian
// preset referenced to 1665 MHz: offsets within 1 kHz, weak-field
// splittings within 0.1 % (the g_F of the file are rounded to 5 digits),
// and the Einstein A derived from the A column within 0.5 %.
func TestOHTableFromLAMDA(t *testing.T) {
	tab, err := Load("../../testdata/species/oh-ground-table.toml")
	if err != nil {
		t.Fatal(err)
	}
	ham, err := Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	ch, _ := levels.Components(ham)
	i, _ := levels.SelectComponent(ch, "1-1")
	ref := ham.Referenced(ch[i].Offset)
	ch, _ = levels.Components(ref)
	ct, err := levels.Components(tab)
	if err != nil {
		t.Fatal(err)
	}
	if len(ct) != len(ch) {
		t.Fatalf("%d components, want %d", len(ct), len(ch))
	}
	for k := range ch {
		h, c := ch[k], ct[k]
		if h.Fu != c.Fu || h.Fl != c.Fl || math.Abs(h.Offset-c.Offset) > 1e3 || math.Abs(c.SplitHzPerG/h.SplitHzPerG-1) > 1e-3 {
			t.Errorf("F=%g-%g: table offset %.6f MHz split %.5g Hz/G; Hamiltonian %.6f MHz %.5g Hz/G", c.Fu, c.Fl, c.Offset/1e6, c.SplitHzPerG, h.Offset/1e6, h.SplitHzPerG)
		}
	}
	if math.Abs(tab.EinsteinA/ham.EinsteinA-1) > 5e-3 {
		t.Errorf("A from the table %.4g s^-1, preset %.4g", tab.EinsteinA, ham.EinsteinA)
	}
}
