package main

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"maserpol/levels"
)

// writeComponentTable writes sp as a species file in the component-table
// form (levels.TableRows): the weak-field table of a Hamiltonian species,
// to compare with a published one or to edit.
func writeComponentTable(w io.Writer, sp *levels.Species, name string) error {
	if len(sp.Upper.Spins) > 2 {
		return fmt.Errorf("%d spins: F1 and F do not name every hyperfine level, so the species has no component-table form", len(sp.Upper.Spins))
	}
	rows, err := levels.TableRows(sp, 1e-6)
	if err != nil {
		return err
	}
	mag := "nuclear"
	if sp.Magneton == levels.Bohr {
		mag = "bohr"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "# Component table of %s, written by maserpol levels --format components.\n", name)
	b.WriteString("# Weak-field form: g_F from the first-order Zeeman shift of each F level; mixing of F levels\n")
	b.WriteString("# by the field is left out (see the README, component tables). Strengths sum to 1.\n")
	fmt.Fprintf(&b, "name = %s\n", strconv.Quote(sp.Name+" (component table)"))
	fmt.Fprintf(&b, "frequency = \"%s MHz\"\n", strconv.FormatFloat(sp.Frequency/1e6, 'f', -1, 64))
	fmt.Fprintf(&b, "einstein_a = %s\n", strconv.FormatFloat(sp.EinsteinA, 'g', -1, 64))
	fmt.Fprintf(&b, "mass = \"%s amu\"\n", strconv.FormatFloat(sp.Mass, 'g', -1, 64))
	fmt.Fprintf(&b, "magneton = %q\n", mag)
	if len(sp.UnverifiedValues) > 0 {
		q := make([]string, len(sp.UnverifiedValues))
		for i, v := range sp.UnverifiedValues {
			q[i] = strconv.Quote(v)
		}
		fmt.Fprintf(&b, "unverified = [%s]\n", strings.Join(q, ", "))
	} else if sp.Unverified {
		b.WriteString("unverified = true\n")
	}
	fmt.Fprintf(&b, "sources = [%s]\n", strconv.Quote("derived from the species "+name+" by maserpol levels --format components"))
	fmt.Fprintf(&b, "[upper]\nJ = %s\n[lower]\nJ = %s\n[components]\n", half(sp.Upper.J), half(sp.Lower.J))
	two := len(sp.Upper.Spins) == 2
	if n := len(sp.Upper.Spins); n == 1 || n == 2 {
		var is []string
		for _, s := range sp.Upper.Spins {
			is = append(is, strconv.Quote(half(s.I)))
		}
		fmt.Fprintf(&b, "spins = [%s]\n", strings.Join(is, ", "))
	}
	b.WriteString("table = \"\"\"\n")
	if two {
		b.WriteString("F1u    Fu     F1l    Fl     offset_kHz     strength       gFu            gFl\n")
	} else {
		b.WriteString("Fu     Fl     offset_kHz     strength       gFu            gFl\n")
	}
	for _, r := range rows {
		if two {
			fmt.Fprintf(&b, "%-6s %-6s %-6s %-6s ", half(r.F1u), half(r.Fu), half(r.F1l), half(r.Fl))
		} else {
			fmt.Fprintf(&b, "%-6s %-6s ", half(r.Fu), half(r.Fl))
		}
		fmt.Fprintf(&b, "%-14.6f %-14.8f %-14.8g %.8g\n", r.Offset/1e3, r.Strength, r.GU, r.GL)
	}
	b.WriteString("\"\"\"\n")
	_, err = io.WriteString(w, b.String())
	return err
}
