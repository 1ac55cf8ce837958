package species

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"maserpol/levels"
)

func TestPresetsLoad(t *testing.T) {
	names := Names()
	for _, want := range []string{"sio-v1-j1-0", "h2o-22", "oh-like-main", "synthetic-j6-5", "hcn-like-j1-0", "sio-v1-j2-1"} {
		found := false
		for _, n := range names {
			found = found || n == want
		}
		if !found {
			t.Errorf("preset %s missing from %v", want, names)
		}
	}
	for _, n := range names {
		sp, err := Preset(n)
		if err != nil {
			t.Errorf("%s: %v", n, err)
			continue
		}
		if len(sp.Notes) == 0 {
			t.Errorf("%s: a preset names its sources", n)
		}
		// A preset flags exactly the values it cannot source, by name.
		if sp.Unverified != (len(sp.UnverifiedValues) > 0) {
			t.Errorf("%s: Unverified = %v with %d named values", n, sp.Unverified, len(sp.UnverifiedValues))
		}
		cs, err := levels.Components(sp)
		if err != nil {
			t.Errorf("%s: %v", n, err)
			continue
		}
		s := 0.0
		for _, c := range cs {
			s += c.Strength
		}
		if math.Abs(s-1) > 1e-9 {
			t.Errorf("%s: strengths sum to %g", n, s)
		}
	}
}

func TestPresetValues(t *testing.T) {
	// OH: the constants reproduce the four ground-state lines (LAMDA,
	// TestOHFromSources) to 1 kHz, and the 1665/1667 MHz sigma-sigma
	// splittings observers use, 0.590/0.354 km/s per mG (common practice),
	// to 1 %.
	sp, err := Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	want := map[[2]float64][2]float64{{1, 2}: {1612.231e6, 0}, {1, 1}: {1665.402e6, 0.590}, {2, 2}: {1667.359e6, 0.354}, {2, 1}: {1720.530e6, 0}}
	for _, c := range cs {
		w := want[[2]float64{c.Fu, c.Fl}]
		if math.Abs(sp.Frequency+c.Offset-w[0]) > 1e3 {
			t.Errorf("F=%g-%g at %.6f MHz, want %.6f", c.Fu, c.Fl, (sp.Frequency+c.Offset)/1e6, w[0]/1e6)
		}
		if w[1] != 0 {
			// Full sigma+ - sigma- splitting per mG = 2 * SplitKmsPerG / 1000.
			if got := 2 * math.Abs(c.SplitKmsPerG) / 1e3; math.Abs(got/w[1]-1) > 0.01 {
				t.Errorf("F=%g-%g splitting %g km/s/mG, want %g", c.Fu, c.Fl, got, w[1])
			}
		}
	}
	h2o, _ := Preset("h2o-22")
	cs, _ = levels.Components(h2o)
	var main float64
	for _, c := range cs {
		if c.Fu-c.Fl == 1 {
			main += c.Strength
		}
	}
	if main < 0.95 {
		t.Errorf("h2o-22: F=7-6, 6-5, 5-4 carry %g of the strength, want > 0.95", main)
	}
}

const good = `
name = "test"
frequency = "43.1 GHz"
einstein_a = 3e-6
mass = "44 amu"
magneton = "nuclear"
[upper]
J = 2
g = 0.1
[lower]
J = 1
g = 0.1
[[spin]]
name = "N"
I = 1
g = 0.4
[[spin]]
name = "H"
I = "1/2"
g = 5.6
[[coupling]]
kind = "quadrupole"
level = "upper"
spins = ["N"]
value = "0.9 MHz"
[[coupling]]
kind = "spin-spin"
level = "both"
spins = ["N", "H"]
value = "5 kHz"
`

func TestParseGood(t *testing.T) {
	sp, err := Parse([]byte(good), "good.toml")
	if err != nil {
		t.Fatal(err)
	}
	if sp.Frequency != 43.1e9 || sp.Mass != 44 || sp.Upper.J != 2 || len(sp.Upper.Couplings) != 2 || len(sp.Lower.Couplings) != 1 ||
		sp.Upper.Couplings[0].Value != 0.9e6 || sp.Upper.Spins[1].I != 0.5 || sp.Unverified {
		t.Errorf("parsed %+v", sp)
	}
	dir := t.TempDir()
	f := filepath.Join(dir, "x.toml")
	os.WriteFile(f, []byte(good), 0o644)
	if _, err := Resolve(f); err != nil {
		t.Errorf("Resolve(file): %v", err)
	}
	if sp, err := Resolve("sio-v1-j1-0"); err != nil || sp.Upper.J != 1 {
		t.Errorf("Resolve(preset): %v", err)
	}
}

func TestParseErrors(t *testing.T) {
	for _, c := range []struct {
		name, from, to string
		key            string
		line           int
		msg            string
	}{
		{"unknown key", "magneton = \"nuclear\"", "magneton = \"nuclear\"\nfrequncy = 3", "frequncy", 7, "did you mean frequency"},
		{"negative J", "J = 2", "J = -2", "upper.J", 8, "multiple of 1/2"},
		{"half-odd J", "J = 2", "J = 2.25", "upper.J", 8, "multiple of 1/2"},
		{"spin not half", "I = 1\n", "I = 0.3\n", "spin[0].I", 15, "multiple of 1/2"},
		{"unknown kind", "kind = \"quadrupole\"", "kind = \"quadrupol\"", "coupling[0].kind", 22, "did you mean quadrupole"},
		{"quadrupole on I<1", "spins = [\"N\"]", "spins = [\"H\"]", "coupling[0].spins", 24, "I >= 1"},
		{"unknown spin", "spins = [\"N\", \"H\"]", "spins = [\"N\", \"X\"]", "coupling[1].spins", 29, "unknown spin \"X\""},
		{"spin count", "spins = [\"N\", \"H\"]", "spins = [\"N\"]", "coupling[1].spins", 29, "needs 2 spin"},
		{"no unit", "value = \"0.9 MHz\"", "value = 0.9", "coupling[0].value", 25, "has no unit"},
		{"bad magneton", "magneton = \"nuclear\"", "magneton = \"nuclaer\"", "magneton", 6, "did you mean nuclear"},
		{"no transition", "J = 1\n", "J = 4\n", "lower.J", 11, "no electric-dipole"},
		{"unknown key in level", "g = 0.1\n[lower]", "gJ = 0.1\n[lower]", "upper.gJ", 9, "unknown key"},
	} {
		src := strings.Replace(good, c.from, c.to, 1)
		if src == good {
			t.Fatalf("%s: replacement did not apply", c.name)
		}
		_, err := Parse([]byte(src), "bad.toml")
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("%s: error %v is not *Error", c.name, err)
			continue
		}
		if e.Key != c.key || e.Line != c.line || !strings.Contains(e.Error(), c.msg) || !strings.HasPrefix(e.Error(), "bad.toml:") {
			t.Errorf("%s: got %q (key %q line %d), want key %q line %d containing %q", c.name, e.Error(), e.Key, e.Line, c.key, c.line, c.msg)
		}
	}
	// J = 0 with a quadrupole.
	src := strings.Replace(strings.Replace(good, "level = \"upper\"", "level = \"lower\"", 1), "[lower]\nJ = 1", "[lower]\nJ = 0", 1)
	src = strings.Replace(src, "[upper]\nJ = 2", "[upper]\nJ = 1", 1)
	if _, err := Parse([]byte(src), "bad.toml"); err == nil || !strings.Contains(err.Error(), "J >= 1") {
		t.Errorf("quadrupole in J=0: %v", err)
	}
	if _, err := Parse([]byte("name = \n"), "syn.toml"); err == nil || !strings.Contains(err.Error(), "syn.toml:1") {
		t.Errorf("syntax error: %v", err)
	}
	if _, err := Resolve("sio-v1-j10"); err == nil || !strings.Contains(err.Error(), "did you mean sio-v1-j1-0") {
		t.Errorf("unknown preset: %v", err)
	}
}
