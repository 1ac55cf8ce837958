package tomlpos

import "testing"

const doc = `# a study
species = "sio-v1-j1-0"

[field]
strength = "30 G"  # comment with = sign
theta = { from = "0 deg", to = "90 deg", steps = 4 }
chi = [
  "0 deg",
  "45 deg",
]
after = 1

[[spin]]
name = "N"
I = 1.0

[[spin]]
name = "H"
I = 0.5

[line]
"doppler" = "1 km/s"
note = """
x = 1
"""
channels = 256
`

func TestLine(t *testing.T) {
	p := Index([]byte(doc))
	tests := []struct {
		path string
		want int
	}{
		{"species", 2},
		{"field", 4},
		{"field.strength", 5},
		{"field.theta", 6},
		{"field.theta.steps", 6},
		{"field.chi", 7},
		{"field.after", 11},
		{"spin[0].name", 14},
		{"spin[1].I", 19},
		{"spin[1]", 17},
		{"line.doppler", 22},
		{"line.channels", 26},
		{"line.x", 21},    // not a key (inside a string): falls back to the table
		{"field.nope", 4}, // unknown key: its table
		{"nothing.here", 0},
	}
	for _, tc := range tests {
		if got := p.Line(tc.path); got != tc.want {
			t.Errorf("Line(%q) = %d, want %d", tc.path, got, tc.want)
		}
	}
}
