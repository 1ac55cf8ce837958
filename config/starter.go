package config

import (
	"fmt"
	"strings"

	"maserpol/levels"
	"maserpol/levels/species"
)

// DefaultSpecies is the species of a starter config when none is named.
const DefaultSpecies = "sio-v1-j1-0"

// commented are keys written commented out by Starter: alternatives to a
// default form, or meaningful only with another setting.
var commented = map[string]bool{
	"line.temperature": true,
	"line.turbulence":  true,
	"column.gain":      true,
	"pump.upper_f":     true,
	"pump.lower_f":     true,
}

// Starter returns a commented starter configuration for the named species
// (a preset or a species file path; DefaultSpecies when empty). Every key
// is present with its unit, default and allowed range; it parses as it is.
func Starter(name string) (string, error) {
	if name == "" {
		name = DefaultSpecies
	}
	sp, err := species.Resolve(name)
	if err != nil {
		return "", fmt.Errorf("species %q: %v (presets: %s)", name, err, strings.Join(species.Names(), ", "))
	}
	// A field that gives a visible Zeeman effect: paramagnetic species split
	// by MHz per gauss, closed-shell ones by ~1 kHz per gauss (common practice).
	strength := `"30 G"`
	if sp.Magneton == levels.Bohr {
		strength = `"5 mG"`
	}
	var b strings.Builder
	b.WriteString(`# maserpol model configuration.
#
# Quantities are strings with a unit: "25 mG", "0.6 km/s", "30 deg", "1 K".
# Keys whose comment says "a bare number is in X" also take a plain number.
# Any numeric key may instead be swept:
#   a list          theta = ["30 deg", "60 deg", "90 deg"]
#   a range         strength = { from = "1 G", to = "100 G", steps = 5, spacing = "log" }
#   a random draw   theta = { dist = "isotropic-angle", n = 100, seed = 7 }
#                   (dist: "uniform", "loguniform", "isotropic-angle"; from/to)
# The study is the product of all lists and ranges; random draws with the
# same n are one Latin-hypercube axis of n models.
`)
	b.WriteString(fmt.Sprintf("# Species %s: rest frequency %.6g GHz.\n", sp.Name, sp.Frequency/1e9))
	table := ""
	for _, s := range schema() {
		if s.table != table {
			table = s.table
			fmt.Fprintf(&b, "\n[%s]\n", table)
		}
		val := s.example
		if val == "" {
			val = s.def
		}
		switch s.path() {
		case "species":
			val = tomlString(name)
		case "field.strength":
			val = strength
		case "output.dir":
			val = `"runs/example"`
		}
		fmt.Fprintf(&b, "# %s.\n", upperFirst(s.doc))
		var notes []string
		if s.def != "" {
			notes = append(notes, "Default: "+s.def)
		}
		if s.path() == "species" {
			notes = append(notes, "Presets: "+strings.Join(species.Names(), ", "))
		} else if a := s.allowed(); a != "a string" {
			notes = append(notes, "Allowed: "+a)
		}
		if s.sweepable() {
			notes = append(notes, "May be swept")
		}
		if len(notes) > 0 {
			fmt.Fprintf(&b, "# %s.\n", strings.Join(notes, ". "))
		}
		prefix := ""
		if commented[s.path()] {
			prefix = "# "
		}
		fmt.Fprintf(&b, "%s%s = %s\n", prefix, s.name, val)
	}
	return b.String(), nil
}

func upperFirst(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
