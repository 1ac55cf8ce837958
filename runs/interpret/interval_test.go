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
)

// parabolaSurface makes models with one parameter x on a grid and a total
// chi-square chi0 + ((x - x0)/sigma)^2 at each, with a flat second
// parameter and a fixed third, and two checkpoints whose saturation does
// not change the chi-square.
func parabolaSurface(xs []float64, x0, sigma, chi0 float64, n int) ([]RunModel, [][]Fit) {
	var models []RunModel
	var surf [][]Fit
	for i, x := range xs {
		models = append(models, RunModel{Name: strconv.Itoa(i), Params: []Param{{Name: "x", Value: x}, {Name: "flat", Value: float64(i % 3)}, {Name: "fixed", Unit: "G", Value: 5}}})
		c := chi0 + math.Pow((x-x0)/sigma, 2)
		red := c / float64(n-3)
		surf = append(surf, []Fit{
			{Saturation: 1, Chi2: [4]float64{c}, N: n, NUsed: 1, RedChi2: red},
			{Saturation: 10, Chi2: [4]float64{c}, N: n, NUsed: 1, RedChi2: red},
		})
	}
	return models, surf
}

// TestIntervalsParabola: for a chi-square that is a parabola in one
// parameter, the Delta chi2 = 1 and 4 intervals are x0 +/- sigma and
// x0 +/- 2 sigma (one parameter of interest; Press et al., Numerical
// Recipes, 15.6). sqrt(Delta chi2) is linear in x on either side of the
// minimum, so the interpolation is exact up to the grid point nearest the
// minimum (0.05 from x0 = 4.3 here, which shifts both ends by at most
// that; tolerance 0.11 sigma). A flat parameter is "not constrained" and
// a constant one "fixed".
func TestIntervalsParabola(t *testing.T) {
	var xs []float64
	for x := 0.0; x <= 10.001; x += 0.05 {
		xs = append(xs, x)
	}
	const x0, sigma = 4.3, 0.5 // on a grid point
	// chi0 = N - 3: best reduced chi-square 1, no rescaling.
	models, surf := parabolaSurface(xs, x0, sigma, 97, 100)
	ivs := Intervals(models, surf)
	if len(ivs) != 4 {
		t.Fatalf("%d intervals, want x, flat, fixed, saturation", len(ivs))
	}
	x := ivs[0]
	for l, k := range []float64{1, 2} {
		if math.Abs(x.Lo[l]-(x0-k*sigma)) > 0.11*sigma || math.Abs(x.Hi[l]-(x0+k*sigma)) > 0.11*sigma || x.OpenLo[l] || x.OpenHi[l] {
			t.Errorf("level %g: interval %.4f..%.4f (open %v %v), want %.4f..%.4f", Levels[l], x.Lo[l], x.Hi[l], x.OpenLo[l], x.OpenHi[l], x0-k*sigma, x0+k*sigma)
		}
	}
	if !strings.Contains(ivs[1].Statement, "not constrained") {
		t.Errorf("flat parameter: %q", ivs[1].Statement)
	}
	if !strings.Contains(ivs[2].Statement, "fixed at 5 G") {
		t.Errorf("fixed parameter: %q", ivs[2].Statement)
	}
	if !strings.Contains(ivs[3].Statement, "saturation is not constrained") {
		t.Errorf("saturation without effect: %q", ivs[3].Statement)
	}
	// A poor best fit (reduced chi-square 4) widens the intervals by 2.
	models, surf = parabolaSurface(xs, x0, sigma, 4*97, 100)
	x = Intervals(models, surf)[0]
	if math.Abs(x.Hi[0]-(x0+2*sigma)) > 0.11*sigma {
		t.Errorf("reduced chi-square 4: 68 %% upper end %.4f, want %.4f (Birge ratio)", x.Hi[0], x0+2*sigma)
	}
	// Best at the grid edge: open on that side.
	models, surf = parabolaSurface(xs, 0, sigma, 97, 100)
	x = Intervals(models, surf)[0]
	if !x.OpenLo[0] || x.OpenHi[0] || !strings.Contains(x.Statement, "no lower bound") {
		t.Errorf("best at the edge: %+v", x)
	}
}

// TestIntervalsKestrel9: the invented observation of Kestrel-9 was made
// from theta = 70 deg at a known checkpoint (its metadata); the 95 %
// intervals of the run's grid contain both.
func TestIntervalsKestrel9(t *testing.T) {
	st, err := config.Load(filepath.Join(obsDir, "study.toml"))
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "run")
	if _, err := runs.Execute(context.Background(), st, dir, runs.Options{Workers: 2, NoPlots: true}); err != nil {
		t.Fatal(err)
	}
	models, _, err := ReadRunDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(obsDir, "kestrel9-sio.ecsv")
	obs, err := ReadObserved(path, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tab, _ := ecsv.ReadFile(path)
	cpS, _ := tab.MetaValue("true_checkpoint")
	cp, _ := strconv.Atoi(cpS)
	trueModel, _ := tab.MetaValue("true_model")
	var trueTheta, trueSat float64
	for _, m := range models {
		if m.Name == trueModel {
			trueTheta, _ = m.Param("theta_deg")
			for _, s := range m.Spectra {
				if s.Checkpoint == cp {
					trueSat = s.Saturation
				}
			}
		}
	}
	ivs := Intervals(models, FitSurface(obs, models, FitOptions{}))
	found := 0
	for _, iv := range ivs {
		want := math.NaN()
		switch iv.Name {
		case "theta_deg":
			want = trueTheta
		case "saturation":
			want = trueSat
		default:
			continue
		}
		found++
		if !(iv.Lo[1] <= want*(1+1e-9) && want*(1-1e-9) <= iv.Hi[1]) {
			t.Errorf("%s: true value %g outside the 95 %% interval %g..%g (%s)", iv.Name, want, iv.Lo[1], iv.Hi[1], iv.Statement)
		}
		t.Log(iv.Statement)
	}
	if found != 2 {
		t.Errorf("intervals %v: want theta_deg and saturation", ivs)
	}
}

// TestPosteriorGaussian: on a regular grid whose chi-square is a parabola
// in x (sigma 0.5 about 4.3) and flat in a second parameter and in the
// saturation, the MCMC posterior of x has its central 68 % interval at
// x0 +/- sigma and 95 % at +/- 1.96 sigma (a Gaussian likelihood with a
// flat prior). Tolerance 0.1 sigma: 4000 thinned samples give quantiles to
// about 0.03-0.05 sigma, and multilinear interpolation of the parabola on
// a 0.2 sigma grid adds at most 0.01 to chi2. The flat parameter fills its
// grid and is reported as cut by the grid edge.
func TestPosteriorGaussian(t *testing.T) {
	var models []RunModel
	var surf [][]Fit
	const x0, sigma = 4.3, 0.5
	for i := 0; i <= 100; i++ {
		x := float64(i) * 0.1
		for _, y := range []float64{0, 1, 2} {
			models = append(models, RunModel{Name: strconv.Itoa(len(models)), Params: []Param{{Name: "x", Value: x}, {Name: "y", Value: y}, {Name: "fixed", Value: 5}}})
			c := 97 + math.Pow((x-x0)/sigma, 2)
			surf = append(surf, []Fit{{Saturation: 1, Chi2: [4]float64{c}, RedChi2: c / 97}, {Saturation: 10, Chi2: [4]float64{c}, RedChi2: c / 97}})
		}
	}
	post, err := PosteriorMCMC(models, surf, DefaultPosterior)
	if err != nil {
		t.Fatal(err)
	}
	if len(post) != 3 || post[0].Name != "x" || post[1].Name != "y" || post[2].Name != "saturation" {
		t.Fatalf("posterior axes %+v", post)
	}
	x := post[0]
	t.Log(x.Statement())
	for l, k := range []float64{1, 1.96} {
		if math.Abs(x.Lo[l]-(x0-k*sigma)) > 0.1*sigma || math.Abs(x.Hi[l]-(x0+k*sigma)) > 0.1*sigma {
			t.Errorf("%v sigma interval %.3f..%.3f, want %.3f..%.3f", k, x.Lo[l], x.Hi[l], x0-k*sigma, x0+k*sigma)
		}
	}
	if !strings.Contains(post[1].Statement(), "grid cuts the posterior") {
		t.Errorf("flat parameter: %s", post[1].Statement())
	}
	// Not a full product: refused with the reason.
	if _, err := PosteriorMCMC(models[:len(models)-1], surf[:len(surf)-1], DefaultPosterior); err == nil || !strings.Contains(err.Error(), "not a full product") {
		t.Errorf("incomplete grid: %v", err)
	}
}
