package runs

import (
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"

	"maserpol/config"
	"maserpol/config/units"
	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

// ValidLimit is the largest R/(g Omega) at which the populations-only
// model (no coherences between eigenstates) is taken as valid
// (physics.md section 4).
const ValidLimit = transfer.ValidLimit

// validityNote is written into every table that carries model results.
const validityNote = "population = rates (no coherences between Zeeman eigenstates): valid where R/(g Omega) <= 0.1; population = density (Zeeman coherences kept, any R/(g Omega)): valid where the flat-spectrum measure flat_spectrum <= 0.01; both need r_over_doppler <= 0.1 (rate approximation); rows with valid = False are outside their model's regime"

// Fixed summary columns. The parameter columns (B_mG, theta_deg, chi_deg
// and the swept ones) go between the head and the tail.
var (
	summaryHead = []ecsv.Column{
		{Name: "model", Datatype: ecsv.String, Description: "model name (m + 0-based index in the expanded study)"},
		{Name: "species", Datatype: ecsv.String, Description: "species preset name or species file"},
	}
	summaryTail = []ecsv.Column{
		{Name: "checkpoint", Datatype: ecsv.Int64, Description: "checkpoint index along the column, 0 = least saturated; matches spectra/<model>.ecsv"},
		{Name: "saturation", Datatype: ecsv.Float64, Description: "saturation R/Gamma at line centre, maximum over components"},
		{Name: "gain", Datatype: ecsv.Float64, Description: "unsaturated line-centre gain |tau| accumulated along the column"},
		{Name: "TbdOmega_Ksr", Unit: "K sr", Datatype: ecsv.Float64, Description: "brightness temperature times beam solid angle at the emission peak"},
		{Name: "ipeak_K", Unit: "K", Datatype: ecsv.Float64, Description: "peak Stokes I brightness temperature"},
		{Name: "ml", Datatype: ecsv.Float64, Description: "linear polarization fraction sqrt(Q^2+U^2)/I at the peak channel"},
		{Name: "ml_int", Datatype: ecsv.Float64, Description: "linear polarization fraction, intensity-weighted over the line"},
		{Name: "evpa_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "electric-vector position angle at the peak, sky frame, north through east (IAU)"},
		{Name: "qb", Datatype: ecsv.Float64, Description: "Q/I at the peak in the field frame, > 0 for polarization parallel to the projected field"},
		{Name: "pv", Datatype: ecsv.Float64, Description: "circular polarization (V_max - V_min)/I_peak"},
		{Name: "vi_peak", Datatype: ecsv.Float64, Description: "V/I at the peak channel (IAU V = RCP - LCP)"},
		{Name: "ub", Datatype: ecsv.Float64, Description: "U/I at the peak in the field frame: nonzero only with Zeeman coherences (the EVPA turned away from the projected field)"},
		{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "stimulated rate over Zeeman splitting R/(g Omega); the populations-only model is valid where <= 0.1"},
		{Name: "population", Datatype: ecsv.String, Description: "population model that gave this checkpoint: rates (populations only) or density (Zeeman coherences)"},
		{Name: "flat_spectrum", Datatype: ecsv.Float64, Description: "flat-spectrum measure of the kept coherences (0 for rates); the density matrix is valid where <= 0.01"},
		{Name: "r_over_doppler", Datatype: ecsv.Float64, Description: "stimulated rate over the Doppler width in rate units, R/(2 pi nu0 v_D/c); the rate approximation of both models holds where <= 0.1"},
		{Name: "valid", Datatype: ecsv.Bool, Description: "True where the model of this checkpoint holds: r_over_doppler <= 0.1 and, for rates, R/(g Omega) <= 0.1, for density, flat_spectrum <= 0.01"},
	}
	spectrumColumns = []ecsv.Column{
		{Name: "checkpoint", Datatype: ecsv.Int64, Description: "checkpoint index, matches summary.ecsv"},
		{Name: "saturation", Datatype: ecsv.Float64, Description: "saturation R/Gamma at line centre at this checkpoint"},
		{Name: "velocity_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "channel velocity relative to the line rest frequency"},
		{Name: "I", Unit: "K", Datatype: ecsv.Float64, Description: "Stokes I, brightness temperature"},
		{Name: "Q", Unit: "K", Datatype: ecsv.Float64, Description: "Stokes Q, sky frame (north-south electric vector positive)"},
		{Name: "U", Unit: "K", Datatype: ecsv.Float64, Description: "Stokes U, sky frame (IAU)"},
		{Name: "V", Unit: "K", Datatype: ecsv.Float64, Description: "Stokes V, IAU (RCP - LCP)"},
		{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "R/(g Omega) at this checkpoint (repeated on each of its rows)"},
		{Name: "valid", Datatype: ecsv.Bool, Description: "True where the model of this checkpoint holds (see the summary's population and valid columns)"},
	}
)

// paramColumnDefs names the always-present parameter columns.
var paramColumnDefs = []ecsv.Column{
	{Name: "B_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "magnetic field strength (negative: B away from the observer); config key field.strength"},
	{Name: "theta_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "angle between B and the line of sight; config key field.theta"},
	{Name: "chi_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "sky position angle of the projected field, north through east; config key field.chi"},
}

// unitSuffixes maps the unit suffix of a config column name to its astropy
// unit string. The column names are chosen by package config.
var unitSuffixes = []struct{ suffix, unit string }{
	{"_mG", "mG"}, {"_deg", "deg"}, {"_kms", "km / s"}, {"_Ksr", "K sr"}, {"_K", "K"},
	{"_per_s", "1 / s"}, {"_sr", "sr"}, {"_cm3", "cm-3"}, {"_Hz", "Hz"}, {"_kHz", "kHz"},
}

// layout is the column layout of a study's summary and models/ tables.
type layout struct {
	cols   []ecsv.Column
	params []string // parameter column names in order (B_mG, theta_deg, chi_deg, swept...)
	keys   []string // config keys of params, "" when unknown
}

// reservedColumns may not be reused by a swept parameter; such a parameter
// gets its config key as column name instead ("column.saturation" ->
// "column_saturation").
func reserved(name string) bool {
	for _, c := range append(append([]ecsv.Column{}, summaryHead...), summaryTail...) {
		if c.Name == name {
			return true
		}
	}
	return false
}

func paramColumnName(v config.Value) string {
	if reserved(v.Column) {
		return strings.ReplaceAll(v.Key, ".", "_")
	}
	return v.Column
}

func newLayout(st *config.Study) layout {
	var l layout
	l.cols = append(l.cols, summaryHead...)
	keyOf := map[string]string{}
	if len(st.Models) > 0 {
		for _, v := range st.Models[0].Values {
			keyOf[paramColumnName(v)] = v.Key
		}
	}
	for _, c := range paramColumnDefs {
		l.cols = append(l.cols, c)
		l.params = append(l.params, c.Name)
		l.keys = append(l.keys, keyOf[c.Name])
	}
	for _, sw := range st.Swept {
		name := sw
		key := keyOf[sw]
		if reserved(sw) || key == "" {
			// find the value whose original column is sw
			if len(st.Models) > 0 {
				for _, v := range st.Models[0].Values {
					if v.Column == sw {
						name, key = paramColumnName(v), v.Key
					}
				}
			}
		}
		if slices.Contains(l.params, name) {
			continue
		}
		c := ecsv.Column{Name: name, Datatype: ecsv.Float64, Description: "swept parameter"}
		if key != "" {
			c.Description += "; config key " + key
		}
		for _, u := range unitSuffixes {
			if strings.HasSuffix(name, u.suffix) {
				c.Unit = u.unit
				break
			}
		}
		l.cols = append(l.cols, c)
		l.params = append(l.params, name)
		l.keys = append(l.keys, key)
	}
	l.cols = append(l.cols, summaryTail...)
	return l
}

// paramValues returns the model's value of each parameter column.
func (l layout) paramValues(m *config.Model) ([]float64, error) {
	out := make([]float64, len(l.params))
	for i, name := range l.params {
		found := false
		for _, v := range m.Values {
			if paramColumnName(v) == name {
				out[i], found = v.Number, true
				break
			}
		}
		if !found {
			// The three field columns are always reported; take them from
			// the parameters if config did not list them.
			switch name {
			case "B_mG":
				out[i], found = units.In(m.Params.Field, units.Field, "mG"), true
			case "theta_deg":
				out[i], found = units.In(m.Params.Theta, units.Angle, "deg"), true
			case "chi_deg":
				out[i], found = units.In(m.Params.Chi, units.Angle, "deg"), true
			}
		}
		if !found {
			return nil, fmt.Errorf("model %s has no value for column %s", m.Name, name)
		}
	}
	return out, nil
}

// tableMeta is the metadata common to all tables of a study. It holds
// nothing that depends on time, workers or shards.
func tableMeta(st *config.Study, extra ...ecsv.Meta) []ecsv.Meta {
	m := []ecsv.Meta{
		{Key: "program", Value: "maserpol " + Version},
		{Key: "config_hash", Value: st.Hash},
		{Key: "validity", Value: validityNote},
	}
	return append(m, extra...)
}

// Model status values in models/ files and the manifest.
const (
	StatusDone    = "done"
	StatusFailed  = "failed"
	StatusPending = "pending"
)

// writeModelTable renders the summary rows of one model (none if it
// failed) with its status in the metadata.
func writeModelTable(buf io.Writer, st *config.Study, l layout, m *config.Model, tr *transfer.Trajectory, spectrumSum string, runErr error) error {
	meta := []ecsv.Meta{{Key: "model", Value: m.Name}, {Key: "index", Value: strconv.Itoa(m.Index)}, {Key: "species", Value: m.Species}}
	if runErr != nil {
		meta = append(meta, ecsv.Meta{Key: "status", Value: StatusFailed}, ecsv.Meta{Key: "error", Value: runErr.Error()})
	} else {
		meta = append(meta, ecsv.Meta{Key: "status", Value: StatusDone})
		meta = append(meta, ecsv.Meta{Key: "gomega_per_s", Value: strconv.FormatFloat(tr.GOmega, 'g', -1, 64)})
		meta = append(meta, ecsv.Meta{Key: "population_model", Value: tr.Population.String()})
		if !math.IsInf(tr.CoherentFrom, 1) {
			meta = append(meta, ecsv.Meta{Key: "density_matrix_from_saturation", Value: strconv.FormatFloat(tr.CoherentFrom, 'g', -1, 64)})
		}
		// What a resume checks before it keeps the model.
		meta = append(meta, ecsv.Meta{Key: "checkpoints", Value: strconv.Itoa(len(tr.Checkpoints))},
			ecsv.Meta{Key: "spectrum_sha256", Value: spectrumSum})
		for i, w := range modelWarnings(tr) {
			meta = append(meta, ecsv.Meta{Key: "warning" + strconv.Itoa(i+1), Value: w})
		}
	}
	w := ecsv.NewWriter(buf, l.cols, tableMeta(st, meta...))
	if runErr == nil {
		pv, err := l.paramValues(m)
		if err != nil {
			return err
		}
		for k, cp := range tr.Checkpoints {
			w.String(m.Name).String(m.Species)
			for _, x := range pv {
				w.Float(x)
			}
			w.Int(k).Float(cp.Saturation).Float(cp.Gain).Float(cp.TbdOmega).Float(cp.IPeak).Float(cp.Ml).Float(cp.MlInt).
				Float(units.In(cp.EVPA, units.Angle, "deg")).Float(cp.Qb).Float(cp.PV).Float(cp.VIPeak).Float(cp.Ub).Float(cp.RoverGOmega).String(populationOf(cp)).Float(cp.FlatSpectrum).Float(cp.RoverDoppler).Bool(cp.Valid)
			if err := w.End(); err != nil {
				return err
			}
		}
	}
	return w.Flush()
}

// spectrumDigits is the number of significant digits of the spectra
// tables (a relative rounding of at most 5e-7).
const spectrumDigits = 7

// writeSpectrum renders the long-form spectra of one model.
func writeSpectrum(buf io.Writer, st *config.Study, m *config.Model, tr *transfer.Trajectory) error {
	meta := []ecsv.Meta{{Key: "model", Value: m.Name}, {Key: "species", Value: m.Species}}
	for _, v := range m.Values {
		meta = append(meta, ecsv.Meta{Key: v.Key, Value: v.Text})
	}
	maxR := 0.0
	for _, cp := range tr.Checkpoints {
		maxR = math.Max(maxR, cp.RoverGOmega)
	}
	meta = append(meta, ecsv.Meta{Key: "max_r_over_gomega", Value: strconv.FormatFloat(maxR, 'g', -1, 64)})
	// Seven significant digits (spectrumDigits): half the bytes of the
	// exact form, far below any measurement's precision.
	vel := make([]float64, len(tr.Velocity))
	for i, v := range tr.Velocity {
		vel[i] = units.In(v, units.Velocity, "km/s")
	}
	keep := SpectraCheckpoints(st, tr)
	if len(keep) < len(tr.Checkpoints) {
		meta = append(meta, ecsv.Meta{Key: "spectra_checkpoints", Value: fmt.Sprintf("%d of %d (output.spectra = %q)", len(keep), len(tr.Checkpoints), config.SpectraDecades)})
	}
	w := ecsv.NewWriterSize(buf, ecsv.BufferSize, spectrumColumns, tableMeta(st, meta...)).SetDigits(spectrumDigits)
	// The velocities, and a checkpoint's saturation and R/gOmega, repeat on
	// many rows: formatted once, they save about 40 % of the formatting,
	// which is most of the cost of writing a spectrum.
	var velText []byte
	velEnd := make([]int, len(vel))
	for i, v := range vel {
		velText = w.AppendFloatCell(velText, v)
		velEnd[i] = len(velText)
	}
	var satText, rogText []byte
	for _, k := range keep {
		cp := tr.Checkpoints[k]
		if len(cp.I) != len(vel) || len(cp.Q) != len(vel) || len(cp.U) != len(vel) || len(cp.V) != len(vel) {
			return &contentError{fmt.Errorf("model %s checkpoint %d: spectra have %d/%d/%d/%d channels, grid has %d", m.Name, k, len(cp.I), len(cp.Q), len(cp.U), len(cp.V), len(vel))}
		}
		satText = w.AppendFloatCell(satText[:0], cp.Saturation)
		rogText = w.AppendFloatCell(rogText[:0], cp.RoverGOmega)
		start := 0
		for i := range vel {
			if err := w.Int(k).FloatText(satText).FloatText(velText[start:velEnd[i]]).Float(cp.I[i]).Float(cp.Q[i]).Float(cp.U[i]).Float(cp.V[i]).FloatText(rogText).Bool(cp.Valid).End(); err != nil {
				return err
			}
			start = velEnd[i]
		}
	}
	return w.Flush()
}

// contentError is a model result that cannot be tabulated; the model
// counts as failed.
type contentError struct{ err error }

func (e *contentError) Error() string { return e.err.Error() }

// populationOf names the population model that gave a checkpoint.
func populationOf(cp transfer.Checkpoint) string {
	if cp.Coherent {
		return transfer.Density.String()
	}
	return transfer.Rates.String()
}

// SummaryName is the file name of the summary table of a run directory.
// The .ecsv extension lets astropy's Table.read pick the format by itself.
const SummaryName = "summary.ecsv"

// legacySummaryName is the summary table's name in run directories written
// before version 0.2; they are still read, and a resumed or merged run
// replaces the file by SummaryName.
const legacySummaryName = "summary.csv"

// SummaryPath returns the path of the summary table of the run directory
// dir: SummaryName, or the legacy summary.csv when only that exists.
func SummaryPath(dir string) string {
	p := filepath.Join(dir, SummaryName)
	if _, err := os.Stat(p); err != nil {
		if old := filepath.Join(dir, legacySummaryName); fileExists(old) {
			return old
		}
	}
	return p
}

func fileExists(p string) bool {
	_, err := os.Stat(p)
	return err == nil
}

// MaxAllSpectra is the largest study whose spectra/ tables hold every
// checkpoint when output.spectra is not set (the same bound as the
// per-model figures, which show the spectra's evolution).
const MaxAllSpectra = MaxModelFigures

// SpectraCheckpoints returns the indices of the checkpoints of tr written
// to its spectra table, in order. With output.spectra = "all" (the default
// for studies of at most MaxAllSpectra models) that is every checkpoint;
// with "decades" (the default above) the first, the last, and for each
// power of ten of saturation within the column the checkpoint nearest to
// it in log saturation, if within half a decade. The summary and models/
// tables always hold every checkpoint; the checkpoint column keeps its
// index, so spectra rows still match summary rows.
func SpectraCheckpoints(st *config.Study, tr *transfer.Trajectory) []int {
	n := len(tr.Checkpoints)
	mode := st.Output.Spectra
	if mode == "" {
		mode = config.SpectraAll
		if len(st.Models) > MaxAllSpectra {
			mode = config.SpectraDecades
		}
	}
	all := make([]int, n)
	for i := range all {
		all[i] = i
	}
	if mode == config.SpectraAll || n <= 2 {
		return all
	}
	keep := make([]bool, n)
	keep[0], keep[n-1] = true, true
	lo, hi := math.Inf(1), math.Inf(-1)
	logs := make([]float64, n)
	for i, cp := range tr.Checkpoints {
		logs[i] = math.NaN()
		if cp.Saturation > 0 && !math.IsInf(cp.Saturation, 0) {
			logs[i] = math.Log10(cp.Saturation)
			lo, hi = math.Min(lo, logs[i]), math.Max(hi, logs[i])
		}
	}
	if lo <= hi {
		for p := math.Floor(lo); p <= math.Ceil(hi); p++ {
			best := -1
			for i, x := range logs {
				if !math.IsNaN(x) && (best < 0 || math.Abs(x-p) < math.Abs(logs[best]-p)) {
					best = i
				}
			}
			if best >= 0 && math.Abs(logs[best]-p) <= 0.5 {
				keep[best] = true
			}
		}
	}
	out := all[:0]
	for i, k := range keep {
		if k {
			out = append(out, i)
		}
	}
	return out
}
