package main

import (
	"encoding/json"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"maserpol/config/units"
	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

// astropyPython returns a Python interpreter that has astropy, or "".
func astropyPython() string {
	var cands []string
	if p, err := exec.LookPath("python3"); err == nil {
		cands = append(cands, p)
	}
	cands = append(cands, "/usr/bin/python3") // Debian's, where apt installs python3-astropy
	for _, p := range cands {
		if exec.Command(p, "-c", "import astropy.table").Run() == nil {
			return p
		}
	}
	return ""
}

// writeEveryTable runs each command that writes a table into dir and
// returns the tables written: the run directory's summary, models/ and
// spectra/ tables, diagnose's verdict and details, zeeman-factor's and
// compare's tables, and levels --format ecsv.
func writeEveryTable(t *testing.T, dir string) []string {
	t.Helper()
	cfg := writeConfig(t, dir, "small.toml", strings.Replace(small, "[output]", "[output]\ndir = \""+filepath.ToSlash(filepath.Join(dir, "run"))+"\"", 1))
	steps := [][]string{
		{"run", cfg, "--workers", "2"},
		{"diagnose", "sio-v1-j1-0", "--ml", "0.3", "--ml-err", "0.05", "--saturation", "10:100", "--quick", "--workers", "2",
			"--table", filepath.Join(dir, "verdict.ecsv"), "--details", filepath.Join(dir, "details.ecsv")},
		{"zeeman-factor", "sio-v1-j1-0", "--theta", "30 deg", "--saturation", "3", "--workers", "2", "--table", filepath.Join(dir, "factor.ecsv")},
		{"compare", filepath.Join(dir, "run"), filepath.Join("..", "..", "testdata", "observed", "kestrel9-sio.ecsv"), "--table", filepath.Join(dir, "ranking.ecsv")},
	}
	for _, s := range steps {
		if code, out, errs := maserpol(t, s...); code != 0 {
			t.Fatalf("%q: exit %d\n%s\n%s", s, code, out, errs)
		}
	}
	code, out, errs := maserpol(t, "levels", "hcn-like-j1-0", "--field", "0,1 G", "--format", "ecsv")
	if code != 0 {
		t.Fatalf("levels: exit %d: %s", code, errs)
	}
	lv := filepath.Join(dir, "levels.ecsv")
	if err := os.WriteFile(lv, []byte(out), 0o644); err != nil {
		t.Fatal(err)
	}
	files := []string{lv, filepath.Join(dir, "run", "summary.ecsv"), filepath.Join(dir, "verdict.ecsv"), filepath.Join(dir, "details.ecsv"),
		filepath.Join(dir, "factor.ecsv"), filepath.Join(dir, "ranking.ecsv")}
	for _, sub := range []string{"models", "spectra"} {
		m, _ := filepath.Glob(filepath.Join(dir, "run", sub, "*.ecsv"))
		if len(m) == 0 {
			t.Fatalf("no tables in %s", sub)
		}
		files = append(files, m[0])
	}
	// Nothing else in the run directory looks like a table.
	all, _ := filepath.Glob(filepath.Join(dir, "run", "*.csv"))
	if len(all) > 0 {
		t.Errorf("run directory has .csv files that astropy would not read as ECSV: %v", all)
	}
	return files
}

// Every table the program writes opens in astropy with no format argument,
// with the units and datatypes the program declares (outside check: the
// astropy implementation of ECSV 1.0, Debian python3-astropy; script in
// testdata/astropy_read.py). Units must also parse in our own unit table
// where they are ones a user may type.
func TestTables(t *testing.T) {
	dir := t.TempDir()
	files := writeEveryTable(t, dir)
	t.Run("astropy", func(t *testing.T) { tablesReadByAstropy(t, files) })
	t.Run("ranking", func(t *testing.T) { rankingParameterColumns(t, dir) })
}

func tablesReadByAstropy(t *testing.T, files []string) {
	py := astropyPython()
	if py == "" {
		t.Skip("astropy not installed (Debian: apt-get install python3-astropy); .ci/run installs it")
	}
	out, err := exec.Command(py, append([]string{filepath.Join("testdata", "astropy_read.py")}, files...)...).CombinedOutput()
	if err != nil {
		t.Fatalf("astropy: %v\n%s", err, out)
	}
	var got map[string]map[string][3]any
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatalf("astropy output: %v\n%s", err, out)
	}
	for _, f := range files {
		tab, err := ecsv.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		seen, ok := got[f]
		if !ok {
			t.Errorf("%s: astropy did not read it", f)
			continue
		}
		if len(seen) != len(tab.Columns) {
			t.Errorf("%s: astropy sees %d columns, file declares %d", f, len(seen), len(tab.Columns))
		}
		for _, c := range tab.Columns {
			s, ok := seen[c.Name]
			if !ok {
				t.Errorf("%s: astropy lacks column %s", f, c.Name)
				continue
			}
			unit, kind, rows := s[0].(string), s[1].(string), int(s[2].(float64))
			if rows != len(tab.Rows) || rows == 0 {
				t.Errorf("%s: astropy reads %d rows, we wrote %d", f, rows, len(tab.Rows))
			}
			if !sameUnit(unit, c.Unit) {
				t.Errorf("%s: column %s: astropy unit %q, declared %q", f, c.Name, unit, c.Unit)
			}
			want := map[string]string{ecsv.Float64: "f", ecsv.Int64: "i", ecsv.Bool: "b", ecsv.String: "U"}[c.Datatype]
			if kind != want && !(c.Datatype == ecsv.String && kind == "O") {
				t.Errorf("%s: column %s (%s): astropy dtype kind %q, want %q", f, c.Name, c.Datatype, kind, want)
			}
			// A column whose name carries a unit suffix has that unit.
			for suf, u := range map[string]string{"_deg": "deg", "_mG": "mG", "_kms": "km / s", "_G": "G", "_khz": "kHz"} {
				if strings.HasSuffix(c.Name, suf) && !strings.Contains(c.Name, "_per_") && c.Unit != u {
					t.Errorf("%s: column %s has unit %q, its name says %q", f, c.Name, c.Unit, u)
				}
			}
		}
	}
}

// sameUnit compares astropy's canonical unit string with the declared one
// (astropy may reorder a composite unit, e.g. "km / (G s)").
func sameUnit(astropy, declared string) bool {
	if astropy == declared {
		return true
	}
	norm := func(s string) string {
		f := strings.FieldsFunc(s, func(r rune) bool { return strings.ContainsRune(" ()", r) })
		slices.Sort(f)
		return strings.Join(f, " ")
	}
	return norm(astropy) == norm(declared)
}

// compare writes one column per model parameter, with its unit, not a
// packed text.
func rankingParameterColumns(t *testing.T, dir string) {
	tab, err := ecsv.ReadFile(filepath.Join(dir, "ranking.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	for col, unit := range map[string]string{"B_mG": "mG", "theta_deg": "deg", "chi_deg": "deg", "shift_kms": "km / s"} {
		i := tab.Index(col)
		if i < 0 || tab.Columns[i].Unit != unit {
			t.Errorf("ranking: column %s with unit %s missing: %+v", col, unit, tab.Columns)
		}
	}
	if tab.Index("parameters") >= 0 {
		t.Error("ranking still packs the parameters into one column")
	}
	th, _ := tab.Floats("theta_deg")
	if len(th) != 6 || !slices.Contains(th, 90) {
		t.Errorf("theta_deg column %v, want the six models' angles", th)
	}
	// --top N prints N ranked rows, not at least ten.
	obs := filepath.Join("..", "..", "testdata", "observed", "kestrel9-sio.ecsv")
	if code, out, errs := maserpol(t, "compare", filepath.Join(dir, "run"), obs, "--top", "2"); code != 0 || !strings.Contains(out, "(4 more models") {
		t.Errorf("--top 2: exit %d, %s\n%s", code, errs, out)
	}
	// Plain CSV only when asked for by the name; other names are refused
	// before any model runs.
	if code, _, errs := maserpol(t, "compare", filepath.Join(dir, "run"), filepath.Join("..", "..", "testdata", "observed", "kestrel9-sio.ecsv"), "--table", filepath.Join(dir, "r.txt")); code != 2 || !strings.Contains(errs, ".ecsv") {
		t.Errorf("--table r.txt: exit %d, %s; want 2 naming .ecsv", code, errs)
	}
	p := filepath.Join(dir, "r.csv")
	if code, _, errs := maserpol(t, "compare", filepath.Join(dir, "run"), filepath.Join("..", "..", "testdata", "observed", "kestrel9-sio.ecsv"), "--table", p); code != 0 {
		t.Fatalf("--table r.csv: exit %d, %s", code, errs)
	}
	b, _ := os.ReadFile(p)
	if !strings.HasPrefix(string(b), "rank,model,B_mG,") || !strings.Contains(string(b), ",False,") && !strings.Contains(string(b), ",True,") {
		t.Errorf("plain CSV: %.200s", b)
	}
}

// The Zeeman diagram at mG fields of a closed-shell species is in Hz (the
// shifts are below 1 kHz), and figures carry a title only with --titles.
func TestZeemanDiagramUnitsAndTitles(t *testing.T) {
	dir := t.TempDir()
	for _, titled := range []bool{false, true} {
		p := filepath.Join(dir, "z.svg")
		args := []string{"levels", "sio-v1-j1-0", "--field", "0:20:5 mG", "--plot", p}
		if titled {
			args = append(args, "--titles")
		}
		if code, _, errs := maserpol(t, args...); code != 0 {
			t.Fatalf("exit %d: %s", code, errs)
		}
		b, _ := os.ReadFile(p)
		if !strings.Contains(string(b), "(Hz)") || strings.Contains(string(b), "(kHz)") {
			t.Error("Zeeman diagram at mG fields not in Hz")
		}
		if strings.Contains(string(b), "Zeeman diagram") != titled {
			t.Errorf("--titles %v: title drawn = %v", titled, !titled)
		}
	}
}

// levels --components lists the zero-field components only; a strength
// cutoff leaves out weak ones and says so; a bad cutoff is exit 2.
func TestLevelsComponents(t *testing.T) {
	code, all, errs := maserpol(t, "levels", "synthetic-j6-5", "--components", "--min-strength", "0")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	if strings.Contains(all, "Field B =") || !strings.Contains(all, "split (Hz/G)") {
		t.Errorf("--components output:\n%s", all)
	}
	_, strong, _ := maserpol(t, "levels", "synthetic-j6-5", "--components", "--min-strength", "0.01")
	if n, m := strings.Count(strong, "\n"), strings.Count(all, "\n"); n >= m || !strings.Contains(strong, "left out:") {
		t.Errorf("cutoff 0.01 keeps %d of %d lines:\n%s", n, m, strong)
	}
	if code, _, errs := maserpol(t, "levels", "synthetic-j6-5", "--min-strength", "2"); code != 2 || !strings.Contains(errs, "0 <= x < 1") {
		t.Errorf("--min-strength 2: exit %d, %s", code, errs)
	}
}

// Flags take bare numbers in their documented unit, as configs do
// (tb = 1e11, solid_angle = 0.01, gamma_upper = 1), and one default decay
// rate serves run, diagnose and zeeman-factor.
func TestFlagsTakeBareNumbers(t *testing.T) {
	lo, hi, err := parseRange("1e11:1e12", units.Temperature, "K", "tb")
	if err != nil || lo != 1e11 || hi != 1e12 {
		t.Errorf("--tb 1e11:1e12: %g, %g, %v", lo, hi, err)
	}
	if lo, hi, err = parseRange("1e-2", units.SolidAngle, "sr", "domega"); err != nil || lo != 1e-2 || hi != 1e-2 {
		t.Errorf("--domega 1e-2: %g, %g, %v", lo, hi, err)
	}
	if lo, _, err = parseRange("1:3 mK", units.Temperature, "K", "tb"); err != nil || math.Abs(lo-1e-3) > 1e-15 {
		t.Errorf("--tb 1:3 mK: %g, %v", lo, err)
	}
	if th, err := parseAngleList("0,30"); err != nil || len(th) != 2 || math.Abs(th[1]-math.Pi/6) > 1e-15 {
		t.Errorf("--theta 0,30: %v, %v", th, err)
	}
	if g, err := units.ParsePlain(defaultGamma(), units.Rate, "s^-1"); err != nil || g != transfer.DefaultGamma {
		t.Errorf("default gamma %q = %g, run uses %g", defaultGamma(), g, transfer.DefaultGamma)
	}
	for _, cmd := range []string{"diagnose", "zeeman-factor"} {
		_, _, errs := maserpol(t, cmd, "-h")
		if !strings.Contains(errs, `(default "`+defaultGamma()+`")`) {
			t.Errorf("%s -h does not show the common default gamma:\n%s", cmd, errs)
		}
	}
}
