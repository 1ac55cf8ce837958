package runs

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"

	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
	"maserpol/transfer"
)

// oneCheckpoint is a model that stops at its first checkpoint, far below
// saturation, at theta = 90 deg: P_V and V are round-off (as a short
// column, e.g. column.gain = 5, gives). Plotting it once panicked on the
// log axis of the saturation figure.
func oneCheckpoint(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
	tr, err := synthetic(ctx, p)
	if err != nil {
		return nil, err
	}
	cp := tr.Checkpoints[0]
	cp.Saturation, cp.RoverGOmega, cp.Valid = 7e-7, 1.9e-10, true
	cp.PV, cp.Ml = 9e-19, 4.2e-5
	for i := range cp.V {
		cp.V[i] = 1e-19 * cp.I[i]
	}
	tr.Checkpoints = []transfer.Checkpoint{cp}
	return tr, nil
}

const cfgOne = `species = "sio-v1-j1-0"
[field]
strength = "5 G"
[line]
channels = 32
[output]
plots = true
formats = ["svg"]
`

func TestPlotSingleCheckpoint(t *testing.T) {
	dir := t.TempDir()
	rep := execute(t, study(t, cfgOne), dir, Options{Model: oneCheckpoint})
	for _, f := range []string{"saturation.svg", "m0000_spectra.svg"} {
		if _, err := os.Stat(filepath.Join(dir, "plots", f)); err != nil {
			t.Errorf("figure %s not drawn: %v (figures %v, notes %v)", f, err, rep.Figures, rep.Notes)
		}
	}
	svg, _ := os.ReadFile(filepath.Join(dir, "plots", "m0000_spectra.svg"))
	if strings.Contains(string(svg), "e-19") || !strings.Contains(string(svg), "V = 0 (θ = 90 deg)") {
		t.Error("round-off V is not drawn as zero with its reason")
	}
	man, err := ReadManifest(dir)
	if err != nil {
		t.Fatal(err)
	}
	if man.Status != StudyComplete || man.Models[0].Status != StatusDone {
		t.Errorf("manifest status %s, model %s", man.Status, man.Models[0].Status)
	}
}

// A failure to draw figures comes after the tables and the manifest: the
// models stay recorded as done.
func TestPlotFailureKeepsManifest(t *testing.T) {
	dir := t.TempDir()
	blockPlots := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		// A file where plots/ should go makes drawing fail.
		os.WriteFile(filepath.Join(dir, "plots"), []byte("x"), 0o644)
		return synthetic(ctx, p)
	}
	_, err := Execute(context.Background(), study(t, cfgOne), dir, Options{Model: blockPlots})
	var pe *PlotError
	if err == nil || !errors.As(err, &pe) {
		t.Fatalf("error %v, want a PlotError", err)
	}
	man, _ := ReadManifest(dir)
	if man == nil || man.Status != StudyComplete || man.Models[0].Status != StatusDone || man.Finished == "" {
		t.Errorf("manifest after a plotting failure: %+v", man)
	}
}

func TestPlotKeepsOtherFormats(t *testing.T) {
	dir := t.TempDir()
	execute(t, study(t, strings.Replace(cfg2x3, "plots = false", "plots = true\nformats = [\"svg\"]", 1)), dir, Options{})
	pd := filepath.Join(dir, "plots")
	for _, f := range []string{"theta_9.svg", "theta_9.pdf", "notes.svg"} {
		os.WriteFile(filepath.Join(pd, f), []byte("old"), 0o644)
	}
	if _, err := Plot(dir, PlotOptions{Formats: []string{"pdf"}}); err != nil {
		t.Fatal(err)
	}
	for f, want := range map[string]bool{
		"theta.svg": true, "theta.pdf": true, "m0000_spectra.svg": true, "saturation.pdf": true,
		"theta_9.svg": true,  // stale, but not in the requested format
		"theta_9.pdf": false, // stale in the requested format
		"notes.svg":   true,  // not ours
	} {
		if _, err := os.Stat(filepath.Join(pd, f)); (err == nil) != want {
			t.Errorf("%s: present = %v, want %v", f, err == nil, want)
		}
	}
}

func TestSaturationFigureNames(t *testing.T) {
	dir := t.TempDir()
	cfg := strings.Replace(strings.Replace(cfg2x3, `["10 mG", "30 mG"]`, `["10 mG", "3 G"]`, 1), `["30 deg", "60 deg", "90 deg"]`, `["30 deg", "45 deg", "60 deg", "90 deg"]`, 1)
	rep := execute(t, study(t, strings.Replace(cfg, "plots = false", "plots = true\nformats = [\"svg\"]", 1)), dir, Options{})
	// 8 models > 6 curves: one figure per field strength, named by it.
	for _, f := range []string{"saturation_B10mG.svg", "saturation_B3G.svg", "theta.svg"} {
		if _, err := os.Stat(filepath.Join(dir, "plots", f)); err != nil {
			t.Errorf("missing %s (have %v)", f, rep.Figures)
		}
	}
	for _, f := range rep.Figures {
		if !ownFigure().MatchString(filepath.Base(f)) {
			t.Errorf("%s is not matched by ownFigure, so a redraw would not replace it", f)
		}
	}
}

func TestSpectraCarryValidity(t *testing.T) {
	dir := t.TempDir()
	execute(t, study(t, cfg2x3), dir, Options{})
	sum, err := ecsv.ReadFile(filepath.Join(dir, "summary.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	names, _ := sum.Strings("model")
	ck, _ := sum.Floats("checkpoint")
	r, _ := sum.Floats("r_over_gomega")
	ok, _ := sum.Bools("valid")
	sp, err := ecsv.ReadFile(filepath.Join(dir, "spectra", "m0000.ecsv"))
	if err != nil {
		t.Fatal(err)
	}
	sck, _ := sp.Floats("checkpoint")
	sr, err := sp.Floats("r_over_gomega")
	if err != nil {
		t.Fatal(err)
	}
	sok, err := sp.Bools("valid")
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for i := range names {
		if names[i] != "m0000" {
			continue
		}
		for j := range sck {
			if sck[j] == ck[i] {
				n++
				if sr[j] != r[i] || sok[j] != ok[i] {
					t.Fatalf("checkpoint %g: spectra say %g/%v, summary %g/%v", ck[i], sr[j], sok[j], r[i], ok[i])
				}
			}
		}
	}
	if n != len(sck) {
		t.Errorf("%d of %d spectra rows matched a summary checkpoint", n, len(sck))
	}
	man, _ := ReadManifest(dir)
	if strings.Join(man.VariedColumns, ",") != "B_mG,theta_deg" || strings.Join(man.ParameterColumns, ",") != "B_mG,theta_deg,chi_deg" {
		t.Errorf("manifest columns: parameter %v, varied %v", man.ParameterColumns, man.VariedColumns)
	}
}

func TestParamTag(t *testing.T) {
	for _, c := range []struct {
		p    param
		want string
	}{
		{param{ecsv.Column{Name: "B_mG", Unit: "mG"}, 3000}, "B3G"},
		{param{ecsv.Column{Name: "B_mG", Unit: "mG"}, 300}, "B300mG"},
		{param{ecsv.Column{Name: "B_mG", Unit: "mG"}, -1500}, "B-1.5G"},
		{param{ecsv.Column{Name: "doppler_kms", Unit: "km / s"}, 0.8}, "vD0.8kms"},
		{param{ecsv.Column{Name: "theta_deg", Unit: "deg"}, 54.7}, "theta54.7deg"},
	} {
		if got := paramTag(c.p); got != c.want {
			t.Errorf("paramTag(%v) = %q, want %q", c.p, got, c.want)
		}
	}
}

// A figure with nothing to draw is skipped with a note; the others are
// drawn and the run succeeds.
func TestPlotSkipsEmptyFigure(t *testing.T) {
	nanPol := func(ctx context.Context, p transfer.Params) (*transfer.Trajectory, error) {
		tr, err := synthetic(ctx, p)
		for i := range tr.Checkpoints {
			tr.Checkpoints[i].Ml, tr.Checkpoints[i].PV = math.NaN(), math.NaN()
		}
		return tr, err
	}
	dir := t.TempDir()
	rep := execute(t, study(t, cfgOne), dir, Options{Model: nanPol})
	if len(rep.Notes) != 1 || !strings.Contains(rep.Notes[0], "saturation skipped") {
		t.Errorf("notes %q", rep.Notes)
	}
	if _, err := os.Stat(filepath.Join(dir, "plots", "m0000_spectra.svg")); err != nil {
		t.Error(err)
	}
}

// A study of random draws gets one spread figure of m_l and P_V against
// saturation instead of figures of six arbitrary curves, and its theta
// figure is one set of points, not a legend entry per model. Every PNG
// panel shows ink; Ghostscript renders every PDF and EPS (outside check:
// the Ghostscript interpreter; skipped when gs is absent).
func TestPlotRandomStudy(t *testing.T) {
	const cfg = `species = "sio-v1-j1-0"
[field]
strength = "1 G"
theta = { dist = "isotropic-angle", n = 5, seed = 3 }
chi = { dist = "uniform", from = "0 deg", to = "90 deg", n = 5 }
[line]
channels = 32
[output]
plots = false
`
	dir := t.TempDir()
	execute(t, study(t, cfg), dir, Options{})
	var figs []*figures.Stack
	var paths [][]string
	out, err := Plot(dir, PlotOptions{Formats: []string{"png", "pdf", "eps"}, saved: func(f *figures.Stack, p []string) {
		figs, paths = append(figs, f), append(paths, p)
	}})
	if err != nil {
		t.Fatal(err)
	}
	names := map[string]bool{}
	for _, p := range out {
		names[filepath.Base(p)] = true
	}
	if !names["saturation_spread.png"] || !names["theta.png"] {
		t.Fatalf("figures %v", out)
	}
	for n := range names {
		if strings.HasPrefix(n, "saturation_") && !strings.HasPrefix(n, "saturation_spread") {
			t.Errorf("random study drew %s", n)
		}
	}
	for i, f := range figs {
		if f.Title != "" {
			t.Errorf("%s: title %q drawn by default", paths[i][0], f.Title)
		}
		if strings.HasSuffix(paths[i][0], "theta.png") {
			// chi varies: no EVPA against theta, and one series of points.
			if f.Panels[1].YLabel == "EVPA (deg)" {
				t.Error("EVPA drawn against theta while chi varies")
			}
			if n := len(f.Panels[0].Curves); n > 2 {
				t.Errorf("theta figure of a random study has %d series", n)
			}
		}
		empty, err := figures.EmptyPanels(paths[i][0], f)
		if err != nil || len(empty) > 0 {
			t.Errorf("%s: empty panels %v (%v)", paths[i][0], empty, err)
		}
	}
	if _, err := exec.LookPath("gs"); err != nil {
		t.Skip("Ghostscript not installed; .ci/run installs it")
	}
	for _, p := range out {
		// The study figures and one model's (the others are alike).
		if b := filepath.Base(p); !strings.HasPrefix(b, "saturation") && !strings.HasPrefix(b, "theta") && !strings.HasPrefix(b, "m0000") {
			continue
		}
		if ext := filepath.Ext(p); ext == ".pdf" || ext == ".eps" {
			args := []string{"-q", "-dSAFER", "-dBATCH", "-dNOPAUSE", "-dPDFSTOPONERROR", "-sDEVICE=nullpage"}
			if ext == ".eps" {
				args = append(args, "-dEPSCrop")
			}
			if msg, err := exec.Command("gs", append(args, p)...).CombinedOutput(); err != nil || len(strings.TrimSpace(string(msg))) > 0 {
				t.Errorf("gs %s: %v %s", filepath.Base(p), err, msg)
			}
		}
	}
}

// P_V is drawn with the sign of A in V = A dI/dv: opposite for theta and
// 180 deg - theta (B cos theta changes sign), so the field direction shows.
func TestSignedPV(t *testing.T) {
	v := []float64{-2, -1, 0, 1, 2}
	i := []float64{0.1, 0.5, 1, 0.5, 0.1}
	dIdv := []float64{0.4, 0.45, 0, -0.45, -0.4}
	for _, a := range []float64{2, -3} {
		V := make([]float64, len(v))
		for k := range V {
			V[k] = a * dIdv[k]
		}
		if s := signOfV(v, i, V); s != math.Copysign(1, a) {
			t.Errorf("A = %g: sign %g", a, s)
		}
	}
	if signOfV(v, i, make([]float64, 5)) != 0 {
		t.Error("V = 0 has a sign")
	}
	cfg := strings.Replace(cfg2x3, `["30 deg", "60 deg", "90 deg"]`, `["30 deg", "150 deg"]`, 1)
	dir := t.TempDir()
	execute(t, study(t, cfg), dir, Options{})
	var pv []figures.Curve
	if _, err := Plot(dir, PlotOptions{Formats: []string{"png"}, saved: func(f *figures.Stack, p []string) {
		if strings.Contains(p[0], "saturation") {
			pv = append(pv, f.Panels[1].Curves...)
		}
	}}); err != nil {
		t.Fatal(err)
	}
	pos, neg := 0, 0
	for _, c := range pv {
		for _, y := range c.Y {
			if y > 0 {
				pos++
			} else if y < 0 {
				neg++
			}
		}
	}
	if pos == 0 || neg == 0 {
		t.Errorf("P_V of theta = 30 and 150 deg: %d positive, %d negative points; want both", pos, neg)
	}
}

// A model that ends within 3 % of a grid point reaches it (a column stops
// at R/Gamma = 99.98 for a target of 100); beyond that it does not.
func TestInterpLogEnds(t *testing.T) {
	x, y := []float64{0.001, 1, 99.98}, []float64{0, 0.1, 0.3}
	if v, ok := interpLog(x, y, 100); !ok || v != 0.3 {
		t.Errorf("at 100: %g %v", v, ok)
	}
	if _, ok := interpLog(x, y, 110); ok {
		t.Error("110 counted as reached")
	}
	if v, ok := interpLog(x, y, math.Sqrt(0.001)); !ok || math.Abs(v-0.05) > 1e-12 {
		t.Errorf("midpoint in log: %g", v)
	}
}

// TestPerModelFiguresOnlyForSmallStudies: a study of more than
// MaxModelFigures models gets the study figures but no per-model ones,
// with a note saying how to draw them; PlotOptions.Models draws them.
func TestPerModelFiguresOnlyForSmallStudies(t *testing.T) {
	dir := t.TempDir()
	cfg := strings.Replace(strings.Replace(cfg2x3, `["10 mG", "30 mG"]`, `["10 mG", "30 mG", "100 mG", "300 mG", "1 G", "3 G"]`, 1), `["30 deg", "60 deg", "90 deg"]`, `["30 deg", "50 deg", "70 deg", "90 deg"]`, 1)
	rep := execute(t, study(t, strings.Replace(cfg, "plots = false", "plots = true\nformats = [\"svg\"]", 1)), dir, Options{})
	perModel := func(figs []string) (n int) {
		for _, f := range figs {
			if strings.Contains(filepath.Base(f), "_spectra.") || strings.Contains(filepath.Base(f), "_evolution.") {
				n++
			}
		}
		return n
	}
	if n := perModel(rep.Figures); n != 0 || len(rep.Figures) == 0 {
		t.Errorf("24 models: %d per-model figures of %d", n, len(rep.Figures))
	}
	if !strings.Contains(strings.Join(rep.Notes, " "), "per-model figures skipped for 24 models") {
		t.Errorf("no note about the skipped figures: %q", rep.Notes)
	}
	// Without per-model figures the study figures still get the sign of
	// P_V of every model (from the spectra alone).
	sum, err := ecsv.ReadFile(SummaryPath(dir))
	if err != nil {
		t.Fatal(err)
	}
	models, err := readSummary(sum)
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range models {
		if err := plotSpectra(dir, m, nil); err != nil {
			t.Fatal(err)
		}
		if len(m.pvSign) != len(m.sat) {
			t.Fatalf("model %s: %d signs for %d checkpoints", m.name, len(m.pvSign), len(m.sat))
		}
	}
	figs, err := Plot(dir, PlotOptions{Formats: []string{"svg"}, Models: true})
	if err != nil {
		t.Fatal(err)
	}
	if n := perModel(figs); n != 48 {
		t.Errorf("with Models: %d per-model figures, want 48", n)
	}
}

// TestParallelFiguresMatchSerial: figures drawn on several workers are the
// same files, byte for byte, in the same order, with the same notes, as
// drawn on one; the progress counts every figure. Run with -race, it also
// checks that gonum/plot and the Scripts text handler draw concurrently
// without data races (shared font cache), that the study figures' one job
// per format draws its own copy, and, for a study without per-model
// figures, that the pooled pass reading the sign of P_V from the spectra
// touches only its own model.
func TestParallelFiguresMatchSerial(t *testing.T) {
	over16 := strings.NewReplacer(`["10 mG", "30 mG"]`, `["10 mG", "30 mG", "100 mG"]`, `chi = "10 deg"`, `chi = ["10 deg", "40 deg"]`).Replace(cfg2x3)
	cases := []struct {
		name     string
		cfg      string
		files    int      // figures x formats
		progress []string // progress lines that must appear
	}{
		// 6 models x (spectra + evolution) + saturation + theta.
		{"per-model figures", cfg2x3, 2 * 14, []string{"maserpol: figures [12/12] ", "maserpol: figures [2/2] "}},
		// 18 models: saturation split by B (three figures) + theta.
		{"study figures only", over16, 2 * 4, []string{"maserpol: figures [4/4] "}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			execute(t, study(t, c.cfg), dir, Options{})
			draw := func(workers int) (files []string, data map[string][]byte, notes []string, progress string) {
				var buf strings.Builder
				figs, err := Plot(dir, PlotOptions{Formats: []string{"png", "svg"}, Workers: workers, Progress: &buf,
					Note: func(n string) { notes = append(notes, n) }})
				if err != nil {
					t.Fatal(err)
				}
				data = map[string][]byte{}
				for _, f := range figs {
					b, err := os.ReadFile(f)
					if err != nil {
						t.Fatal(err)
					}
					data[f] = b
				}
				ents, _ := os.ReadDir(filepath.Join(dir, "plots"))
				if len(ents) != len(figs) {
					t.Errorf("workers=%d: %d files in plots/, %d returned", workers, len(ents), len(figs))
				}
				return figs, data, notes, buf.String()
			}
			f1, d1, n1, p1 := draw(1)
			f4, d4, n4, p4 := draw(4)
			if strings.Join(f1, "\n") != strings.Join(f4, "\n") {
				t.Fatalf("files differ:\n%v\n%v", f1, f4)
			}
			if strings.Join(n1, "\n") != strings.Join(n4, "\n") {
				t.Errorf("notes differ: %q, %q", n1, n4)
			}
			for _, f := range f1 {
				if !bytes.Equal(d1[f], d4[f]) {
					t.Errorf("%s differs between 1 and 4 workers", filepath.Base(f))
				}
			}
			if len(f1) != c.files {
				t.Errorf("%d files, want %d: %v", len(f1), c.files, f1)
			}
			for _, p := range []string{p1, p4} {
				for _, want := range c.progress {
					if !strings.Contains(p, want) {
						t.Errorf("progress line %q missing:\n%s", want, p)
					}
				}
			}
		})
	}
}

// TestPlotCancelled: a cancelled context stops the drawing with its error.
func TestPlotCancelled(t *testing.T) {
	dir := t.TempDir()
	execute(t, study(t, cfg2x3), dir, Options{})
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	figs, err := PlotContext(ctx, dir, PlotOptions{Formats: []string{"svg"}, Workers: 2})
	if !errors.Is(err, context.Canceled) || len(figs) != 0 {
		t.Errorf("cancelled: %v, %d figures", err, len(figs))
	}
}
