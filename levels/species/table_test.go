package species_test

import (
	"context"
	"fmt"
	"math"
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/transfer"
)

// tableOf writes a Hamiltonian-form species with one spin as a component
// table: offsets and strengths of levels.Components, g_F of each F level
// from the Lande projection formula (physics.md section 1; standard).
func tableOf(sp *levels.Species) (string, error) {
	cs, err := levels.Components(sp)
	if err != nil {
		return "", err
	}
	gI := sp.Upper.Spins[0].G
	I := sp.Upper.Spins[0].I
	var b strings.Builder
	fmt.Fprintf(&b, "name = \"%s, as a component table\"\nfrequency = \"%.6f MHz\"\neinstein_a = %g\nmass = \"%g amu\"\nmagneton = \"nuclear\"\n", sp.Name, sp.Frequency/1e6, sp.EinsteinA, sp.Mass)
	fmt.Fprintf(&b, "[upper]\nJ = %g\n[lower]\nJ = %g\n[components]\nspins = [%g]\ntable = \"\"\"\nFu Fl offset_kHz strength gFu gFl\n", sp.Upper.J, sp.Lower.J, I)
	for _, c := range cs {
		gu := levels.LandeG(sp.Upper.J, I, c.Fu, sp.Upper.G, gI)
		gl := levels.LandeG(sp.Lower.J, I, c.Fl, sp.Lower.G, gI)
		fmt.Fprintf(&b, "%g %g %.6f %.12g %.12g %.12g\n", c.Fu, c.Fl, c.Offset/1e3, c.Strength, gu, gl)
	}
	b.WriteString("\"\"\"\n")
	return b.String(), nil
}

// The same single-spin species given both ways: the component table (g_F
// from the Lande formula) and the Hamiltonian give the same components and,
// in the weak-field regime, the same I, Q, U within 1e-3 of the peak
// intensity. What the table leaves out is the mixing of F levels by the
// field: second-order shifts, (g mu B)^2 / splitting, and a first-order
// transfer of strength between sigma+ and sigma- lines (the "B term" of
// magnetic circular dichroism, standard), which adds to V a part of
// relative size about (Doppler width / hyperfine splitting) against the
// Zeeman V. The check of V is therefore that scaling: the difference, as a
// fraction of V, stays below 6 Doppler widths per hyperfine gap (HCN: 1.43
// MHz) and falls with the Doppler width. With g_I = g_J the field does not
// mix F levels at all (H_Z = g mu B F_z), and the two forms agree to
// rounding at any field.
func TestTableEqualsHamiltonian(t *testing.T) {
	base, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	same := *base
	same.Name += ", g_I = g_J"
	same.Upper.Spins = []levels.Spin{{Name: "N", I: 1, G: base.Upper.G}}
	same.Lower.Spins = same.Upper.Spins
	const gap = 1.4316e6 // Hz, F=2-1 to F=1-1 (Lovas 1992)
	prevV := math.Inf(1)
	for _, c := range []struct {
		ham      *levels.Species
		field    float64 // G
		doppler  float64 // m/s
		channels int
		tol      float64 // of the peak of I
	}{{base, 1, 300, 256, 1e-3}, {base, 1, 30, 2000, 1e-3}, {&same, 20, 3000, 192, 1e-9}} {
		ham := c.ham
		name := ham.Name
		text, err := tableOf(ham)
		if err != nil {
			t.Fatal(err)
		}
		tab, err := species.Parse([]byte(text), "table of "+name)
		if err != nil {
			t.Fatalf("%s: %v\n%s", name, err, text)
		}
		ch, _ := levels.Components(ham)
		ct, err := levels.Components(tab)
		if err != nil {
			t.Fatal(err)
		}
		if len(ch) != len(ct) {
			t.Fatalf("%s: %d components from the table, %d from the Hamiltonian", name, len(ct), len(ch))
		}
		for i := range ch {
			h, c := ch[i], ct[i]
			if h.Fu != c.Fu || h.Fl != c.Fl || math.Abs(h.Offset-c.Offset) > 1e-3 || math.Abs(h.Strength-c.Strength) > 1e-9 ||
				math.Abs(h.SplitHzPerG-c.SplitHzPerG) > 1e-6*math.Abs(h.SplitHzPerG)+1e-9 {
				t.Errorf("%s: component %d: table %+v, Hamiltonian %+v", name, i, c, h)
			}
		}
		p := transfer.Params{Field: c.field, Theta: 0.9, Doppler: c.doppler, GammaUpper: 1, GammaLower: 1, Saturation: 10, Channels: c.channels}
		var cps [2]transfer.Checkpoint
		for k, sp := range []*levels.Species{ham, tab} {
			q := p
			q.Species = sp
			tj, err := transfer.Run(context.Background(), q)
			if err != nil {
				t.Fatal(err)
			}
			cps[k] = tj.Checkpoints[len(tj.Checkpoints)-1]
		}
		peak := cps[0].IPeak
		for s, pair := range [][2][]float64{{cps[0].I, cps[1].I}, {cps[0].Q, cps[1].Q}, {cps[0].U, cps[1].U}, {cps[0].V, cps[1].V}} {
			diff, own := 0.0, 0.0
			for j := range pair[0] {
				own = math.Max(own, math.Abs(pair[0][j]))
				diff = math.Max(diff, math.Abs(pair[0][j]-pair[1][j]))
			}
			if s < 3 || ham == &same {
				if diff > c.tol*peak {
					t.Errorf("%s at %g G: Stokes %c differs by %.3g of the peak intensity (allowed %g)", name, c.field, "IQUV"[s], diff/peak, c.tol)
				}
				continue
			}
			if own == 0 {
				t.Fatalf("%s: no Stokes V", name)
			}
			ratio := c.doppler / levels.SpeedOfLight * ham.Frequency / gap
			if diff/own > 6*ratio || diff/own >= prevV {
				t.Errorf("%s, Doppler %g m/s: V differs by %.3g of its peak; want < 6 x Doppler/gap = %.3g, and below %.3g at the wider line",
					name, c.doppler, diff/own, 6*ratio, prevV)
			}
			prevV = diff / own
		}
	}
}

// The two methanol-like examples of testdata/species describe the same
// invented molecule: the table, written by TableRows from the Hamiltonian
// (levels --format components), gives back its zero-field components,
// strengths and weak-field splittings to the printed digits.
func TestMethanolExamples(t *testing.T) {
	ham, err := species.Load("../../testdata/species/methanol-like-6.7-hamiltonian.toml")
	if err != nil {
		t.Fatal(err)
	}
	tab, err := species.Load("../../testdata/species/methanol-like-6.7-table.toml")
	if err != nil {
		t.Fatal(err)
	}
	if !ham.Unverified || !tab.Unverified {
		t.Error("illustrative examples must be flagged unverified")
	}
	ch, err := levels.Components(ham)
	if err != nil {
		t.Fatal(err)
	}
	ct, err := levels.Components(tab)
	if err != nil {
		t.Fatal(err)
	}
	if len(ch) != len(ct) {
		t.Fatalf("%d components in the table, %d from the Hamiltonian", len(ct), len(ch))
	}
	main := 0
	for i := range ch {
		h, c := ch[i], ct[i]
		// Printed digits: offsets 1 Hz, strengths 1e-8, g_F 8 significant.
		if h.Fu != c.Fu || h.F1u != c.F1u || h.Fl != c.Fl || h.F1l != c.F1l ||
			math.Abs(h.Offset-c.Offset) > 2 || math.Abs(h.Strength-c.Strength) > 2e-8 ||
			math.Abs(h.SplitHzPerG-c.SplitHzPerG) > 1e-6*math.Abs(h.SplitHzPerG)+1e-3 {
			t.Errorf("component %d: table %+v, Hamiltonian %+v", i, c, h)
		}
		if h.Strength > 0.05 {
			main++
		}
	}
	// The 6.7 GHz line has eight main hyperfine components (species-sources.md).
	if main != 8 {
		t.Errorf("%d main components, want 8", main)
	}
	// Couplings of 1-15 kHz put the main components within a few kHz.
	for _, c := range ct {
		if c.Strength > 0.05 && math.Abs(c.Offset) > 5e3 {
			t.Errorf("main component F=%g-%g at %.3g kHz", c.Fu, c.Fl, c.Offset/1e3)
		}
	}
}
