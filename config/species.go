package config

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"maserpol/config/tomlpos"
	"maserpol/levels"
	"maserpol/levels/species"
)

func speciesAllowed() string {
	return "a preset (" + strings.Join(species.Names(), ", ") + "), a species file path relative to the config file, or an inline [species] table"
}

// isPath tells a species file path from a preset name: anything with a
// path separator or a .toml extension, or an existing file.
func (ps *parser) speciesPath(s string) (string, bool) {
	p := s
	if !filepath.IsAbs(p) && ps.dir != "" {
		p = filepath.Join(ps.dir, p)
	}
	if strings.ContainsAny(s, `/\`) || strings.HasSuffix(s, ".toml") {
		return p, true
	}
	if fi, err := os.Stat(p); err == nil && !fi.IsDir() {
		return p, true
	}
	return "", false
}

// resolveSpecies resolves the species key: preset name, file path (relative
// to the config file's directory) or inline table.
func (ps *parser) resolveSpecies(pd *parsed) *Error {
	v := pd.raw["species"]
	switch v := v.(type) {
	case string:
		if v == "" {
			return ps.err("species", speciesAllowed(), "empty species")
		}
		ref, isPath := ps.speciesPath(v)
		if !isPath {
			ref = v
		}
		var sp *levels.Species
		var err error
		var data []byte
		if isPath {
			// Read the file once: the same bytes are parsed and embedded.
			if data, err = os.ReadFile(ref); err == nil {
				sp, err = species.Parse(data, ref)
			} else {
				sp, err = species.Resolve(ref)
			}
		} else {
			sp, err = species.Resolve(ref)
		}
		var se *Error
		if err != nil && isPath && errors.As(err, &se) && se.File == ref && (se.Line > 0 || se.Key != "") {
			// An error inside the species file: report it where it is.
			return se
		}
		if err != nil {
			msg := err.Error()
			if errors.As(err, &se) {
				msg = se.Msg
			}
			e := ps.err("species", speciesAllowed(), "species %q: %s", v, msg)
			if !isPath {
				if c := tomlpos.Closest(v, species.Names()); c != "" {
					e.Suggest = strconv.Quote(c)
				}
			}
			return e
		}
		pd.species = sp
		pd.speciesText = v
		if isPath {
			// The resolved config carries the file's content as an inline
			// [species] table: the run directory's config.toml is then
			// self-contained, and its hash changes with the physics in the
			// file (a path alone would not).
			tbl := map[string]any{}
			if _, err := toml.Decode(string(data), &tbl); err != nil {
				return ps.err("species", speciesAllowed(), "species file %s: %v", ref, err)
			}
			pd.speciesTbl = tbl
			break
		}
		// A preset keeps its name; the digest of its definition enters the
		// resolved config, so a preset that changes between program
		// versions changes the config hash.
		src, err := species.PresetSource(v)
		if err != nil {
			return ps.err("species", speciesAllowed(), "species %q: %v", v, err)
		}
		sum := sha256.Sum256(src)
		pd.speciesOut = v
		pd.speciesDigest = hex.EncodeToString(sum[:])
	case map[string]any:
		var buf bytes.Buffer
		if err := toml.NewEncoder(&buf).Encode(v); err != nil {
			return ps.err("species", speciesAllowed(), "inline species table: %v", err)
		}
		sp, err := species.Parse(buf.Bytes(), ps.file+" [species]")
		if err != nil {
			e := ps.err("species", "a species table as in a species file", "inline species: %v", err)
			var se *Error
			if errors.As(err, &se) {
				// Keys of the re-encoded table are the config's keys below [species].
				e.Key = "species." + se.Key
				e.Line = ps.pos.Line(e.Key)
				e.Msg, e.Allowed, e.Suggest = "inline species: "+se.Msg, se.Allowed, se.Suggest
			}
			return e
		}
		pd.species = sp
		pd.speciesText = sp.Name
		pd.speciesTbl = v
	default:
		return ps.err("species", speciesAllowed(), "species is %s", tomlType(v))
	}
	if pd.species == nil {
		return ps.err("species", speciesAllowed(), "species did not resolve")
	}
	if pd.given["line.temperature"] && !(pd.species.Mass > 0) {
		return ps.err("line.temperature", "a species with a positive mass, or line.doppler", "species %s has no molecular mass", pd.species.Name)
	}
	return nil
}
