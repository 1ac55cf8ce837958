package interpret

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"maserpol/config"
	"maserpol/runs"
	"maserpol/runs/ecsv"
	"maserpol/runs/figures"
)

const obsDir = "../../testdata/observed"

// TestRankRecoversInventedObservation: kestrel9-sio.ecsv was made by
// testdata/observed/gen from one model of study.toml (its metadata holds
// the truth); ranking every model of that study must put the true model
// first, at the true checkpoint, with the shift within a tenth of a
// channel (0.01 km/s; the noise is 0.4 % of the peak, so the shift is
// determined far better) and the scale within 1 %.
func TestRankRecoversInventedObservation(t *testing.T) {
	st, err := config.Load(filepath.Join(obsDir, "study.toml"))
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "run")
	if _, err := runs.Execute(context.Background(), st, dir, runs.Options{Workers: 2, NoPlots: true}); err != nil {
		t.Fatal(err)
	}
	models, warn, err := ReadRunDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(warn) > 0 {
		t.Errorf("warnings: %q", warn)
	}
	path := filepath.Join(obsDir, "kestrel9-sio.ecsv")
	obs, err := ReadObserved(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tab, err := ecsv.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	meta := func(k string) float64 {
		s, ok := tab.MetaValue(k)
		if !ok {
			t.Fatalf("no %s in metadata", k)
		}
		x, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatal(err)
		}
		return x
	}
	trueModel, _ := tab.MetaValue("true_model")
	rk := Rank(obs, models, FitOptions{})
	best := rk[0]
	// The figure: data as points with error bars, models named by the
	// parameters that tell them apart, not by m0002.
	fig := CompareFigure(obs, rk[:2], "")
	for _, pn := range fig.Panels {
		if c := pn.Curves[0]; len(c.YErr) != obs.Channels() || !c.NoLine {
			t.Errorf("%s: observed data drawn without error bars or as a line", pn.YLabel)
		}
	}
	for _, c := range fig.Panels[0].Curves[1:] {
		if !strings.Contains(c.Label, "θ = ") || strings.Contains(c.Label, "m000") || !strings.Contains(c.Label, "χ^2_r") {
			t.Errorf("model legend %q", c.Label)
		}
	}
	paths, err := fig.Save(filepath.Join(t.TempDir(), "best"), []string{"png"})
	if err != nil {
		t.Fatal(err)
	}
	if e, err := figures.EmptyPanels(paths[0], fig); err != nil || len(e) > 0 {
		t.Errorf("empty panels %v (%v)", e, err)
	}
	if best.Model.Name != trueModel {
		t.Errorf("best model %s, want %s (ranking: %v)", best.Model.Name, trueModel, names(rk))
	}
	if best.Best.Checkpoint != int(meta("true_checkpoint")) {
		t.Errorf("best checkpoint %d, want %v", best.Best.Checkpoint, meta("true_checkpoint"))
	}
	if d := best.Best.Shift/1e3 - meta("true_shift_kms"); math.Abs(d) > 0.01 {
		t.Errorf("shift %.4f km/s, want %v", best.Best.Shift/1e3, meta("true_shift_kms"))
	}
	if r := best.Best.Scale / meta("true_scale"); math.Abs(r-1) > 0.01 {
		t.Errorf("scale %.4f, want %v", best.Best.Scale, meta("true_scale"))
	}
	// With the true errors the best reduced chi-square is about 1 (N = 480,
	// its sd is sqrt(2/477) = 0.065; 0.7..1.4 allows 5 sd).
	if c := best.Best.RedChi2; c < 0.7 || c > 1.4 {
		t.Errorf("best reduced chi-square %.3f, want about 1", c)
	}
	if len(rk) > 1 && !(rk[1].Best.RedChi2 > 2*best.Best.RedChi2) {
		t.Errorf("second model %s at reduced chi-square %.3f is not clearly worse than %.3f", rk[1].Model.Name, rk[1].Best.RedChi2, best.Best.RedChi2)
	}
}

func names(rk []Ranked) []string {
	var s []string
	for _, r := range rk {
		s = append(s, r.Model.Name+"="+strconv.FormatFloat(r.Best.RedChi2, 'g', 4, 64))
	}
	return s
}

func TestReadObservedErrors(t *testing.T) {
	head := "velocity [km/s],I [K],Q [K],U [K],V [K]\n"
	rows := func(f func(i int) string) string {
		var b strings.Builder
		for i := 0; i < 20; i++ {
			b.WriteString(f(i))
		}
		return b.String()
	}
	good := func(i int) string { return strconv.Itoa(i) + ",1,0,0,0\n" }
	for _, tc := range []struct {
		name, text, want string
	}{
		{"missing velocity", "I [K],Q [K],U [K],V [K]\n" + rows(func(i int) string { return "1,0,0,0\n" }), "no velocity column"},
		{"missing V", "velocity [km/s],I [K],Q [K],U [K]\n" + rows(func(i int) string { return strconv.Itoa(i) + ",1,0,0\n" }), "no Stokes V column"},
		{"non-monotonic", head + rows(func(i int) string {
			if i == 7 {
				return "3,1,0,0,0\n"
			}
			return good(i)
		}), "obs.csv:9: column velocity: velocity 3 km/s after 6 km/s is not strictly monotonic"},
		{"negative error", "velocity [km/s],I [K],Q [K],U [K],V [K],dI [K]\n" + rows(func(i int) string {
			if i == 4 {
				return strconv.Itoa(i) + ",1,0,0,0,-0.1\n"
			}
			return strconv.Itoa(i) + ",1,0,0,0,0.1\n"
		}), "obs.csv:6: column dI: error -0.1 is not positive (allowed: errors > 0)"},
		{"no velocity unit", "velocity,I [K],Q [K],U [K],V [K]\n" + rows(good), "velocity has no unit"},
		{"mixed units", "velocity [km/s],I [K],Q [Jy],U [K],V [K]\n" + rows(good), "does not match the unit of I"},
		{"blank cell", head + rows(func(i int) string {
			if i == 2 {
				return "2,,0,0,0\n"
			}
			return good(i)
		}), "obs.csv:4: column I: missing or non-finite value"},
	} {
		_, err := ParseObserved([]byte(tc.text), "obs.csv", ReadOptions{})
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want it to contain %q", tc.name, err, tc.want)
		}
	}
}

func TestReadObservedDecreasingAndNoise(t *testing.T) {
	// A decreasing velocity axis is reversed; without error columns the
	// errors are the rms of the line-free channels (here exactly 0.01 K in
	// Q: alternating +/-0.01 K away from the line).
	var b strings.Builder
	b.WriteString("# a plain CSV export\nvelocity [km/s],I [mK],Q [mK],U [mK],V [mK]\n")
	for i := 60; i >= 0; i-- {
		v := float64(i-30) * 0.2
		I := 1000 * math.Exp(-v*v) // mK
		q := 10.0
		if i%2 == 1 {
			q = -10
		}
		b.WriteString(strconv.FormatFloat(v, 'g', -1, 64) + "," + strconv.FormatFloat(I+q, 'g', -1, 64) + "," + strconv.FormatFloat(q, 'g', -1, 64) + ",0.5,0\n")
	}
	o, err := ParseObserved([]byte(b.String()), "x.csv", ReadOptions{Stokes: "IQU"})
	if err != nil {
		t.Fatal(err)
	}
	if o.Velocity[0] != -6000 || o.Velocity[60] != 6000 {
		t.Errorf("velocity %v .. %v m/s, want -6000 .. 6000", o.Velocity[0], o.Velocity[60])
	}
	if math.Abs(o.Err[1][0]-0.01) > 1e-12 || math.Abs(o.Err[2][0]-0.0005) > 1e-12 {
		t.Errorf("errors Q %v K, U %v K; want 0.01, 0.0005 (%s)", o.Err[1][0], o.Err[2][0], o.ErrFrom[1])
	}
	if o.Use[3] || o.Unit != "K" {
		t.Errorf("use %v unit %q", o.Use, o.Unit)
	}
}

// TestFitRecoversShift: a model fitted to itself shifted by 1.234 km/s and
// scaled by 3 returns those values (noise-free; the fit is limited by the
// linear interpolation of the model, so 1e-3 km/s and 1e-3 relative).
func TestFitRecoversShift(t *testing.T) {
	var ms ModelSpectrum
	for i := 0; i < 200; i++ {
		v := float64(i-100) * 50
		x := v / 1000
		ms.Velocity = append(ms.Velocity, v)
		I := math.Exp(-x * x)
		ms.Stokes[0] = append(ms.Stokes[0], I)
		ms.Stokes[1] = append(ms.Stokes[1], 0.2*I)
		ms.Stokes[2] = append(ms.Stokes[2], -0.1*I)
		ms.Stokes[3] = append(ms.Stokes[3], -0.01*x*I)
	}
	var vel []float64
	for i := 0; i < 90; i++ {
		vel = append(vel, -3000+float64(i)*100)
	}
	o := &Observed{Velocity: vel, Unit: "K"}
	for k := range o.Stokes {
		o.Use[k] = true
		o.Stokes[k] = make([]float64, len(vel))
		sample(o.Stokes[k], ms.Velocity, ms.Stokes[k], vel, 1234)
		o.Err[k] = make([]float64, len(vel))
		for i := range vel {
			o.Stokes[k][i] *= 3
			o.Err[k][i] = 0.01
		}
	}
	f := NewFitter(o, FitOptions{}).FitSpectrum(&ms)
	if math.Abs(f.Shift-1234) > 1 || math.Abs(f.Scale/3-1) > 1e-3 {
		t.Errorf("shift %.2f m/s, scale %.5f; want 1234, 3", f.Shift, f.Scale)
	}
}

// gaussModel is a noise-free test model: a Gaussian line of 1/e half-width
// 1 km/s at velocity 0 on 400 channels of 50 m/s, with Q shaped like I.
func gaussModel() ModelSpectrum {
	var ms ModelSpectrum
	for i := 0; i < 400; i++ {
		v := float64(i-200) * 50
		x := v / 1000
		ms.Velocity = append(ms.Velocity, v)
		I := math.Exp(-x * x)
		ms.Stokes[0] = append(ms.Stokes[0], I)
		ms.Stokes[1] = append(ms.Stokes[1], 0.2*I)
		ms.Stokes[2] = append(ms.Stokes[2], 0)
		ms.Stokes[3] = append(ms.Stokes[3], 0)
	}
	return ms
}

// observedFrom samples f(v) (m/s) on -10..+30 km/s in 100 m/s channels,
// errors 0.01, Stokes I only.
func observedFrom(f func(v float64) float64) *Observed {
	o := &Observed{Unit: "K"}
	o.Use[0] = true
	for i := 0; i <= 400; i++ {
		v := -10000 + float64(i)*100
		o.Velocity = append(o.Velocity, v)
		o.Stokes[0] = append(o.Stokes[0], f(v))
		o.Err[0] = append(o.Err[0], 0.01)
	}
	return o
}

// TestFitScaleNonNegative: an observation whose only feature within the
// allowed shifts is a dip would be fitted by an inverted model; the scale
// is held at >= 0 (a maser emits), so the best fit there is scale 0.
func TestFitScaleNonNegative(t *testing.T) {
	ms := gaussModel()
	o := observedFrom(func(v float64) float64 {
		x, y := v/1000, (v-20000)/1000
		return -2*math.Exp(-x*x) + 5*math.Exp(-y*y)
	})
	f := NewFitter(o, FitOptions{MaxShift: 5000}).FitSpectrum(&ms)
	if f.Scale < 0 {
		t.Errorf("scale %g < 0", f.Scale)
	}
	if f.Scale != 0 {
		t.Errorf("scale %g, want 0: no emission within the allowed shifts", f.Scale)
	}
}

// TestFitShiftAtBound: the observation is the model shifted by 8 km/s; a
// 5 km/s bound stops the shift at the bound, which the fit reports; without
// a bound it finds 8 km/s (to a metre per second, as TestFitRecoversShift).
func TestFitShiftAtBound(t *testing.T) {
	ms := gaussModel()
	o := observedFrom(func(v float64) float64 { x := (v - 8000) / 1000; return 3 * math.Exp(-x*x) })
	b := NewFitter(o, FitOptions{MaxShift: 5000}).FitSpectrum(&ms)
	if !b.ShiftAtBound || math.Abs(math.Abs(b.Shift)-5000) > 50 {
		t.Errorf("bounded: shift %.1f m/s, at bound %v; want 5000 and true", b.Shift, b.ShiftAtBound)
	}
	u := NewFitter(o, FitOptions{}).FitSpectrum(&ms)
	if u.ShiftAtBound || math.Abs(u.Shift-8000) > 1 || math.Abs(u.Scale/3-1) > 1e-3 {
		t.Errorf("unbounded: shift %.1f m/s, scale %.4f, at bound %v; want 8000, 3, false", u.Shift, u.Scale, u.ShiftAtBound)
	}
}

// TestRankWithDecadeSpectra: a run that keeps spectra at the decades only
// (output.spectra = "decades", the default of large studies) still ranks:
// the true model and checkpoint (6, R/Gamma = 10, one of the decades) come
// first, and the reader says which checkpoints it could use.
func TestRankWithDecadeSpectra(t *testing.T) {
	st, err := config.Load(filepath.Join(obsDir, "study.toml"))
	if err != nil {
		t.Fatal(err)
	}
	st.Output.Spectra = config.SpectraDecades
	dir := filepath.Join(t.TempDir(), "run")
	if _, err := runs.Execute(context.Background(), st, dir, runs.Options{Workers: 2, NoPlots: true}); err != nil {
		t.Fatal(err)
	}
	models, warn, err := ReadRunDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	// 10 checkpoints, 3 per decade from 0.1 to 100: 0.1, 1, 10, 100 kept.
	if len(warn) != 1 || !strings.Contains(warn[0], "4 of 4 models hold 4 of their 10 checkpoints") || !strings.Contains(warn[0], "R/Gamma = 0.1, 1, 10, 1e+02") {
		t.Errorf("warnings: %q", warn)
	}
	obs, err := ReadObserved(filepath.Join(obsDir, "kestrel9-sio.ecsv"), ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	best := Rank(obs, models, FitOptions{})[0]
	if best.Model.Name != "m0002" || best.Best.Checkpoint != 6 {
		t.Errorf("best %s at checkpoint %d, want m0002 at 6", best.Model.Name, best.Best.Checkpoint)
	}
}
