package interpret

import (
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"maserpol/config/units"
	"maserpol/runs"
	"maserpol/runs/ecsv"
)

// Param is one parameter column of a run's summary (B_mG, theta_deg, ...).
type Param struct {
	Name, Unit string
	Value      float64
}

// RunModel is one model of a run directory: its parameters, and its
// spectra per checkpoint with the validity figures from summary.ecsv.
type RunModel struct {
	Name        string
	Params      []Param
	Spectra     []ModelSpectrum
	RoverGOmega []float64 // per checkpoint, same order as Spectra
	// Valid per checkpoint, same order: the summary's valid column (the
	// validity of the population model that gave the checkpoint); run
	// directories without it fall back to R/(g Omega) <= ValidLimit.
	Valid []bool
}

// Param returns the value of a parameter column, ok = false if absent.
func (m *RunModel) Param(name string) (float64, bool) {
	for _, p := range m.Params {
		if p.Name == name {
			return p.Value, true
		}
	}
	return 0, false
}

// ReadRunDir reads summary.ecsv and spectra/<model>.ecsv of a run directory
// (layout of package runs). Models whose spectrum file is missing (failed
// or pending) are skipped and named in the warnings.
func ReadRunDir(dir string) ([]RunModel, []string, error) {
	sumPath := runs.SummaryPath(dir)
	t, err := ecsv.ReadFile(sumPath)
	if err != nil {
		if os.IsNotExist(err) {
			return nil, nil, fmt.Errorf("%s: not a run directory (no "+runs.SummaryName+")", dir)
		}
		return nil, nil, err
	}
	si, ci := t.Index("species"), t.Index("checkpoint")
	if t.Index("model") < 0 || si < 0 || ci < 0 || ci < si {
		return nil, nil, fmt.Errorf("%s: expected columns model, species, <parameters>, checkpoint, ... (found a different layout)", sumPath)
	}
	names, _ := t.Strings("model")
	cps, err := t.Floats("checkpoint")
	if err != nil {
		return nil, nil, err
	}
	rg, err := t.Floats("r_over_gomega")
	if err != nil {
		return nil, nil, err
	}
	valid, err := t.Bools("valid")
	if err != nil {
		valid = make([]bool, len(rg))
		for i, r := range rg {
			valid[i] = r <= ValidLimit
		}
	}
	pcols := t.Columns[si+1 : ci]
	pvals := make([][]float64, len(pcols))
	for j, c := range pcols {
		if pvals[j], err = t.Floats(c.Name); err != nil {
			return nil, nil, err
		}
	}
	var models []RunModel
	index := map[string]int{}
	rgOf := map[string]map[int]float64{}
	validOf := map[string]map[int]bool{}
	for i, n := range names {
		if _, ok := index[n]; !ok {
			index[n] = len(models)
			m := RunModel{Name: n}
			for j, c := range pcols {
				m.Params = append(m.Params, Param{Name: c.Name, Unit: c.Unit, Value: pvals[j][i]})
			}
			models = append(models, m)
			rgOf[n] = map[int]float64{}
			validOf[n] = map[int]bool{}
		}
		rgOf[n][int(cps[i])] = rg[i]
		validOf[n][int(cps[i])] = valid[i]
	}
	var warn []string
	subset, subsetOf := 0, 0 // models with spectra at fewer checkpoints than the summary
	var subsetSat []string
	out := models[:0]
	for _, m := range models {
		sp, err := ReadModelSpectra(filepath.Join(dir, "spectra", m.Name+".ecsv"))
		if err != nil {
			if os.IsNotExist(err) {
				warn = append(warn, "model "+m.Name+": no spectrum file, skipped")
				continue
			}
			return nil, nil, err
		}
		m.Spectra = sp
		if len(sp) < len(rgOf[m.Name]) {
			if subset == 0 {
				for _, s := range sp {
					subsetSat = append(subsetSat, strconv.FormatFloat(s.Saturation, 'g', 2, 64))
				}
				subsetOf = len(rgOf[m.Name])
			}
			subset++
		}
		m.RoverGOmega = make([]float64, len(sp))
		m.Valid = make([]bool, len(sp))
		for i, s := range sp {
			m.RoverGOmega[i] = rgOf[m.Name][s.Checkpoint]
			m.Valid[i] = validOf[m.Name][s.Checkpoint]
		}
		out = append(out, m)
	}
	if len(out) == 0 {
		return nil, warn, fmt.Errorf("%s: no model has a spectrum", dir)
	}
	if subset > 0 {
		// A large study keeps spectra at a subset of its checkpoints
		// (output.spectra = "decades", runs.SpectraCheckpoints).
		warn = append(warn, fmt.Sprintf("the spectra of %d of %d models hold %d of their %d checkpoints (output.spectra = \"decades\"; first model: R/Gamma = %s): models are fitted at those checkpoints only; set output.spectra = \"all\" in the config and run again for every checkpoint",
			subset, len(out), len(subsetSat), subsetOf, strings.Join(subsetSat, ", ")))
	}
	return out, warn, nil
}

// ReadModelSpectra reads a spectra/<model>.ecsv file: long form, one row
// per checkpoint and channel, velocity in the file's unit, Stokes in K.
func ReadModelSpectra(path string) ([]ModelSpectrum, error) {
	t, err := ecsv.ReadFile(path)
	if err != nil {
		return nil, err
	}
	col := func(n string) ([]float64, error) { return t.Floats(n) }
	cp, err := col("checkpoint")
	if err != nil {
		return nil, err
	}
	sat, err := col("saturation")
	if err != nil {
		return nil, err
	}
	vel, err := col("velocity_kms")
	if err != nil {
		return nil, err
	}
	vscale := 1e3
	if c, _ := t.Column("velocity_kms"); c.Unit != "" {
		if vscale, err = units.Parse("1 "+astropyUnit(c.Unit), units.Velocity); err != nil {
			return nil, fmt.Errorf("%s: column velocity_kms: %v", path, err)
		}
	}
	var st [4][]float64
	for k, n := range StokesNames {
		if st[k], err = col(n); err != nil {
			return nil, err
		}
	}
	var out []ModelSpectrum
	for i := range cp {
		c := int(cp[i])
		if len(out) == 0 || out[len(out)-1].Checkpoint != c {
			out = append(out, ModelSpectrum{Checkpoint: c, Saturation: sat[i]})
		}
		ms := &out[len(out)-1]
		v := vel[i] * vscale
		if n := len(ms.Velocity); n > 0 && !(v > ms.Velocity[n-1]) {
			return nil, fmt.Errorf("%s: checkpoint %d: velocity not increasing at row %s", path, c, strconv.Itoa(i+1))
		}
		ms.Velocity = append(ms.Velocity, v)
		for k := range st {
			ms.Stokes[k] = append(ms.Stokes[k], st[k][i])
		}
	}
	return out, nil
}
