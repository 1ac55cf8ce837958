// Command gen writes the invented feature catalogue of testdata/field: 60
// SiO v=1 J=1-0 features of the fictitious star Corvid-12, each a spectrum
// of I and V made by interpret.SynthLine (a Gaussian line with the
// thin-line Zeeman V of a known field and Gaussian noise), sky offsets,
// peak brightness (T_b, or flux density with a size), and m_l and EVPA
// from the GKK 1973 relation at a known field angle. The true fields go
// to truth.csv. Run from the repository root:
//
//	go run ./testdata/field/gen
package main

import (
	"bytes"
	"fmt"
	"log"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"

	"maserpol/runs"
	"maserpol/runs/ecsv"
	"maserpol/runs/interpret"
)

const (
	dir    = "testdata/field"
	n      = 60
	factor = 0.8214 // m/s per G, SiO v=1 J=1-0 linear Zeeman (maserpol levels)
)

func main() {
	rng := rand.New(rand.NewPCG(2026, 12))
	if err := os.MkdirAll(filepath.Join(dir, "spectra"), 0o755); err != nil {
		log.Fatal(err)
	}
	cols := []ecsv.Column{
		{Name: "feature", Datatype: ecsv.String},
		{Name: "spectrum", Datatype: ecsv.String},
		{Name: "ra_offset", Unit: "mas", Datatype: ecsv.Float64},
		{Name: "dec_offset", Unit: "mas", Datatype: ecsv.Float64},
		{Name: "tb", Unit: "K", Datatype: ecsv.Float64},
		{Name: "flux", Unit: "Jy", Datatype: ecsv.Float64},
		{Name: "size", Unit: "mas", Datatype: ecsv.Float64},
		{Name: "ml", Datatype: ecsv.Float64},
		{Name: "ml_err", Datatype: ecsv.Float64},
		{Name: "evpa", Unit: "deg", Datatype: ecsv.Float64},
	}
	var cat bytes.Buffer
	cw := ecsv.NewWriter(&cat, cols, []ecsv.Meta{{Key: "source", Value: "Corvid-12 (invented)"}, {Key: "species", Value: "sio-v1-j1-0"}, {Key: "generator", Value: "go run ./testdata/field/gen"}})
	var truth bytes.Buffer
	fmt.Fprintln(&truth, "# invented truth of testdata/field/catalogue.ecsv: B in G, theta in deg, B_los = B cos(theta)")
	fmt.Fprintln(&truth, "feature,B_G,theta_deg,B_los_G")
	nan := math.NaN()
	for i := range n {
		name := fmt.Sprintf("C12-%02d", i+1)
		// Field: 0 for every eighth feature, else 2..8 G of either sign.
		b := (2 + 6*rng.Float64()) * float64(1-2*rng.IntN(2))
		if i%8 == 3 {
			b = 0
		}
		th := math.Acos(rng.Float64()) // isotropic directions
		th = math.Min(th, 80*math.Pi/180)
		center := -8e3 + 16e3*rng.Float64()
		width := 800 + 400*rng.Float64()
		peak := 2 + 18*rng.Float64() // Jy
		s := interpret.SynthLine{Start: center - 6.4e3, Step: 100, Channels: 129, Peak: peak, Center: center, Width: width,
			B: b, Theta: th, Factor: factor, C: 0.001 * rng.NormFloat64(), NoiseI: 0.005, NoiseV: 0.005}
		o, err := s.Draw(rng)
		if err != nil {
			log.Fatal(err)
		}
		o.Unit = "Jy"
		// No error columns: field estimates the noise from line-free channels.
		o.Err = [4][]float64{}
		var sb bytes.Buffer
		if err := interpret.WriteObserved(&sb, o, []ecsv.Meta{{Key: "feature", Value: name}, {Key: "source", Value: "Corvid-12 (invented)"}}); err != nil {
			log.Fatal(err)
		}
		spec := filepath.Join("spectra", name+".ecsv")
		if err := runs.WriteFile(filepath.Join(dir, spec), sb.Bytes()); err != nil {
			log.Fatal(err)
		}
		// Brightness: T_b for most, flux and size for every fifth.
		tb, flux, size := 1e8*math.Pow(30, rng.Float64()), nan, nan
		if i%5 == 0 {
			flux, size, tb = peak, 0.3+0.5*rng.Float64(), nan
		}
		q := interpret.GKKMl(th)
		mlErr := 0.01 + 0.01*rng.Float64()
		ml := math.Min(0.999, math.Max(0.001, math.Abs(q)+mlErr*rng.NormFloat64()))
		fieldPA := math.Pi * rng.Float64()
		evpa := fieldPA
		if q < 0 {
			evpa += math.Pi / 2
		}
		evpa = math.Mod(evpa, math.Pi)
		x, y := 40*rng.NormFloat64(), 25*rng.NormFloat64()
		if err := cw.Write(name, spec, x, y, tb, flux, size, ml, mlErr, evpa*180/math.Pi); err != nil {
			log.Fatal(err)
		}
		fmt.Fprintf(&truth, "%s,%g,%g,%g\n", name, b, th*180/math.Pi, b*math.Cos(th))
	}
	if err := cw.Flush(); err != nil {
		log.Fatal(err)
	}
	if err := runs.WriteFile(filepath.Join(dir, "catalogue.ecsv"), cat.Bytes()); err != nil {
		log.Fatal(err)
	}
	if err := runs.WriteFile(filepath.Join(dir, "truth.csv"), truth.Bytes()); err != nil {
		log.Fatal(err)
	}
}
