package config

import (
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

func TestPumpComponent(t *testing.T) {
	sp, err := species.Preset("synthetic-j6-5")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(sp)
	if err != nil {
		t.Fatal(err)
	}
	labels := levels.ComponentLabels(cs)
	// The strongest component, by its full label, and index 0, swept.
	best := 0
	for i, c := range cs {
		if c.Strength > cs[best].Strength {
			best = i
		}
	}
	cfg := `species = "synthetic-j6-5"
[field]
strength = "1 G"
[pump]
kind = "hyperfine"
component = ["` + labels[best] + `", 0]
upper_f = { "4" = 0.0 }
`
	st, err := Parse([]byte(cfg), "c.toml")
	if err != nil {
		t.Fatal(err)
	}
	if len(st.Models) != 2 {
		t.Fatalf("%d models, want 2", len(st.Models))
	}
	for k, want := range []int{best, 0} {
		pm := st.Models[k].Params.Pump
		c := cs[want]
		if !pm.OnlyNamed || pm.UpperLevels[[2]float64{c.F1u, c.Fu}] != 1 {
			t.Errorf("model %d: pump %+v, want only the upper level of component %d (%s)", k, pm, want, labels[want])
		}
	}
	if !strings.Contains(string(st.Resolved), "component = [") {
		t.Errorf("resolved config lacks the component list:\n%s", st.Resolved)
	}
	// The resolved config gives the same models.
	st2, err := Parse(st.Resolved, "resolved.toml")
	if err != nil || st2.Hash != st.Hash {
		t.Errorf("resolved config: %v (hash %s vs %s)", err, st2.Hash, st.Hash)
	}

	// F1,F pump weights.
	c := cs[best]
	key := halfText(c.F1u) + "," + halfText(c.Fu)
	st, err = Parse([]byte(`species = "synthetic-j6-5"
[field]
strength = "1 G"
[pump]
kind = "hyperfine"
upper_f = { "`+key+`" = 3.0 }
`), "c.toml")
	if err != nil {
		t.Fatal(err)
	}
	if w := st.Models[0].Params.Pump.UpperLevels[[2]float64{c.F1u, c.Fu}]; w != 3 {
		t.Errorf("upper_f %s: weight %g, want 3", key, w)
	}

	// Bad input: exit-2 errors naming the key.
	for _, bad := range []struct{ pump, want string }{
		{`kind = "hyperfine"` + "\ncomponent = \"6-5\"", "ambiguous"},
		{`kind = "isotropic"` + "\ncomponent = 0", `needs pump.kind = "hyperfine"`},
		{`kind = "hyperfine"` + "\ncomponent = 999", "out of range"},
		{`kind = "hyperfine"` + "\nupper_f = { \"1/2,9\" = 1.0 }", "no upper level with F1 = 1/2, F = 9"},
	} {
		_, err := Parse([]byte("species = \"synthetic-j6-5\"\n[field]\nstrength = \"1 G\"\n[pump]\n"+bad.pump+"\n"), "c.toml")
		var e *Error
		if err == nil || !strings.Contains(err.Error(), bad.want) || !asError(err, &e) || !strings.HasPrefix(e.Key, "pump.") {
			t.Errorf("%q: got %v, want %q at a pump key", bad.pump, err, bad.want)
		}
	}
}

func asError(err error, e **Error) bool {
	x, ok := err.(*Error)
	*e = x
	return ok
}

// line.reference: velocity 0 at the chosen OH line (LAMDA 1665.402 MHz);
// an unknown one is refused at its key.
func TestLineReference(t *testing.T) {
	st, err := Parse([]byte("species = \"oh-like-main\"\n[field]\nstrength = \"3 mG\"\n[line]\nreference = \"1-1\"\nspan = \"5 km/s\"\n"), "c.toml")
	if err != nil {
		t.Fatal(err)
	}
	sp := st.Models[0].Params.Species
	if d := sp.Frequency - 1665.402e6; d > 1e3 || d < -1e3 {
		t.Errorf("reference frequency %.6f MHz, want 1665.402", sp.Frequency/1e6)
	}
	if !strings.Contains(string(st.Resolved), `reference = "1-1"`) {
		t.Errorf("resolved config lacks the reference:\n%s", st.Resolved)
	}
	_, err = Parse([]byte("species = \"oh-like-main\"\n[field]\nstrength = \"3 mG\"\n[line]\nreference = \"3-1\"\n"), "c.toml")
	var e *Error
	if err == nil || !asError(err, &e) || e.Key != "line.reference" || !strings.Contains(e.Allowed, `"2-2"`) {
		t.Errorf("unknown reference: %v", err)
	}
}
