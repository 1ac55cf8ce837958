package interpret

import (
	"bytes"
	"fmt"
	"io"
	"math/rand/v2"

	"maserpol/runs/ecsv"
)

// Synthesize makes an invented observation from a model checkpoint, for
// demonstrations and tests: the model shifted by shift (m/s) and scaled by
// scale, sampled at the velocities vel (m/s, increasing), with Gaussian
// noise of rms noise[k] (in the scaled unit) drawn from rng. Errors are set
// to the noise rms.
func Synthesize(ms *ModelSpectrum, vel []float64, shift, scale float64, noise [4]float64, rng *rand.Rand) *Observed {
	o := &Observed{Velocity: append([]float64(nil), vel...), Unit: "K"}
	for k := range o.Stokes {
		o.Use[k] = true
		o.Stokes[k] = make([]float64, len(vel))
		o.Err[k] = make([]float64, len(vel))
		sample(o.Stokes[k], ms.Velocity, ms.Stokes[k], vel, shift)
		for i := range vel {
			o.Stokes[k][i] = scale*o.Stokes[k][i] + noise[k]*rng.NormFloat64()
			o.Err[k][i] = noise[k]
		}
		o.ErrFrom[k] = "invented noise rms"
	}
	return o
}

// WriteObserved writes an observed spectrum as ECSV: velocity_kms, I, Q,
// U, V and their errors dI, dQ, dU, dV, in km/s and o.Unit.
func WriteObserved(w io.Writer, o *Observed, meta []ecsv.Meta) error {
	cols := []ecsv.Column{{Name: "velocity_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "velocity, radio convention"}}
	for k, s := range StokesNames {
		if o.Use[k] {
			cols = append(cols, ecsv.Column{Name: s, Unit: o.Unit, Datatype: ecsv.Float64, Description: "Stokes " + s})
		}
	}
	for k, s := range StokesNames {
		if o.Use[k] && o.Err[k] != nil {
			cols = append(cols, ecsv.Column{Name: "d" + s, Unit: o.Unit, Datatype: ecsv.Float64, Description: "1-sigma error of Stokes " + s})
		}
	}
	var buf bytes.Buffer
	ew := ecsv.NewWriter(&buf, cols, meta)
	row := make([]any, 0, len(cols))
	for i, v := range o.Velocity {
		row = append(row[:0], v/1e3)
		for k := range StokesNames {
			if o.Use[k] {
				row = append(row, o.Stokes[k][i])
			}
		}
		for k := range StokesNames {
			if o.Use[k] && o.Err[k] != nil {
				row = append(row, o.Err[k][i])
			}
		}
		if err := ew.Write(row...); err != nil {
			return err
		}
	}
	if err := ew.Flush(); err != nil {
		return fmt.Errorf("writing observation: %w", err)
	}
	_, err := w.Write(buf.Bytes())
	return err
}
