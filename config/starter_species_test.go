package config

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A species file with [typical] conditions (the methanol-like examples)
// gets a starter with that field, width and angle, and a final saturation
// inside the populations-only validity at that field.
func TestStarterFromSpeciesTypical(t *testing.T) {
	for _, f := range []string{"methanol-like-6.7-table.toml", "methanol-like-6.7-hamiltonian.toml"} {
		dir := t.TempDir()
		src, err := os.ReadFile(filepath.Join("..", "testdata", "species", f))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, f), src, 0o644); err != nil {
			t.Fatal(err)
		}
		text, err := StarterNamed(filepath.Join(dir, f), "meth")
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		for _, want := range []string{`strength = "10 mG"`, `theta = "60 deg"`, `doppler = "0.18 km/s"`, "the run ends at"} {
			if !strings.Contains(text, want) {
				t.Errorf("%s: starter lacks %q", f, want)
			}
		}
		cfg := filepath.Join(dir, "meth.toml")
		if err := os.WriteFile(cfg, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		st, err := Load(cfg)
		if err != nil {
			t.Fatalf("%s: starter does not load: %v", f, err)
		}
		if n := len(st.Models); n != 1 {
			t.Errorf("%s: %d models", f, n)
		}
		// The table form states its validity; the Hamiltonian form has no
		// such limit.
		isTable := strings.Contains(f, "table")
		warned := false
		for _, w := range st.Warnings {
			warned = warned || strings.Contains(w, "no mixing between F levels")
		}
		if warned != isTable {
			t.Errorf("%s: table-form warning %v, want %v (%q)", f, warned, isTable, st.Warnings)
		}
		// The resolved config carries the species inline (the table as a
		// string) and gives the same model.
		st2, err := Parse(st.Resolved, filepath.Join(t.TempDir(), "config.toml"))
		if err != nil {
			t.Fatalf("%s: resolved config: %v", f, err)
		}
		if st2.Hash != st.Hash || len(st2.Models[0].Params.Species.TableLines) != len(st.Models[0].Params.Species.TableLines) {
			t.Errorf("%s: resolved config differs (hash %s vs %s)", f, st2.Hash, st.Hash)
		}
	}
}

func TestAnisotropicPumpNeedsHamiltonian(t *testing.T) {
	dir := t.TempDir()
	src, err := os.ReadFile(filepath.Join("..", "testdata", "species", "oh-ground-table.toml"))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "oh.toml"), src, 0o644); err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "c.toml")
	if err := os.WriteFile(cfg, []byte("species = \"oh.toml\"\n[field]\nstrength = \"3 mG\"\n[pump]\nkind = \"anisotropic\"\nalignment = 0.3\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err = Load(cfg)
	if err == nil || !strings.Contains(err.Error(), "key pump.kind") || !strings.Contains(err.Error(), "Hamiltonian form") {
		t.Errorf("anisotropic pump on a component table: %v", err)
	}
}
