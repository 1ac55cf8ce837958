package main

import (
	"bytes"
	"encoding/csv"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"maserpol/runs/ecsv"
	"maserpol/runs/interpret"
)

// coarseGrid keeps the factor grid small in tests: three angles, one
// checkpoint per decade (seconds, not minutes).
var coarseGrid = []string{"--grid-theta", "0,45,85 deg", "--grid-per-decade", "1", "--workers", "2"}

// TestFieldCatalogue runs the invented 60-feature catalogue of Corvid-12
// (testdata/field, made by testdata/field/gen from known fields) end to
// end: every feature gets a row, the features made without a field are
// not detected, and the detected ones with R/Gamma <= 1 recover the
// invented B_los: at least 90 % within 4 sigma. The generator used the
// thin-line factor; the full model's factor departs from it by a few per
// cent below R/Gamma = 1 (within the quoted factor spread) and by much
// more when saturated, which is the point of using the model.
func TestFieldCatalogue(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "f.ecsv")
	// The invented scenario takes Gamma = 5 s^-1 (the command's default was 5
	// when the catalogue was made; it now follows run's 1 s^-1): about 30 of
	// its detected features then lie at R/Gamma <= 1.
	args := append([]string{"sio-v1-j1-0", filepath.Join("..", "..", "testdata", "field", "catalogue.ecsv"), "--domega", "3e-3:1e-2 sr",
		"--gamma", "5 s^-1", "--out", out, "--skymap", filepath.Join(dir, "sky")}, coarseGrid...)
	code, stdout, stderr := runCmd(cmdField, args...)
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	tab, err := ecsv.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	if len(tab.Rows) != 60 {
		t.Fatalf("%d rows, want 60", len(tab.Rows))
	}
	for _, c := range []string{"feature", "A_ms", "A_err_ms", "B_los_mG", "B_los_err_mG", "theta_deg", "B_mG", "B_err_mG", "saturation", "r_over_gomega", "verdict", "detected", "ambiguous"} {
		if tab.Index(c) < 0 {
			t.Errorf("no column %s", c)
		}
	}
	if c, _ := tab.Column("B_los_mG"); c.Unit != "mG" {
		t.Errorf("B_los_mG unit %q", c.Unit)
	}
	if c, _ := tab.Column("detected"); c.Datatype != ecsv.Bool {
		t.Errorf("detected datatype %q, want bool", c.Datatype)
	}
	truth := readTruth(t, filepath.Join("..", "..", "testdata", "field", "truth.csv"))
	names, _ := tab.Strings("feature")
	verdicts, _ := tab.Strings("verdict")
	blos, _ := tab.Floats("B_los_mG")
	berr, _ := tab.Floats("B_los_err_mG")
	det, _ := tab.Bools("detected")
	shi, _ := tab.Floats("saturation_hi")
	var nzero, nd, ndet, good int
	for i, n := range names {
		tr, ok := truth[n]
		if !ok {
			t.Fatalf("feature %s not in truth.csv", n)
		}
		if tr == 0 {
			nzero++
			if verdicts[i] == "not detected" {
				nd++
			}
			continue
		}
		if det[i] && verdicts[i] != "poor fit" && shi[i] <= 1 {
			ndet++
			if math.Abs(blos[i]-tr*1e3) <= 4*berr[i] {
				good++
			}
		}
	}
	if nd != nzero {
		t.Errorf("%d of %d features without a field not detected", nd, nzero)
	}
	if ndet < 30 || float64(good) < 0.9*float64(ndet) {
		t.Errorf("%d of %d detections within 4 sigma of the invented B_los", good, ndet)
	}
	for _, f := range []string{"sky.png", "sky.svg", "sky.pdf"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Error(err)
		}
	}
}

func readTruth(t *testing.T, path string) map[string]float64 {
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	recs, err := r.ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	m := map[string]float64{}
	for _, rec := range recs[1:] {
		x, err := strconv.ParseFloat(rec[3], 64)
		if err != nil {
			t.Fatal(err)
		}
		m[rec[0]] = x
	}
	return m
}

// TestFieldBadInput: bad spectra in a catalogue are listed with the file,
// line and column, the other features still run, and the exit status is 2.
func TestFieldBadInput(t *testing.T) {
	dir := t.TempDir()
	src, err := os.ReadFile(filepath.Join("..", "..", "testdata", "field", "spectra", "C12-02.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(dir, "good.ecsv")
	os.WriteFile(good, src, 0o644)
	lines := strings.Split(string(src), "\n")
	first := 0
	for lines[first] == "" || strings.HasPrefix(lines[first], "#") {
		first++
	}
	first++ // the header row
	edit := func(name string, f func(ls []string) []string) {
		ls := f(append([]string(nil), lines...))
		os.WriteFile(filepath.Join(dir, name), []byte(strings.Join(ls, "\n")), 0o644)
	}
	edit("nan.ecsv", func(ls []string) []string {
		c := strings.Split(ls[first+40], ",")
		c[1] = "nan"
		ls[first+40] = strings.Join(c, ",")
		return ls
	})
	edit("unsorted.ecsv", func(ls []string) []string {
		ls[first+10], ls[first+11] = ls[first+11], ls[first+10]
		return ls
	})
	edit("duplicate.ecsv", func(ls []string) []string {
		ls[first+11] = ls[first+10]
		return ls
	})
	edit("single.ecsv", func(ls []string) []string { return ls[:first+1] })
	edit("badunit.ecsv", func(ls []string) []string {
		for i := range ls[:first] {
			ls[i] = strings.Replace(ls[i], "unit: km / s", "unit: Jy", 1)
		}
		return ls
	})
	edit("noline.ecsv", func(ls []string) []string {
		for i := first; i < len(ls); i++ {
			c := strings.Split(ls[i], ",")
			if len(c) < 3 {
				continue
			}
			c[1] = strconv.FormatFloat(0.005*math.Sin(float64(i*7)), 'g', 6, 64)
			ls[i] = strings.Join(c, ",")
		}
		return ls
	})
	cat := "feature,spectrum,tb [K],ml\nok1,good.ecsv,1e9,0.1\nnan,nan.ecsv,1e9,0.1\nunsorted,unsorted.ecsv,1e9,0.1\ndup,duplicate.ecsv,1e9,0.1\nsingle,single.ecsv,1e9,0.1\nnoline,noline.ecsv,1e9,0.1\nmissing,nowhere.ecsv,1e9,0.1\nbadml,good.ecsv,1e9,1.7\nbadunit,badunit.ecsv,1e9,0.1\n"
	cp := filepath.Join(dir, "cat.csv")
	os.WriteFile(cp, []byte(cat), 0o644)
	out := filepath.Join(dir, "f.ecsv")
	code, stdout, stderr := runCmd(cmdField, append([]string{"sio-v1-j1-0", cp, "--domega", "1e-2 sr", "--out", out, "--plots", filepath.Join(dir, "plots")}, coarseGrid...)...)
	if code != 2 {
		t.Fatalf("exit %d, want 2\n%s\n%s", code, stdout, stderr)
	}
	for _, want := range []string{
		"nan.ecsv:", "column I", // NaN channel: file, line, column
		"unsorted.ecsv:", "not strictly monotonic",
		"duplicate.ecsv:",
		"single.ecsv", "channels",
		"noline", "no line",
		"nowhere.ecsv",
		"cat.csv:9: column ml",
		"badunit.ecsv: column velocity_kms",
		"8 of 9 features had bad input",
	} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr lacks %q:\n%s", want, stderr)
		}
	}
	for _, f := range []string{"catalogue.png", "feature-ok1.png", "feature-badml.png"} {
		if _, err := os.Stat(filepath.Join(dir, "plots", f)); (err == nil) != (f != "feature-badml.png") {
			t.Errorf("figure %s: %v", f, err)
		}
	}
	tab, err := ecsv.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	v, _ := tab.Strings("verdict")
	if len(v) != 9 || v[0] == "bad input" || v[1] != "bad input" {
		t.Errorf("verdicts %q: want the good feature measured and the bad ones listed", v)
	}

	// A unit that does not convert: the whole catalogue is refused.
	os.WriteFile(cp, []byte("feature,spectrum,tb [Jy]\nok1,good.ecsv,1e9\n"), 0o644)
	code, _, stderr = runCmd(cmdField, append([]string{"sio-v1-j1-0", cp, "--domega", "1e-2 sr", "--out", out}, coarseGrid...)...)
	if code != 2 || !strings.Contains(stderr, "cat.csv: column tb") || !strings.Contains(stderr, "does not convert") {
		t.Errorf("unit Jy for tb: exit %d\n%s", code, stderr)
	}
	// A catalogue without a spectrum column is a spectrum file; one
	// without a velocity column then names it.
	os.WriteFile(cp, []byte("feature,I,V\na,1,2\n"), 0o644)
	code, _, stderr = runCmd(cmdField, append([]string{"sio-v1-j1-0", cp, "--domega", "1e-2 sr", "--out", out}, coarseGrid...)...)
	if code != 2 || !strings.Contains(stderr, "cat.csv") {
		t.Errorf("no spectrum or velocity column: exit %d\n%s", code, stderr)
	}
}

// TestPrintIntervals: compare's intervals are printed as plain sentences,
// an unconstrained parameter saying so, and the posterior refused with
// its reason on a grid that is not a full product.
func TestPrintIntervals(t *testing.T) {
	mk := func(name string, x, y float64, c float64) interpret.RunModel {
		return interpret.RunModel{Name: name, Params: []interpret.Param{{Name: "theta_deg", Unit: "deg", Value: x}, {Name: "B_mG", Unit: "mG", Value: y}}}
	}
	models := []interpret.RunModel{mk("a", 30, 1, 0), mk("b", 50, 1, 0), mk("c", 70, 2, 0)}
	fit := func(c float64) []interpret.Fit {
		return []interpret.Fit{{Saturation: 1, Chi2: [4]float64{c}, N: 100, NUsed: 1, RedChi2: c / 97}, {Saturation: 10, Chi2: [4]float64{c + 50}, N: 100, NUsed: 1, RedChi2: (c + 50) / 97}}
	}
	var b strings.Builder
	printIntervals(&b, models, [][]interpret.Fit{fit(150), fit(97), fit(150)})
	for _, want := range []string{"68 %", "theta_deg = 50 deg", "saturation", "not computed", "not a full product", "only inside the grid"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("output lacks %q:\n%s", want, b.String())
		}
	}
}

// TestFieldHyperfineSpectrum: one spectrum of the isolated F=1-1 component
// of the HCN-like preset (levels: -1177.5 kHz, i.e. +3.983 km/s, splitting
// -0.71759 m/s per G), invented with the thin-line relation at B = 10 G,
// theta = 40 deg, far from saturation: field recovers B within 4 sigma
// and 5 % (the full model's unsaturated factor equals the linear value
// within 2 %, TestZeemanFactorThinLimit).
func TestFieldHyperfineSpectrum(t *testing.T) {
	dir := t.TempDir()
	s := interpret.SynthLine{Start: 3983 - 4000, Step: 50, Channels: 161, Peak: 50, Center: 3983, Width: 500,
		B: 10, Theta: 40 * math.Pi / 180, Factor: -0.71759, NoiseI: 0.02, NoiseV: 0.02}
	o, err := s.Draw(rand.New(rand.NewPCG(4, 4)))
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := interpret.WriteObserved(&buf, o, nil); err != nil {
		t.Fatal(err)
	}
	spec := filepath.Join(dir, "hydra-w4-f11.ecsv")
	os.WriteFile(spec, buf.Bytes(), 0o644)
	out := filepath.Join(dir, "f.ecsv")
	code, stdout, stderr := runCmd(cmdField, append([]string{"hcn-like-j1-0", spec, "--component", "1-1", "--doppler", "0.5 km/s",
		"--saturation", "1e-3", "--theta", "40 deg", "--out", out}, append(coarseGrid, "--grid-theta", "30,50 deg")...)...)
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	tab, err := ecsv.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := tab.Floats("B_mG")
	e, _ := tab.Floats("B_err_mG")
	v, _ := tab.Strings("verdict")
	if len(b) != 1 || math.Abs(b[0]-1e4) > 4*e[0] || math.Abs(b[0]/1e4-1) > 0.05 || v[0] != "ok" {
		t.Errorf("B = %v +/- %v mG (%v), want 10 G\n%s", b, e, v, stdout)
	}
}

// TestFieldKestrel9: the invented observation of Kestrel-9
// (testdata/observed) is a full-model spectrum of SiO at B = 5 G, theta =
// 70 deg, projected field at 25 deg, R/Gamma = 10 (study.toml, its
// metadata), with noise. From that one spectrum, with m_l and the EVPA
// measured from its Q and U, field must return B within 2 sigma of 5 G,
// theta within 5 deg of 70 (GKK is the R/Gamma >> 1 limit of the same
// model), and the field perpendicular to the EVPA, which lies within
// 3 deg of 25 + 90 deg.
func TestFieldKestrel9(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "k.ecsv")
	code, stdout, stderr := runCmd(cmdField, "sio-v1-j1-0", filepath.Join("..", "..", "testdata", "observed", "kestrel9-sio.ecsv"),
		"--saturation", "10", "--out", out, "--grid-theta", "45,65,75 deg", "--grid-per-decade", "1", "--workers", "2")
	if code != 0 {
		t.Fatalf("exit %d\n%s\n%s", code, stdout, stderr)
	}
	tab, err := ecsv.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	f := func(c string) float64 {
		x, err := tab.Floats(c)
		if err != nil {
			t.Fatal(err)
		}
		return x[0]
	}
	orient, _ := tab.Strings("field_vs_evpa")
	evpa := math.Mod(f("evpa_deg")+180, 180)
	if b, e := f("B_mG"), f("B_err_mG"); math.Abs(b-5000) > 2*e {
		t.Errorf("B = %.0f +/- %.0f mG, want 5000", b, e)
	}
	if th := f("theta_deg"); math.Abs(th-70) > 5 {
		t.Errorf("theta = %.1f deg, want 70", th)
	}
	if orient[0] != "perpendicular" || math.Abs(evpa-115) > 3 {
		t.Errorf("field %s to the EVPA %.1f deg; want perpendicular, EVPA 115 deg", orient[0], evpa)
	}
}
