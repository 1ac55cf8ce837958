package config

import "testing"

// BenchmarkParseStudy parses and expands a 2000-model study (a 10 x 200
// product with a two-parameter Latin hypercube).
func BenchmarkParseStudy(b *testing.B) {
	doc := []byte(`species = "` + DefaultSpecies + `"
[field]
strength = { from = "1 G", to = "100 G", steps = 10, spacing = "log" }
theta = { dist = "isotropic-angle", n = 200, seed = 4 }
[seed]
tb = { dist = "loguniform", n = 200, from = 1, to = 1e4 }
`)
	for b.Loop() {
		st, err := Parse(doc, "bench.toml")
		if err != nil || len(st.Models) != 2000 {
			b.Fatal(err)
		}
	}
}
