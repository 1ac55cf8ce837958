package main

import (
	"bytes"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"maserpol/runs"
	"maserpol/runs/ecsv"
	"maserpol/runs/interpret"
)

// Tables written by diagnose, zeeman-factor and compare. The file name
// chooses the format: .ecsv gives ECSV 1.0 with units and descriptions,
// which astropy's Table.read opens with no format argument; .csv gives
// plain CSV (a header row of names) for readers without ECSV support.

// tableExts are the allowed extensions of a table file.
const tableExts = ".ecsv (ECSV with units, read by astropy.table.Table.read) or .csv (plain CSV)"

// checkTablePath refuses a table name whose format is not known, before
// any model runs. It reports whether the table is plain CSV.
func checkTablePath(flagName, path string) (plain bool, err error) {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".ecsv":
		return false, nil
	case ".csv":
		return true, nil
	}
	return false, usagef("--%s %q: unknown table format %q (allowed: a name ending in %s)", flagName, path, filepath.Ext(path), tableExts)
}

// writeTable renders a table and writes it atomically to path.
func writeTable(path string, cols []ecsv.Column, meta []ecsv.Meta, fill func(w *ecsv.Writer) error) error {
	var buf bytes.Buffer
	var w *ecsv.Writer
	if strings.EqualFold(filepath.Ext(path), ".csv") {
		w = ecsv.NewPlainWriter(&buf, cols)
	} else {
		w = ecsv.NewWriter(&buf, cols, meta)
	}
	if err := fill(w); err != nil {
		return err
	}
	if err := w.Flush(); err != nil {
		return err
	}
	return runs.WriteFile(path, buf.Bytes())
}

// finite turns the infinite ends of an empty interval into NaN, which
// ECSV readers read as "no value".
func finite(x float64) float64 {
	if math.IsInf(x, 0) {
		return math.NaN()
	}
	return x
}

func programMeta() ecsv.Meta { return ecsv.Meta{Key: "program", Value: "maserpol " + runs.Version} }

func validityMeta() ecsv.Meta {
	return ecsv.Meta{Key: "validity", Value: "each checkpoint valid within its population model: rate equations (no Zeeman coherences) where R/(g Omega) <= 0.1, density matrix where the flat-spectrum measure <= 0.01; both need R <= 0.1 of the Doppler width in rate units"}
}

func gStr(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

var verdictColumns = []ecsv.Column{
	{Name: "mechanism", Datatype: ecsv.String, Description: "mechanism tested"},
	{Name: "parameter", Datatype: ecsv.String, Description: "parameter varied within the mechanism"},
	{Name: "consistent", Datatype: ecsv.String, Description: "parameter range that matches the measurement within n_sigma (m_l, and P_V when given)"},
	{Name: "n_consistent", Datatype: ecsv.Int64, Description: "models consistent with the measurement"},
	{Name: "n_models", Datatype: ecsv.Int64, Description: "models of the mechanism"},
	{Name: "pl_min", Datatype: ecsv.Float64, Description: "lowest m_l projected on the measured branch (negative: the orthogonal orientation); nan: no model"},
	{Name: "pl_max", Datatype: ecsv.Float64, Description: "highest projected m_l"},
	{Name: "r_over_gomega_min", Datatype: ecsv.Float64, Description: "lowest R/(g Omega) of the mechanism's models in the saturation range"},
	{Name: "r_over_gomega_max", Datatype: ecsv.Float64, Description: "highest R/(g Omega)"},
	{Name: "valid", Datatype: ecsv.Bool, Description: "every checkpoint over the saturation range lies within the validity of its population model"},
	{Name: "valid_up_to", Datatype: ecsv.Float64, Description: "saturation R/Gamma up to which the models stay valid when not valid (nan: nowhere in the range)"},
	{Name: "reproduces", Datatype: ecsv.Bool, Description: "the mechanism reproduces the measurement"},
	{Name: "consistent_ml", Datatype: ecsv.String, Description: "consistent parameter range from m_l alone"},
	{Name: "n_consistent_ml", Datatype: ecsv.Int64, Description: "models consistent from m_l alone"},
	{Name: "pv_constrained", Datatype: ecsv.Bool, Description: "P_V narrowed the answer (with --pv)"},
	{Name: "note", Datatype: ecsv.String, Description: "remark on the verdict"},
}

func diagnosisMeta(d *interpret.Diagnosis, name string) []ecsv.Meta {
	m := d.Measurement
	return []ecsv.Meta{
		programMeta(), {Key: "command", Value: "diagnose"}, {Key: "species", Value: name},
		{Key: "ml", Value: gStr(m.Ml)}, {Key: "ml_err", Value: gStr(m.MlErr)}, {Key: "branch", Value: m.Branch.String()},
		{Key: "saturation_range", Value: gStr(m.SatLo) + " .. " + gStr(m.SatHi)}, {Key: "n_sigma", Value: gStr(m.NSigma)},
		{Key: "field_cases_B", Value: gStr(d.Field) + " G"}, {Key: "weak_field_cases_B", Value: gStr(d.WeakField) + " G"},
		validityMeta(),
	}
}

func writeDiagnosis(path string, d *interpret.Diagnosis, name string) error {
	m := d.Measurement
	return writeTable(path, verdictColumns, diagnosisMeta(d, name), func(w *ecsv.Writer) error {
		for _, v := range d.Verdicts {
			ml, nml := v.Consistent, v.NConsistent
			if m.HasPV {
				ml, nml = v.ConsistentMl, v.NConsistentMl
			}
			err := w.String(v.Mechanism.String()).String(v.Parameter).String(v.Consistent).Int(v.NConsistent).Int(v.NModels).
				Float(finite(v.Reach.Lo)).Float(finite(v.Reach.Hi)).Float(finite(v.RGOmega.Lo)).Float(finite(v.RGOmega.Hi)).
				Bool(v.Valid).Float(finite(v.ValidUpTo)).Bool(v.Reproduces).String(ml).Int(nml).Bool(v.PVConstrained).String(v.Note).End()
			if err != nil {
				return err
			}
		}
		return nil
	})
}

var detailColumns = []ecsv.Column{
	{Name: "mechanism", Datatype: ecsv.String, Description: "mechanism of the model"},
	{Name: "theta_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "angle between B and the line of sight"},
	{Name: "B_G", Unit: "G", Datatype: ecsv.Float64, Description: "field strength"},
	{Name: "alignment", Datatype: ecsv.Float64, Description: "signed pump anisotropy (anisotropic pumping)"},
	{Name: "seed_ml", Datatype: ecsv.Float64, Description: "linear polarization fraction of the seed"},
	{Name: "pl_min", Datatype: ecsv.Float64, Description: "lowest m_l projected on the measured branch over the saturation range"},
	{Name: "pl_max", Datatype: ecsv.Float64, Description: "highest projected m_l"},
	{Name: "pv_min", Datatype: ecsv.Float64, Description: "lowest P_V = (V_max - V_min)/I_peak over the saturation range"},
	{Name: "pv_max", Datatype: ecsv.Float64, Description: "highest P_V"},
	{Name: "r_over_gomega_max", Datatype: ecsv.Float64, Description: "highest R/(g Omega) in the saturation range"},
	{Name: "covered", Datatype: ecsv.Bool, Description: "the model reaches the measured saturation range"},
	{Name: "consistent", Datatype: ecsv.Bool, Description: "consistent with the measurement within n_sigma"},
	{Name: "error", Datatype: ecsv.String, Description: "error of a failed model, else empty"},
}

func writeDiagnosisDetails(path string, d *interpret.Diagnosis, name string) error {
	return writeTable(path, detailColumns, diagnosisMeta(d, name), func(w *ecsv.Writer) error {
		for _, r := range d.Cases {
			msg := ""
			if r.Err != nil {
				msg = r.Err.Error()
			}
			err := w.String(r.Case.Mechanism.String()).Float(r.Case.Theta * 180 / math.Pi).Float(r.Case.Params.Field).Float(r.Case.Alignment).Float(r.Case.SeedFraction).
				Float(finite(r.Reach.Lo)).Float(finite(r.Reach.Hi)).Float(finite(r.PV.Lo)).Float(finite(r.PV.Hi)).Float(finite(r.RGOmega.Hi)).
				Bool(r.Covered).Bool(r.Consistent).String(msg).End()
			if err != nil {
				return err
			}
		}
		return nil
	})
}

var factorColumns = []ecsv.Column{
	{Name: "theta_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "angle between B and the line of sight"},
	{Name: "saturation", Datatype: ecsv.Float64, Description: "saturation R/Gamma at line centre"},
	{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "R/(g Omega) at the model field B0; scales as 1/B"},
	{Name: "valid", Datatype: ecsv.Bool, Description: "good_fit and R/(g Omega) <= 0.1 at B0"},
	{Name: "good_fit", Datatype: ecsv.Bool, Description: "rms fit residual over the V peak within the limit"},
	{Name: "b_valid_min_G", Unit: "G", Datatype: ecsv.Float64, Description: "smallest |B| for which R/(g Omega) <= 0.1"},
	{Name: "A_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "fitted A of V = A dI/dv + C I at B0"},
	{Name: "C", Datatype: ecsv.Float64, Description: "fitted C of V = A dI/dv + C I"},
	{Name: "factor_ms_per_G", Unit: "m / (G s)", Datatype: ecsv.Float64, Description: "A/(B0 cos theta): B cos(theta) = A_observed/factor"},
	{Name: "linear_ms_per_G", Unit: "m / (G s)", Datatype: ecsv.Float64, Description: "single-component linear-Zeeman factor"},
	{Name: "ratio", Datatype: ecsv.Float64, Description: "factor over linear"},
	{Name: "pv_per_G", Unit: "1 / G", Datatype: ecsv.Float64, Description: "P_V per gauss of B cos(theta)"},
	{Name: "linearity", Datatype: ecsv.Float64, Description: "relative change of the factor between B0 and 2 B0"},
	{Name: "residual", Datatype: ecsv.Float64, Description: "rms fit residual over the V peak, relative"},
}

func writeFactors(path string, f *interpret.Factors) error {
	meta := []ecsv.Meta{
		programMeta(), {Key: "command", Value: "zeeman-factor"}, {Key: "species", Value: f.Species.Name}, {Key: "component", Value: compName(f)},
		{Key: "B0", Value: gStr(f.B0) + " G"}, {Key: "fit_window", Value: gStr(f.Window[0]/1e3) + " .. " + gStr(f.Window[1]/1e3) + " km/s"},
		{Key: "use", Value: "B cos(theta) = A_observed / factor; a row holds for b_valid_min_G <= |B| <= " + gStr(f.BMax) + " G"},
		{Key: "max_residual", Value: gStr(interpret.MaxResidual)}, validityMeta(),
	}
	return writeTable(path, factorColumns, meta, func(w *ecsv.Writer) error {
		for _, r := range f.Rows {
			err := w.Float(r.Theta * 180 / math.Pi).Float(r.Saturation).Float(r.RoverGOmega).Bool(r.Valid).Bool(r.GoodFit).Float(r.BValidMin).
				Float(r.A / 1e3).Float(r.C).Float(r.Factor).Float(r.Linear).Float(r.Ratio).Float(r.PVPerG).Float(r.Linearity).Float(r.Residual).End()
			if err != nil {
				return err
			}
		}
		return nil
	})
}

// scaleAstropyUnit is the unit of compare's scale column in astropy form.
func scaleAstropyUnit(o *interpret.Observed) string {
	switch o.Unit {
	case "K", "":
		return "" // K/K, or the file unit is unknown
	}
	return o.Unit + " / K"
}

func writeRanking(path string, obs *interpret.Observed, rk []interpret.Ranked) error {
	head := []ecsv.Column{
		{Name: "rank", Datatype: ecsv.Int64, Description: "1 = best (lowest red_chi2)"},
		{Name: "model", Datatype: ecsv.String, Description: "model name in the run directory"},
	}
	fixed := []ecsv.Column{
		{Name: "checkpoint", Datatype: ecsv.Int64, Description: "best checkpoint of the model"},
		{Name: "saturation", Datatype: ecsv.Float64, Description: "saturation R/Gamma at that checkpoint"},
		{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "R/(g Omega) at that checkpoint"},
		{Name: "valid", Datatype: ecsv.Bool, Description: "the checkpoint lies within the validity of its population model (the run's valid column)"},
		{Name: "shift_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "velocity shift added to the model"},
		{Name: "shift_at_bound", Datatype: ecsv.Bool, Description: "the best shift sits at --max-shift"},
		{Name: "scale", Unit: scaleAstropyUnit(obs), Datatype: ecsv.Float64, Description: "factor (>= 0) from model K to the observed intensity, the same for I, Q, U, V"},
	}
	for k, s := range interpret.StokesNames {
		if obs.Use[k] {
			fixed = append(fixed, ecsv.Column{Name: "chi2_" + s + "_per_N", Datatype: ecsv.Float64, Description: "chi-square of Stokes " + s + " per channel"})
		}
	}
	fixed = append(fixed, ecsv.Column{Name: "red_chi2", Datatype: ecsv.Float64, Description: "total chi-square / (N n_stokes - 3)"})
	// One column per parameter of the run, in the run's order and units.
	taken := map[string]bool{}
	for _, c := range append(append([]ecsv.Column{}, head...), fixed...) {
		taken[c.Name] = true
	}
	var pcols []ecsv.Column
	var pnames []string // the run's names of pcols
	if len(rk) > 0 {
		for _, p := range rk[0].Model.Params {
			name := p.Name
			if taken[name] {
				name = "param_" + name
			}
			taken[name] = true
			pnames = append(pnames, p.Name)
			pcols = append(pcols, ecsv.Column{Name: name, Unit: p.Unit, Datatype: ecsv.Float64, Description: "model parameter " + p.Name + " (summary column of the run)"})
		}
	}
	cols := append(append(head, pcols...), fixed...)
	meta := []ecsv.Meta{
		programMeta(), {Key: "command", Value: "compare"}, {Key: "observed", Value: obs.File},
		{Key: "fit", Value: "free per model: velocity shift, scale (on I, also applied to Q, U, V), checkpoint; ranked by red_chi2"},
		validityMeta(),
	}
	return writeTable(path, cols, meta, func(w *ecsv.Writer) error {
		for i, r := range rk {
			w.Int(i + 1).String(r.Model.Name)
			for _, n := range pnames {
				v, ok := r.Model.Param(n)
				if !ok {
					v = math.NaN()
				}
				w.Float(v)
			}
			w.Int(r.Best.Checkpoint).Float(r.Best.Saturation).Float(rgAt(r)).Bool(validAt(r)).
				Float(r.Best.Shift / 1e3).Bool(r.Best.ShiftAtBound).Float(r.Best.Scale)
			for k := range interpret.StokesNames {
				if obs.Use[k] {
					w.Float(r.Best.RedChi2Of(k))
				}
			}
			if err := w.Float(r.Best.RedChi2).End(); err != nil {
				return err
			}
		}
		return nil
	})
}
