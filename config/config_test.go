package config

import (
	"errors"
	"math"
	"os"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
	"maserpol/transfer"
)

// preset is the species the tests use; it is the documented default.
const preset = DefaultSpecies

func mustParse(t *testing.T, doc string) *Study {
	t.Helper()
	st, err := Parse([]byte(doc), "test/study.toml")
	if err != nil {
		t.Fatalf("Parse: %v\n%s", err, doc)
	}
	return st
}

func base(extra string) string {
	return `species = "` + preset + `"
[field]
strength = "30 G"
` + extra
}

// column returns the Number of the named column of every model.
func column(st *Study, name string) []float64 {
	var out []float64
	for _, m := range st.Models {
		for _, v := range m.Values {
			if v.Column == name {
				out = append(out, v.Number)
			}
		}
	}
	return out
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }

func TestSweepForms(t *testing.T) {
	// Expected values are exact arithmetic on the inputs; the tolerance
	// covers the degree/radian round trip (a few ulps).
	const tol = 1e-12
	for _, test := range []struct {
		name   string
		doc    string
		column string
		want   []float64
		swept  []string
	}{
		{"scalar", base("theta = \"30 deg\"\n"), "theta_deg", []float64{30}, nil},
		{"list", base("theta = [\"10 deg\", \"0.5 rad\", \"90 deg\"]\n"), "theta_deg", []float64{10, 0.5 * 180 / math.Pi, 90}, nil},
		{"lin range", base("theta = { from = \"0 deg\", to = \"90 deg\", steps = 4 }\n"), "theta_deg", []float64{0, 30, 60, 90}, nil},
		{"log range", base("[line]\ndoppler = { from = \"0.1 km/s\", to = \"10 km/s\", steps = 3, spacing = \"log\" }\n"),
			"doppler_kms", []float64{0.1, 1, 10}, []string{"doppler_kms"}},
		{"field range in mG", "species = \"" + preset + "\"\n[field]\nstrength = { from = \"10 mG\", to = \"1 G\", steps = 3, spacing = \"log\" }\n",
			"B_mG", []float64{10, 100, 1000}, nil},
		{"int list", base("[line]\nchannels = [64, 128]\n"), "channels", []float64{64, 128}, []string{"channels"}},
		{"int range", base("[line]\nchannels = { from = 100, to = 400, steps = 4 }\n"), "channels", []float64{100, 200, 300, 400}, []string{"channels"}},
		{"plain number list", base("[seed]\ntb = [1, \"10 K\", 100.0]\n"), "tb_K", []float64{1, 10, 100}, []string{"tb_K"}},
		{"dimensionless range", base("[column]\nsaturation = { from = 1.0, to = 1e4, steps = 5, spacing = \"log\" }\n"),
			"saturation", []float64{1, 10, 100, 1000, 1e4}, []string{"saturation"}},
	} {
		t.Run(test.name, func(t *testing.T) {
			st := mustParse(t, test.doc)
			got := column(st, test.column)
			if len(got) != len(test.want) {
				t.Fatalf("got %d values %v, want %v", len(got), got, test.want)
			}
			for i := range got {
				if !near(got[i], test.want[i], tol) {
					t.Errorf("value %d = %.15g, want %.15g", i, got[i], test.want[i])
				}
			}
			if !reflect.DeepEqual(st.Swept, test.swept) {
				t.Errorf("Swept = %v, want %v", st.Swept, test.swept)
			}
		})
	}
}

func TestRandomForms(t *testing.T) {
	for _, test := range []struct {
		name, doc, column string
		lo, hi            float64
		n                 int
	}{
		{"uniform", base("[line]\ndoppler = { dist = \"uniform\", n = 50, seed = 2, from = \"0.5 km/s\", to = \"2 km/s\" }\n"), "doppler_kms", 0.5, 2, 50},
		{"loguniform", base("[seed]\ntb = { dist = \"loguniform\", n = 40, from = \"1 K\", to = \"1e6 K\" }\n"), "tb_K", 1, 1e6, 40},
		{"isotropic", base("theta = { dist = \"isotropic-angle\", n = 30 }\n"), "theta_deg", 0, 180, 30},
		{"isotropic limited", base("theta = { dist = \"isotropic-angle\", n = 30, from = \"10 deg\", to = \"80 deg\" }\n"), "theta_deg", 10, 80, 30},
	} {
		t.Run(test.name, func(t *testing.T) {
			st := mustParse(t, test.doc)
			got := column(st, test.column)
			if len(got) != test.n {
				t.Fatalf("got %d models, want %d", len(got), test.n)
			}
			for _, x := range got {
				if x < test.lo-1e-9 || x > test.hi+1e-9 {
					t.Errorf("value %g outside [%g, %g]", x, test.lo, test.hi)
				}
			}
		})
	}
}

// Latin hypercube: in the uniform scale of each parameter, each of the n
// strata [k/n, (k+1)/n) holds exactly one sample (McKay, Beckman & Conover
// 1979, Technometrics 21, 239: the defining property).
func TestLatinHypercube(t *testing.T) {
	doc := func(seed int) string {
		return base("theta = { dist = \"uniform\", n = 20, seed = " + strconv.Itoa(seed) + ", from = \"0 deg\", to = \"100 deg\" }\n" +
			"[seed]\ntb = { dist = \"loguniform\", n = 20, from = \"1 K\", to = \"1e4 K\" }\n")
	}
	a, b, c := mustParse(t, doc(7)), mustParse(t, doc(7)), mustParse(t, doc(8))
	if len(a.Models) != 20 {
		t.Fatalf("same-n draws must form one axis of 20 models, got %d", len(a.Models))
	}
	if !reflect.DeepEqual(column(a, "theta_deg"), column(b, "theta_deg")) || !reflect.DeepEqual(column(a, "tb_K"), column(b, "tb_K")) {
		t.Error("same seed gave different draws")
	}
	if reflect.DeepEqual(column(a, "theta_deg"), column(c, "theta_deg")) {
		t.Error("different seeds gave the same draws")
	}
	strata := func(name string, u func(float64) float64) {
		seen := make([]bool, 20)
		for _, x := range column(a, name) {
			k := int(math.Floor(u(x) * 20))
			if k < 0 || k >= 20 || seen[k] {
				t.Errorf("%s: stratum %d of value %g empty-or-doubled", name, k, x)
				continue
			}
			seen[k] = true
		}
	}
	strata("theta_deg", func(x float64) float64 { return x / 100 })
	strata("tb_K", func(x float64) float64 { return math.Log10(x) / 4 })
	// The seed of the group is written back for every member.
	if !strings.Contains(string(a.Resolved), "seed = 7, from = \"1 K\"") {
		t.Errorf("resolved config does not carry the group seed:\n%s", a.Resolved)
	}
}

// Directions uniform on the sphere have cos(theta) uniform on [-1, 1]:
// <cos> = 0, <cos^2> = 1/3, P(theta < 60 deg) = (1 - cos 60)/2 = 1/4. For n
// independent draws the standard errors are sqrt(1/3n), sqrt(4/45n) and
// sqrt(3/16n); Latin hypercube only shrinks them, so 4 standard errors of
// the independent case is a safe bound.
func TestIsotropicAngle(t *testing.T) {
	const n = 20000
	st := mustParse(t, base("theta = { dist = \"isotropic-angle\", n = 20000, seed = 11 }\n"))
	var c1, c2, below float64
	for _, m := range st.Models {
		c := math.Cos(m.Params.Theta)
		c1 += c
		c2 += c * c
		if m.Params.Theta < 60*deg {
			below++
		}
	}
	c1, c2, below = c1/n, c2/n, below/n
	if tol := 4 * math.Sqrt(1.0/3/n); math.Abs(c1) > tol {
		t.Errorf("<cos theta> = %g, want 0 +- %g", c1, tol)
	}
	if tol := 4 * math.Sqrt(4.0/45/n); math.Abs(c2-1.0/3) > tol {
		t.Errorf("<cos^2 theta> = %g, want 1/3 +- %g", c2, tol)
	}
	if tol := 4 * math.Sqrt(3.0/16/n); math.Abs(below-0.25) > tol {
		t.Errorf("P(theta < 60 deg) = %g, want 0.25 +- %g", below, tol)
	}
}

func TestProductOrdering(t *testing.T) {
	st := mustParse(t, `species = "`+preset+`"
[field]
strength = ["1 G", "2 G"]
theta = ["30 deg", "60 deg", "90 deg"]
[seed]
tb = { dist = "uniform", n = 2, from = "1 K", to = "2 K" }
`)
	if len(st.Models) != 12 {
		t.Fatalf("%d models, want 2*3*2 = 12", len(st.Models))
	}
	for i, m := range st.Models {
		if m.Index != i {
			t.Errorf("model %d has Index %d", i, m.Index)
		}
		// First axis slowest: strength (6 each), theta (2 each), draws fastest.
		if want := float64(1000 * (1 + i/6)); m.Values[0].Number != want {
			t.Errorf("model %d: B_mG = %g, want %g", i, m.Values[0].Number, want)
		}
		if want := float64(30 * (1 + i/2%3)); !near(m.Values[1].Number, want, 1e-12) {
			t.Errorf("model %d: theta_deg = %g, want %g", i, m.Values[1].Number, want)
		}
		if i%2 == 1 && m.Values[3].Number != st.Models[1].Values[3].Number {
			t.Errorf("model %d: draw index does not repeat with period 2", i)
		}
		cols := []string{m.Values[0].Column, m.Values[1].Column, m.Values[2].Column, m.Values[3].Column}
		if !reflect.DeepEqual(cols, []string{"B_mG", "theta_deg", "chi_deg", "tb_K"}) {
			t.Errorf("columns %v", cols)
		}
	}
	if st.Models[7].Name != "m0007" {
		t.Errorf("name %q, want m0007", st.Models[7].Name)
	}
	if !reflect.DeepEqual(st.Swept, []string{"tb_K"}) {
		t.Errorf("Swept = %v", st.Swept)
	}
}

func TestParams(t *testing.T) {
	st := mustParse(t, `species = "`+preset+`"
[field]
strength = "-25 mG"
theta = "0.5 rad"
chi = "30 deg"
[line]
temperature = 1000
turbulence = "0.3 km/s"
channels = 512
span = "12 km/s"
[rates]
gamma_upper = 5
gamma_lower = "300 min^-1"
[beam]
solid_angle = 0.02
[pump]
kind = "hyperfine"
upper_f = { "1" = 2.0 }
lower_f = { "0/2" = 0.5 }
[seed]
tb = "2 K"
linear = 0.3
circular = -0.2
angle = "45 deg"
[faraday]
electron_density = "1e6 m^-3"
gain_length = "2 au"
[column]
gain = 15
first_checkpoint = 1e-2
[output]
formats = ["pdf"]
plots = false
dir = "out/here"
`)
	p := st.Models[0].Params
	sp, err := species.Resolve(preset)
	if err != nil {
		t.Fatal(err)
	}
	// v_D = sqrt(2kT/m + v_t^2): k = 1.380649e-23 J/K (SI exact), m_u =
	// 1.66053906660e-27 kg (CODATA 2018), written out here independently of
	// the code's constants.
	vD := math.Sqrt(2*1.380649e-23*1000/(sp.Mass*1.66053906660e-27) + 300*300)
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"Field", p.Field, -0.025},
		{"Theta", p.Theta, 0.5},
		{"Chi", p.Chi, math.Pi / 6},
		{"Doppler", p.Doppler, vD},
		{"Temperature", p.Temperature, 1000},
		{"Turbulence", p.Turbulence, 300},
		{"Channels", float64(p.Channels), 512},
		{"Span", p.Span, 12000},
		{"GammaUpper", p.GammaUpper, 5},
		{"GammaLower", p.GammaLower, 5},
		{"BeamSolid", p.BeamSolid, 0.02},
		{"UpperF[1]", p.Pump.UpperF[1], 2},
		{"LowerF[0]", p.Pump.LowerF[0], 0.5},
		{"Seed.Tb", p.Seed.Tb, 2},
		{"Seed.Linear", p.Seed.LinearFraction, 0.3},
		{"Seed.Circular", p.Seed.CircularFraction, -0.2},
		{"Seed.Angle", p.Seed.Angle, math.Pi / 4},
		{"ElectronDensity", p.ElectronDensity, 1},
		{"GainLength", p.GainLength, 2 * 149597870700},
		{"Gain", p.Gain, 15},
		{"Saturation", p.Saturation, 1e4}, // unused with gain; transfer requires > 0
		{"FirstCheckpoint", p.FirstCheckpoint, 1e-2},
	} {
		if !near(c.got, c.want, 1e-12) {
			t.Errorf("%s = %.15g, want %.15g", c.name, c.got, c.want)
		}
	}
	if p.Pump.Kind != 2 || p.Species == nil {
		t.Errorf("pump kind %v, species %v", p.Pump.Kind, p.Species)
	}
	if st.Output.Dir != "out/here" || st.Output.Plots || !reflect.DeepEqual(st.Output.Formats, []string{"pdf"}) {
		t.Errorf("output %+v", st.Output)
	}
	if err := p.Validate(); err != nil {
		t.Errorf("transfer rejects the resolved params: %v", err)
	}
}

func TestDefaults(t *testing.T) {
	st := mustParse(t, base(""))
	if st.Output.Dir != "runs/study" || !st.Output.Plots || !reflect.DeepEqual(st.Output.Formats, []string{"png", "svg"}) {
		t.Errorf("output %+v", st.Output)
	}
	p := st.Models[0].Params
	if p.Theta != math.Pi/2 || p.Doppler != 1000 || p.Channels != 512 || p.Saturation != 1e4 || p.Seed.Tb != 2.725 {
		t.Errorf("defaults %+v", p)
	}
	if len(st.Models) != 1 || st.Models[0].Name != "m0000" || len(st.Swept) != 0 {
		t.Errorf("models %d, swept %v", len(st.Models), st.Swept)
	}
	if len(st.Hash) != 64 {
		t.Errorf("hash %q", st.Hash)
	}
}

func TestErrors(t *testing.T) {
	for _, test := range []struct {
		name    string
		doc     string
		key     string
		line    int
		msg     string // substring of the message
		suggest string // substring of Suggest, or ""
		allowed string // substring of Allowed, or ""
	}{
		{"malformed", "species = \"x\"\n[field\nstrength = 1", "", 2, "malformed TOML", "", ""},
		{"unknown key", base("thta = \"30 deg\"\n"), "field.thta", 4, "unknown key", `"theta"`, "strength"},
		{"unknown table", base("[feild]\ntheta = \"3 deg\"\n"), "feild", 4, "unknown key", `"field"`, ""},
		{"key in wrong table", base("[line]\ntheta = \"30 deg\"\n"), "line.theta", 5, "unknown key", `"field.theta"`, ""},
		{"bad unit", base("theta = \"30 km\"\n"), "field.theta", 4, "unit", "", "deg"},
		{"unknown unit", strings.Replace(base(""), "30 G", "3 furlong", 1), "field.strength", 3, "unknown unit", "", "mG"},
		{"wrong kind unit", base("theta = \"30 km/s\"\n"), "field.theta", 4, "velocity", "", "deg"},
		{"bare angle", base("theta = 30\n"), "field.theta", 4, "no unit", "", "deg"},
		{"theta range", base("theta = \"200 deg\"\n"), "field.theta", 4, "out of range", "", "<= 180 deg"},
		{"theta in list", base("theta = [\"10 deg\", \"-5 deg\"]\n"), "field.theta", 4, "list element 2", "", ">= 0 deg"},
		{"theta range end", base("theta = { from = \"0 deg\", to = \"190 deg\", steps = 3 }\n"), "field.theta.to", 4, "out of range", "", "180"},
		{"negative doppler", base("[line]\ndoppler = \"-1 km/s\"\n"), "line.doppler", 5, "out of range", "", "> 0 km/s"},
		{"few channels", base("[line]\nchannels = 8\n"), "line.channels", 5, "out of range", "", ">= 16"},
		{"many channels", base("[line]\nchannels = 100000\n"), "line.channels", 5, "out of range", "", "<= 65536"},
		{"fractional channels", base("[line]\nchannels = 100.5\n"), "line.channels", 5, "not an integer", "", ""},
		{"zero saturation", base("[column]\nsaturation = 0\n"), "column.saturation", 5, "out of range", "", "> 0"},
		{"saturation and gain", base("[column]\nsaturation = 10.0\ngain = 3.0\n"), "column.gain", 6, "alternatives", "", "either"},
		{"doppler and temperature", base("[line]\ndoppler = \"1 km/s\"\ntemperature = \"300 K\"\n"), "line.temperature", 6, "alternatives", "", ""},
		{"turbulence alone", base("[line]\nturbulence = \"1 km/s\"\n"), "line.turbulence", 5, "without temperature", "", ""},
		{"missing steps", base("theta = { from = \"0 deg\", to = \"90 deg\" }\n"), "field.theta.steps", 4, "steps", "", "steps"},
		{"range typo", base("theta = { from = \"0 deg\", to = \"90 deg\", step = 3 }\n"), "field.theta.step", 4, "unknown key", `"steps"`, ""},
		{"bad spacing", base("theta = { from = \"1 deg\", to = \"90 deg\", steps = 3, spacing = \"geo\" }\n"), "field.theta.spacing", 4, "spacing", "", `"lin", "log"`},
		{"log through zero", base("theta = { from = \"0 deg\", to = \"90 deg\", steps = 3, spacing = \"log\" }\n"), "field.theta", 4, "positive", "", ""},
		{"bad dist", base("theta = { dist = \"normal\", n = 3, from = \"0 deg\", to = \"9 deg\" }\n"), "field.theta.dist", 4, "distribution", "", "isotropic-angle"},
		{"isotropic non-angle", base("[line]\ndoppler = { dist = \"isotropic-angle\", n = 3 }\n"), "line.doppler.dist", 5, "angles only", "", ""},
		{"random integer", base("[line]\nchannels = { dist = \"uniform\", n = 3, from = 16, to = 64 }\n"), "line.channels", 5, "integer", "", ""},
		{"group seeds differ", base("theta = { dist = \"uniform\", n = 3, seed = 1, from = \"0 deg\", to = \"9 deg\" }\n[seed]\ntb = { dist = \"uniform\", n = 3, seed = 2, from = 1, to = 2 }\n"),
			"seed.tb.seed", 6, "share one seed", "", "field.theta"},
		{"seed polarization", base("[seed]\nlinear = 0.9\ncircular = 0.9\n"), "seed.linear", 5, "exceeds 1", "", "<= 1"},
		{"pump kind", base("[pump]\nkind = \"isotropc\"\n"), "pump.kind", 5, "unknown value", `"isotropic"`, "anisotropic"},
		{"population model", base("[populations]\nmodel = \"densty\"\n"), "populations.model", 5, "unknown value", `"density"`, "rates"},
		{"coherence threshold", base("[populations]\ncoherence_threshold = 0.5\n"), "populations.coherence_threshold", 5, "out of range", "", "1e+06"},
		{"format", base("[output]\nformats = [\"png\", \"gif\"]\n"), "output.formats", 5, "unknown value", "", `"svg"`},
		{"species", "species = \"sio-v1-j1-1\"\n[field]\nstrength = \"1 G\"\n", "species", 1, "species", `"` + preset + `"`, "preset"},
		{"missing strength", "species = \"" + preset + "\"\n[field]\ntheta = \"3 deg\"\n", "field.strength", 2, "missing field strength", "", ""},
		{"missing species", "[field]\nstrength = \"1 G\"\n", "species", 0, "missing species", "", ""},
		{"table as scalar", base("[column]\nsaturation = 1e4\n") + "", "", 0, "", "", ""}, // placeholder replaced below
		{"faraday needs length", base("[faraday]\nelectron_density = 10\n"), "faraday.gain_length", 0, "gain length", "", "au"},
		{"first checkpoint", base("[column]\nsaturation = 1e-4\n"), "column.first_checkpoint", 0, "not below", "", "< saturation"},
		{"lower pump", base("[pump]\nlower_ratio = 1.0\n"), "pump.lower_ratio", 5, "uninverted", "", "gamma_lower/gamma_upper"},
		{"bad name", "name = \"a b\"\n" + base(""), "name", 1, "bad name", "", "letters"},
		{"bad F", base("[pump]\nkind = \"hyperfine\"\nupper_f = { \"x\" = 1.0 }\n"), "pump.upper_f.x", 6, "F label", "", "5/2"},
		// SiO J = 1 -> 0 has no nuclear spin: F = J, so the only labels are 1 and 0.
		{"absent upper F", base("[pump]\nkind = \"hyperfine\"\nupper_f = { \"1\" = 1.0, \"7.5\" = 1.0, \"99\" = 2.0 }\n"), "pump.upper_f.7.5", 6, "no upper level with F = 7.5", "", `"1"`},
		// Ortho-water's effective I = 1 with J = 6: F = 5, 6, 7 (F = J + I ... |J - I|).
		{"absent water F", strings.Replace(base("[pump]\nkind = \"hyperfine\"\nupper_f = { \"7.5\" = 1.0 }\n"), preset, "h2o-22", 1), "pump.upper_f.7.5", 6, "F = 7.5", "", `"5", "6", "7"`},
		{"absent lower F", base("[pump]\nkind = \"hyperfine\"\nlower_f = { \"1\" = 1.0 }\n"), "pump.lower_f.1", 6, "no lower level with F = 1", "", `"0"`},
	} {
		if test.name == "table as scalar" {
			test.doc = "species = \"" + preset + "\"\nfield = 3\n"
			test.key, test.line, test.msg, test.allowed = "field", 2, "must be a table", "[field]"
		}
		t.Run(test.name, func(t *testing.T) {
			_, err := Parse([]byte(test.doc), "dir/bad.toml")
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("got %v (%T), want *config.Error", err, err)
			}
			if e.File != "dir/bad.toml" || e.Key != test.key || !strings.Contains(e.Msg, test.msg) {
				t.Errorf("got file %q key %q msg %q; want key %q msg containing %q", e.File, e.Key, e.Msg, test.key, test.msg)
			}
			if test.line != 0 && e.Line != test.line {
				t.Errorf("line %d, want %d (%v)", e.Line, test.line, e)
			}
			if !strings.Contains(e.Suggest, test.suggest) {
				t.Errorf("suggest %q, want %q", e.Suggest, test.suggest)
			}
			if !strings.Contains(e.Allowed, test.allowed) {
				t.Errorf("allowed %q, want it to contain %q", e.Allowed, test.allowed)
			}
			if s := e.Error(); !strings.HasPrefix(s, "dir/bad.toml") {
				t.Errorf("message %q does not start with the file", s)
			}
			if s := e.Error(); strings.Count(s, "(allowed:") > 1 || strings.Contains(s, " a angle") {
				t.Errorf("message %q repeats its allowed clause or misses an article", s)
			}
		})
	}
}

func TestWarnings(t *testing.T) {
	st := mustParse(t, base("[pump]\nalignment = 0.5\nlower_f = { \"0\" = 1.0 }\n[line]\nspan = \"2 km/s\"\n"))
	want := []string{"pump.alignment", "pump.upper_f and pump.lower_f", "line.span"}
	for _, w := range want {
		found := false
		for _, s := range st.Warnings {
			found = found || strings.Contains(s, w)
		}
		if !found {
			t.Errorf("no warning about %s in %q", w, st.Warnings)
		}
	}
	if st := mustParse(t, base("[pump]\nkind = \"anisotropic\"\nalignment = 0.5\n")); len(st.Warnings) > 0 && strings.Contains(strings.Join(st.Warnings, ""), "alignment") {
		t.Errorf("spurious warning %q", st.Warnings)
	}
}

// The resolved config must parse back to the same study and be a fixed
// point (the run directory's config.toml reproduces the run).
func TestResolvedRoundTrip(t *testing.T) {
	dir := t.TempDir()
	for _, doc := range []string{
		base(""),
		base("theta = { dist = \"isotropic-angle\", n = 5, seed = 3 }\nchi = [\"0 deg\", \"45.5 deg\"]\n"),
		`name = "roundtrip"
species = "` + preset + `"
[field]
strength = { from = "10 mG", to = "10 G", steps = 4, spacing = "log" }
[line]
temperature = [300, "1000 K"]
turbulence = "0.2 km/s"
channels = [128, 256]
[pump]
kind = "hyperfine"
upper_f = { "1" = 2 }
lower_f = { "0/2" = 0.5 }
[seed]
tb = { dist = "loguniform", n = 3, seed = 9, from = 1, to = 1e3 }
circular = { dist = "uniform", n = 3, from = -0.1, to = 0.1 }
angle = "1 rad"
[faraday]
electron_density = 3
gain_length = "1e12 m"
[column]
gain = 12
tolerance = 1e-5
[output]
dir = "runs/weird \"name\""
formats = ["svg"]
`,
	} {
		a := mustParse(t, doc)
		path := dir + "/config.toml"
		if err := os.WriteFile(path, a.Resolved, 0o644); err != nil {
			t.Fatal(err)
		}
		b, err := Load(path)
		if err != nil {
			t.Fatalf("resolved config does not parse: %v\n%s", err, a.Resolved)
		}
		if string(a.Resolved) != string(b.Resolved) || a.Hash != b.Hash {
			t.Errorf("resolved config is not a fixed point:\n%s\n---\n%s", a.Resolved, b.Resolved)
		}
		if !reflect.DeepEqual(a.Models, b.Models) || !reflect.DeepEqual(a.Swept, b.Swept) || !reflect.DeepEqual(a.Output, b.Output) {
			t.Errorf("resolved config gives another study:\n%s", a.Resolved)
		}
	}
}

func TestStarterParses(t *testing.T) {
	for _, name := range append([]string{""}, species.Names()...) {
		s, err := Starter(name)
		if err != nil {
			t.Fatalf("Starter(%q): %v", name, err)
		}
		st, err := Parse([]byte(s), "starter.toml")
		if err != nil {
			t.Fatalf("Starter(%q) does not parse: %v\n%s", name, err, s)
		}
		if len(st.Models) != 1 {
			t.Errorf("Starter(%q): %d models", name, len(st.Models))
		}
		// Every key appears, set or commented out.
		for _, sp := range schema() {
			if !strings.Contains(s, "\n"+sp.name+" = ") && !strings.Contains(s, "\n# "+sp.name+" = ") {
				t.Errorf("Starter(%q) lacks key %s", name, sp.path())
			}
		}
	}
	if _, err := Starter("no-such-species"); err == nil {
		t.Error("Starter accepted an unknown species")
	}
}

// StarterNamed names the study and its run directory after the file, and
// picks per-species values that a run can use as they are.
func TestStarterNamed(t *testing.T) {
	for _, c := range []struct{ species, name, want string }{
		{"h2o-22", "water", "water"},
		{"", "my water", "my-water"},
		{"", "", "example"},
		{"", "???", "example"},
	} {
		s, err := StarterNamed(c.species, c.name)
		if err != nil {
			t.Fatal(err)
		}
		st, err := Parse([]byte(s), "elsewhere.toml")
		if err != nil {
			t.Fatalf("StarterNamed(%q, %q) does not parse: %v", c.species, c.name, err)
		}
		if !strings.Contains(s, "\nname = \""+c.want+"\"\n") || st.Output.Dir != "runs/"+c.want {
			t.Errorf("StarterNamed(%q, %q): name/dir %q, want %q and runs/%s", c.species, c.name, st.Output.Dir, c.want, c.want)
		}
	}
	for _, name := range species.Names() {
		s, err := StarterNamed(name, name)
		if err != nil {
			t.Fatal(err)
		}
		p := mustParse(t, s).Models[0].Params
		tr, err := levels.NewTransition(p.Species, p.Field)
		if err != nil {
			t.Fatal(err)
		}
		m, err := transfer.NewModel(tr, p)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		v := m.Velocity()
		// transfer warns below 4 channels per Doppler width.
		if per := p.Doppler / (v[1] - v[0]); per < 4 {
			t.Errorf("%s: %.2g channels per Doppler width", name, per)
		}
		rg := p.Saturation * p.GammaUpper / m.GOmega() // Gamma_u = Gamma_l: the reference Gamma
		switch name {
		case "sio-v1-j1-0", "hcn-like-j1-0", "oh-like-main":
			// Valid over the whole run (physics.md section 4).
			if rg > 0.1 {
				t.Errorf("%s: R/gOmega = %.3g at the end of the run", name, rg)
			}
		default:
			// Valid over most of the run: over at least half of its
			// decades of saturation.
			valid := p.Saturation * 0.1 / rg
			if math.Log(valid/p.FirstCheckpoint) < 0.5*math.Log(p.Saturation/p.FirstCheckpoint) {
				t.Errorf("%s: valid up to saturation %.3g of %.3g only", name, valid, p.Saturation)
			}
		}
		if !strings.Contains(s, "# Validity: ") {
			t.Errorf("%s: starter does not state its validity", name)
		}
	}
	if s, _ := StarterNamed("oh-like-main", ""); !strings.Contains(s, "\nstrength = \"3 mG\"\n") {
		t.Errorf("OH-like starter field is not 3 mG:\n%s", s)
	}
}

// doc.go is the key reference: every key must be documented there.
func TestDocListsEveryKey(t *testing.T) {
	data, err := os.ReadFile("doc.go")
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range schema() {
		if !strings.Contains(string(data), s.path()) {
			t.Errorf("doc.go does not document %s", s.path())
		}
		if s.def != "" {
			decodeDefault(s.def) // panics on a malformed default
		}
	}
}
