package config

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/BurntSushi/toml"

	"maserpol/levels/species"
)

// A species file path is relative to the config file's directory; the
// resolved config carries the file's content as an inline table, so that
// it is self-contained and its hash follows the physics in the file.
func TestSpeciesFile(t *testing.T) {
	src, err := species.PresetSource(preset)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := os.MkdirAll(filepath.Join(dir, "sp"), 0o755); err != nil {
		t.Fatal(err)
	}
	abs := filepath.Join(dir, "sp", "mine.toml")
	if err := os.WriteFile(abs, src, 0o644); err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "study.toml")
	if err := os.WriteFile(cfg, []byte("species = \"sp/mine.toml\"\n[field]\nstrength = \"3 G\"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	a, err := Load(cfg)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := species.Resolve(preset)
	if !reflect.DeepEqual(a.Models[0].Params.Species, want) {
		t.Error("species file differs from the preset it copies")
	}
	if a.Models[0].Species != "sp/mine.toml" {
		t.Errorf("Model.Species = %q, want the path as written", a.Models[0].Species)
	}
	if bytes.Contains(a.Resolved, []byte("mine.toml")) || !bytes.Contains(a.Resolved, []byte("\n[species]\n")) {
		t.Errorf("resolved config should hold the species inline, not its path:\n%s", a.Resolved)
	}
	// The resolved config runs anywhere, even with the species file gone.
	run := filepath.Join(dir, "runs", "x")
	if err := os.MkdirAll(run, 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(run, "config.toml"), a.Resolved, 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Rename(abs, abs+".away"); err != nil {
		t.Fatal(err)
	}
	b, err := Load(filepath.Join(run, "config.toml"))
	if err != nil {
		t.Fatalf("resolved config in a run directory: %v", err)
	}
	if !reflect.DeepEqual(a.Models[0].Params, b.Models[0].Params) || !bytes.Equal(a.Resolved, b.Resolved) || a.Hash != b.Hash {
		t.Error("resolved config with a species file is not a fixed point")
	}
	if err := os.Rename(abs+".away", abs); err != nil {
		t.Fatal(err)
	}

	// Changing the physics in the species file changes the hash; changing
	// only its comments does not.
	for _, c := range []struct {
		name, old, new string
		same           bool
	}{
		{"rotational g", "g = -0.155", "g = -0.30", false},
		{"comment only", "# SiO", "#  SiO", true},
	} {
		if !strings.Contains(string(src), c.old) {
			t.Fatalf("%s: preset text lacks %q", c.name, c.old)
		}
		if err := os.WriteFile(abs, []byte(strings.Replace(string(src), c.old, c.new, 1)), 0o644); err != nil {
			t.Fatal(err)
		}
		e, err := Load(cfg)
		if err != nil {
			t.Fatal(err)
		}
		if same := e.Hash == a.Hash; same != c.same {
			t.Errorf("%s: hash unchanged = %v, want %v", c.name, same, c.same)
		}
	}

	// An error inside the species file is reported in that file.
	bad := strings.Replace(string(src), "[upper]", "[upper]\nJJ = 1", 1)
	if err := os.WriteFile(abs, []byte(bad), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Load(cfg)
	var e *Error
	if !errors.As(err, &e) || e.File != abs || e.Line == 0 || !strings.Contains(e.Key, "JJ") {
		t.Errorf("species file error %#v, want the species file, line and key", err)
	}
}

// A preset is kept by name, and the digest of its definition enters the
// hash: a preset changed in a later program version changes config_hash.
func TestPresetDigest(t *testing.T) {
	src, err := species.PresetSource(preset)
	if err != nil {
		t.Fatal(err)
	}
	a := mustParse(t, base(""))
	sum := sha256.Sum256(src)
	line := "# species preset " + preset + ", definition sha256 " + hex.EncodeToString(sum[:])
	if !bytes.Contains(a.Resolved, []byte(line)) || !bytes.Contains(a.Resolved, []byte("species = \""+preset+"\"")) {
		t.Errorf("resolved config lacks the preset name or digest %q:\n%s", line, a.Resolved)
	}
	other := mustParse(t, strings.Replace(base(""), preset, "h2o-22", 1))
	if other.Hash == a.Hash {
		t.Error("two presets give one hash")
	}
}

// An inline [species] table takes the form of a species file.
func TestInlineSpecies(t *testing.T) {
	src, err := species.PresetSource(preset)
	if err != nil {
		t.Fatal(err)
	}
	var tbl map[string]any
	if _, err := toml.Decode(string(src), &tbl); err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	buf.WriteString("[field]\nstrength = \"3 G\"\n\n")
	if err := toml.NewEncoder(&buf).Encode(map[string]any{"species": tbl}); err != nil {
		t.Fatal(err)
	}
	a, err := Parse(buf.Bytes(), "inline.toml")
	if err != nil {
		t.Fatalf("%v\n%s", err, buf.Bytes())
	}
	want, _ := species.Resolve(preset)
	got := *a.Models[0].Params.Species
	w := *want
	got.Notes, w.Notes = nil, nil // notes may name the source file
	if !reflect.DeepEqual(got, w) {
		t.Errorf("inline species differs from the preset:\n%+v\n%+v", got, w)
	}
	b, err := Parse(a.Resolved, "again.toml")
	if err != nil {
		t.Fatalf("resolved inline species does not parse: %v\n%s", err, a.Resolved)
	}
	if !bytes.Equal(a.Resolved, b.Resolved) || !reflect.DeepEqual(a.Models, b.Models) {
		t.Error("resolved config with an inline species is not a fixed point")
	}

	// An error inside the inline table names the config's key and line.
	doc := strings.Replace(buf.String(), "[species.upper]", "[species.upper]\n  JJ = 1", 1)
	_, err = Parse([]byte(doc), "inline.toml")
	var e *Error
	if !errors.As(err, &e) || e.File != "inline.toml" || !strings.HasPrefix(e.Key, "species.") || e.Line == 0 {
		t.Errorf("inline species error %#v, want key species.* with a line", err)
	}
}
