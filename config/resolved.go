package config

import (
	"bytes"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"

	"maserpol/config/units"
	"maserpol/levels"
)

// resolved writes the configuration with every default filled in, sweeps as
// written (ranges and draws with their defaults), in reference order. It
// parses back to the same study and is a fixed point of Parse.
func (ps *parser) resolved(pd *parsed, specs []*spec) []byte {
	var b bytes.Buffer
	b.WriteString("# maserpol configuration, resolved: every default filled in, sweeps as written.\n")
	sp := pd.species
	fmt.Fprintf(&b, "# species %s: %s rest frequency, %s.\n", sp.Name,
		units.Format(sp.Frequency, units.Frequency, "GHz"), magnetonName(sp))
	switch {
	case pd.speciesDigest != "":
		// Part of the hashed text: a preset edited in a later program
		// version gives another config hash.
		fmt.Fprintf(&b, "# species preset %s, definition sha256 %s.\n", pd.speciesOut, pd.speciesDigest)
	case pd.speciesTbl != nil:
		b.WriteString("# species: the [species] table at the end holds the full definition (this file is self-contained).\n")
	}
	b.WriteString("\n")
	table := ""
	for _, s := range specs {
		if s.table != table {
			table = s.table
			fmt.Fprintf(&b, "\n[%s]\n", table)
		}
		var text string
		switch {
		case s.path() == "species":
			if pd.speciesTbl != nil {
				continue // written as a table at the end
			}
			text = tomlValue(pd.speciesOut)
		case pd.byPath[s.path()] != nil:
			text = paramText(pd.byPath[s.path()])
		case pd.rawOf[s.path()] != nil:
			text = tomlValue(pd.rawOf[s.path()])
		default:
			continue
		}
		fmt.Fprintf(&b, "%s = %s\n", s.name, text)
	}
	if pd.speciesTbl != nil {
		b.WriteString("\n")
		if err := toml.NewEncoder(&b).Encode(map[string]any{"species": pd.speciesTbl}); err != nil {
			panic("config: re-encoding a decoded species table: " + err.Error())
		}
	}
	return b.Bytes()
}

func magnetonName(sp *levels.Species) string {
	if sp.Magneton == levels.Bohr {
		return "Zeeman moments in Bohr magnetons (paramagnetic)"
	}
	return "Zeeman moments in nuclear magnetons"
}

func paramText(p *param) string {
	switch p.form {
	case fRange:
		return fmt.Sprintf("{ from = %s, to = %s, steps = %d, spacing = %s }",
			tomlValue(p.fromRaw), tomlValue(p.toRaw), p.steps, tomlValue(p.spacing))
	case fRandom:
		return fmt.Sprintf("{ dist = %s, n = %d, seed = %d, from = %s, to = %s }",
			tomlValue(p.dist), p.n, p.seed, tomlValue(p.fromRaw), tomlValue(p.toRaw))
	}
	return tomlValue(p.raw)
}

// tomlValue encodes a decoded TOML value as TOML text.
func tomlValue(v any) string {
	switch v := v.(type) {
	case string:
		return tomlString(v)
	case int64:
		return strconv.FormatInt(v, 10)
	case float64:
		switch {
		case math.IsNaN(v):
			return "nan"
		case math.IsInf(v, 1):
			return "inf"
		case math.IsInf(v, -1):
			return "-inf"
		}
		s := strconv.FormatFloat(v, 'g', -1, 64)
		if !strings.ContainsAny(s, ".eEn") {
			s += ".0" // stay a float
		}
		return s
	case bool:
		return strconv.FormatBool(v)
	case []any:
		parts := make([]string, len(v))
		for i, e := range v {
			parts[i] = tomlValue(e)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case map[string]any:
		ks := sortedKeys(v)
		parts := make([]string, len(ks))
		for i, k := range ks {
			parts[i] = tomlKey(k) + " = " + tomlValue(v[k])
		}
		return "{ " + strings.Join(parts, ", ") + " }"
	case time.Time:
		return v.Format(time.RFC3339Nano)
	}
	return tomlString(fmt.Sprint(v))
}

func tomlKey(k string) string {
	if k == "" {
		return `""`
	}
	for _, r := range k {
		if !(r >= 'A' && r <= 'Z' || r >= 'a' && r <= 'z' || r >= '0' && r <= '9' || r == '_' || r == '-') {
			return tomlString(k)
		}
	}
	return k
}

// tomlString writes a TOML basic string.
func tomlString(s string) string {
	var b strings.Builder
	b.WriteByte('"')
	for _, r := range s {
		switch r {
		case '"':
			b.WriteString(`\"`)
		case '\\':
			b.WriteString(`\\`)
		case '\n':
			b.WriteString(`\n`)
		case '\t':
			b.WriteString(`\t`)
		case '\r':
			b.WriteString(`\r`)
		default:
			if r < 0x20 || r == 0x7f {
				fmt.Fprintf(&b, `\u%04X`, r)
			} else {
				b.WriteRune(r)
			}
		}
	}
	b.WriteByte('"')
	return b.String()
}
