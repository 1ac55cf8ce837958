package config

import (
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// FuzzParse: Parse never panics, reports every refusal as an *Error
// naming the file, and what it accepts has a resolved config that parses
// again to the same study (same hash, same models): the resolved-config
// round trip that makes a run directory's config.toml runnable anywhere.
func FuzzParse(f *testing.F) {
	seeds, _ := filepath.Glob("../cmd/maserpol/demo/*.toml")
	seeds = append(seeds, "../testdata/observed/study.toml")
	for _, p := range seeds {
		if data, err := os.ReadFile(p); err == nil {
			f.Add(data)
		}
	}
	for _, s := range []string{
		"species = \"sio-v1-j1-0\"\n[field]\nstrength = \"30 G\"\n",
		"species = \"h2o-22\"\n[field]\nstrength = [\"10 mG\", \"30 mG\"]\ntheta = { from = \"10 deg\", to = \"80 deg\", steps = 3 }\n[pump]\nkind = \"hyperfine\"\nupper_f = { \"7\" = 2 }\n",
		"species = \"sio-v1-j1-0\"\n[field]\nstrength = \"1 G\"\ntheta = { dist = \"isotropic-angle\", n = 4, seed = 3 }\n[line]\ntemperature = \"1000 K\"\n[column]\ngain = 5.0\n",
		"[field\nstrength = \"1 G\"\n",
		"species = [\"a\"\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 4096 {
			return // a config is short; long inputs only slow the search
		}
		st, err := parseLimited(data, "fuzz.toml", 64)
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.File != "fuzz.toml" || e.Msg == "" {
				t.Fatalf("refusal is not a config error naming the file: %#v", err)
			}
			return
		}
		if len(st.Models) == 0 || st.Hash == "" {
			t.Fatalf("accepted config without models or hash")
		}
		again, err := parseLimited(st.Resolved, "fuzz.toml", 64)
		if err != nil {
			t.Fatalf("resolved config does not parse: %v\n%s", err, st.Resolved)
		}
		if again.Hash != st.Hash || len(again.Models) != len(st.Models) {
			t.Fatalf("resolved config parses to another study (hash %s vs %s, %d vs %d models)\n%s\n---\n%s",
				again.Hash, st.Hash, len(again.Models), len(st.Models), st.Resolved, again.Resolved)
		}
		for i := range st.Models {
			if again.Models[i].Params.Field != st.Models[i].Params.Field || again.Models[i].Params.Theta != st.Models[i].Params.Theta {
				t.Fatalf("model %d differs after the round trip", i)
			}
		}
	})
}
