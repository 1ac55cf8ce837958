package interpret

import (
	"bytes"
	"context"
	"fmt"
	"math"
	"strings"

	"maserpol/runs/ecsv"
	"maserpol/transfer"
)

// FieldDefaults are the per-run values a catalogue row may leave out.
type FieldDefaults struct {
	// Saturation range (R/Gamma), or NaN.
	SatLo, SatHi float64
	// Tb range (K) with DOmega range (sr) gives the saturation; NaN when
	// not given.
	TbLo, TbHi         float64
	DOmegaLo, DOmegaHi float64
	Theta, ThetaErr    float64 // rad or NaN
	Ml, MlErr          float64 // or NaN
	Branch             Branch
	Window             [2]float64 // m/s; zero: automatic
	Hanning            bool
	Read               ReadOptions
}

// FeatureFromRow reads a catalogue row's spectrum and fills the feature
// from the row, then from the run defaults. base gives the species and
// decay rates for the T_b dOmega conversion. The error names the row.
func FeatureFromRow(row CatalogueRow, d FieldDefaults, base transfer.Params) (Feature, error) {
	if row.Err != nil {
		return Feature{}, row.Err
	}
	opt := d.Read
	opt.Stokes = "IV"
	obs, err := ReadObserved(row.Spectrum, opt)
	if err != nil {
		return Feature{}, err
	}
	f := Feature{Name: row.Feature, Obs: obs, Hanning: d.Hanning, Theta: row.Theta, ThetaErr: row.ThetaErr, Ml: row.Ml, MlErr: row.MlErr, Branch: d.Branch, Window: d.Window}
	if row.BranchGiven {
		f.Branch = row.Branch
	}
	if math.IsNaN(f.Theta) && math.IsNaN(f.Ml) {
		f.Theta, f.ThetaErr, f.Ml, f.MlErr = d.Theta, d.ThetaErr, d.Ml, d.MlErr
	}
	if !math.IsNaN(f.Ml) && math.IsNaN(f.MlErr) {
		f.MlErr = 0
		f.Notes = append(f.Notes, "m_l without an error: theta is taken as exact (give ml_err)")
	}
	if !math.IsNaN(row.WinLo) && !math.IsNaN(row.WinHi) {
		f.Window = [2]float64{row.WinLo, row.WinHi}
	}
	where := fmt.Sprintf("line %d (feature %s)", row.Line, row.Feature)
	tb := row.Tb
	if math.IsNaN(tb) && !math.IsNaN(row.Flux) {
		if math.IsNaN(row.SizeMaj) {
			return f, fmt.Errorf("%s: a flux needs the feature size (column size_mas) to give T_b", where)
		}
		mn := row.SizeMin
		if math.IsNaN(mn) {
			mn = row.SizeMaj
		}
		if !(row.Flux > 0 && row.SizeMaj > 0 && mn > 0) {
			return f, fmt.Errorf("%s: flux %g Jy and size %g x %g rad must be > 0", where, row.Flux, row.SizeMaj, mn)
		}
		tb = BrightnessFromFlux(row.Flux, row.SizeMaj, mn, base.Species.Frequency)
	}
	switch {
	case !math.IsNaN(row.SatLo):
		f.SatLo, f.SatHi = row.SatLo, row.SatHi
		if math.IsNaN(f.SatHi) {
			f.SatHi = f.SatLo
		}
		f.SatFrom = "catalogue"
	case !math.IsNaN(tb):
		olo, ohi := row.DOmega, row.DOmega
		if math.IsNaN(olo) {
			olo, ohi = d.DOmegaLo, d.DOmegaHi
		}
		if math.IsNaN(olo) {
			return f, fmt.Errorf("%s: T_b needs the beaming solid angle (column domega_sr or --domega)", where)
		}
		if !(tb > 0 && olo > 0) {
			return f, fmt.Errorf("%s: T_b = %g K and dOmega = %g sr must be > 0", where, tb, olo)
		}
		f.SatLo, f.SatHi = SaturationOfTbdOmega(base, tb*olo), SaturationOfTbdOmega(base, tb*ohi)
		f.SatFrom = fmt.Sprintf("T_b dOmega = %.3g..%.3g K sr", tb*olo, tb*ohi)
	case !math.IsNaN(d.SatLo):
		f.SatLo, f.SatHi, f.SatFrom = d.SatLo, d.SatHi, "--saturation"
	case !math.IsNaN(d.TbLo):
		f.SatLo, f.SatHi = SaturationOfTbdOmega(base, d.TbLo*d.DOmegaLo), SaturationOfTbdOmega(base, d.TbHi*d.DOmegaHi)
		f.SatFrom = "--tb, --domega"
	default:
		return f, fmt.Errorf("%s: no saturation: give tb_K (or flux_Jy with size_mas) and domega, saturation_lo/hi in the catalogue, or --tb/--domega or --saturation", where)
	}
	if !(f.SatLo > 0) || f.SatHi < f.SatLo {
		return f, fmt.Errorf("%s: saturation %g..%g (allowed: 0 < lo <= hi)", where, f.SatLo, f.SatHi)
	}
	return f, nil
}

// FieldGridSpec asks for the factor grid a set of features needs.
type FieldGridSpec struct {
	Base      transfer.Params // species, Doppler width, decay rates
	Component int             // index or Blend
	Thetas    []float64       // rad
	// SatLo, SatHi: the saturation range the features span; the grid
	// runs from min(1e-3, SatLo) to max(10, SatHi).
	SatLo, SatHi         float64
	CheckpointsPerDecade int
}

// BuildFactorGrid runs ZeemanFactors once for the whole catalogue.
func BuildFactorGrid(ctx context.Context, s FieldGridSpec, workers int, run RunFunc) (*FactorGrid, *Factors, error) {
	p := s.Base
	p.FirstCheckpoint = math.Min(1e-3, s.SatLo)
	p.Saturation = math.Max(10, s.SatHi*1.01)
	p.CheckpointsPerDecade = s.CheckpointsPerDecade
	if p.CheckpointsPerDecade == 0 {
		p.CheckpointsPerDecade = 2
	}
	f, err := ZeemanFactors(ctx, FactorSpec{Base: p, Thetas: s.Thetas, Component: s.Component}, workers, run)
	if err != nil {
		return nil, nil, err
	}
	g, err := NewFactorGrid(f)
	return g, f, err
}

// FieldRow is one line of the output table: a result or a bad feature.
type FieldRow struct {
	Feature string
	Result  *FeatureResult // nil for a bad feature
	Err     error
	X, Y    float64 // sky offsets (rad), NaN when not given
	EVPA    float64 // rad or NaN
	Ml      float64
}

// fieldColumns are the columns of the field table.
var fieldColumns = []ecsv.Column{
	{Name: "feature", Datatype: ecsv.String, Description: "feature name"},
	{Name: "verdict", Datatype: ecsv.String, Description: "ok, poor fit, outside validity, not detected, or bad input"},
	{Name: "velocity_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "velocity of the I peak"},
	{Name: "A_ms", Unit: "m / s", Datatype: ecsv.Float64, Description: "fitted A of V = A dI/dv + C I"},
	{Name: "A_err_ms", Unit: "m / s", Datatype: ecsv.Float64, Description: "1-sigma error of A (channel correlation included)"},
	{Name: "C", Datatype: ecsv.Float64, Description: "fitted C of V = A dI/dv + C I"},
	{Name: "C_err", Datatype: ecsv.Float64, Description: "1-sigma error of C"},
	{Name: "factor_ms_per_G", Unit: "m / (s G)", Datatype: ecsv.Float64, Description: "Zeeman factor of the full model: B cos(theta) = A / factor"},
	{Name: "factor_err_ms_per_G", Unit: "m / (s G)", Datatype: ecsv.Float64, Description: "spread of the factor over the saturation (and theta) range, (max-min)/sqrt(12)"},
	{Name: "B_los_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "line-of-sight field, positive towards the observer"},
	{Name: "B_los_err_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "1-sigma error of B_los (fit and factor spread)"},
	{Name: "detected", Datatype: ecsv.Bool, Description: "|A| >= 3 sigma_A"},
	{Name: "B_los_limit_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "3-sigma upper limit on |B_los|: (|A| + 3 sigma_A) / min |factor|"},
	{Name: "theta_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "field angle to the line of sight (nan: unknown)"},
	{Name: "theta_err_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "1-sigma error of theta"},
	{Name: "theta_from", Datatype: ecsv.String, Description: "given, m_l (GKK), or none"},
	{Name: "theta_other_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "theta on the other GKK branch (nan: none)"},
	{Name: "field_vs_evpa", Datatype: ecsv.String, Description: "projected field parallel or perpendicular to the EVPA (54.7 deg rule), or unknown"},
	{Name: "p_perpendicular", Datatype: ecsv.Float64, Description: "probability of the perpendicular GKK branch for field directions uniform on the sphere"},
	{Name: "ambiguous", Datatype: ecsv.Bool, Description: "parallel/perpendicular not decided within the errors"},
	{Name: "B_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "field strength B_los / cos(theta) (nan: theta unknown)"},
	{Name: "B_err_mG", Unit: "mG", Datatype: ecsv.Float64, Description: "1-sigma error of B"},
	{Name: "saturation", Datatype: ecsv.Float64, Description: "R/Gamma, geometric middle of the range used"},
	{Name: "saturation_lo", Datatype: ecsv.Float64, Description: "R/Gamma, low end"},
	{Name: "saturation_hi", Datatype: ecsv.Float64, Description: "R/Gamma, high end"},
	{Name: "r_over_gomega", Datatype: ecsv.Float64, Description: "R/(g Omega) at the top of the saturation range and the measured |B| (valid <= 0.1)"},
	{Name: "chi2_r", Datatype: ecsv.Float64, Description: "chi-square of the V fit per degree of freedom"},
	{Name: "p_fit", Datatype: ecsv.Float64, Description: "probability of a chi-square this large for a correct fit (poor fit below 0.001)"},
	{Name: "n_channels", Datatype: ecsv.Int64, Description: "channels in the fit window"},
	{Name: "window_lo_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "fit window, low end"},
	{Name: "window_hi_kms", Unit: "km / s", Datatype: ecsv.Float64, Description: "fit window, high end"},
	{Name: "hanning", Datatype: ecsv.Bool, Description: "channels treated as Hanning-correlated"},
	{Name: "error_inflation", Datatype: ecsv.Float64, Description: "factor by which channel correlation multiplies sigma_A"},
	{Name: "ml", Datatype: ecsv.Float64, Description: "measured fractional linear polarization (nan: none)"},
	{Name: "evpa_deg", Unit: "deg", Datatype: ecsv.Float64, Description: "measured EVPA (nan: none)"},
	{Name: "ra_offset_mas", Unit: "mas", Datatype: ecsv.Float64, Description: "sky offset east"},
	{Name: "dec_offset_mas", Unit: "mas", Datatype: ecsv.Float64, Description: "sky offset north"},
	{Name: "note", Datatype: ecsv.String, Description: "reasons for the verdict, warnings, or the input error"},
}

// WriteFieldTable writes the field table as ECSV.
func WriteFieldTable(rows []FieldRow, meta []ecsv.Meta) ([]byte, error) {
	var buf bytes.Buffer
	w := ecsv.NewWriter(&buf, fieldColumns, meta)
	const deg = 180 / math.Pi
	const mas = 180 / math.Pi * 3600e3
	nan := math.NaN()
	for _, fr := range rows {
		r := fr.Result
		if r == nil {
			msg := ""
			if fr.Err != nil {
				msg = fr.Err.Error()
			}
			vals := []any{fr.Feature, "bad input"}
			for _, c := range fieldColumns[2 : len(fieldColumns)-1] {
				switch c.Datatype {
				case ecsv.Float64:
					vals = append(vals, nan)
				case ecsv.Bool:
					vals = append(vals, false)
				case ecsv.Int64:
					vals = append(vals, 0)
				default:
					vals = append(vals, "")
				}
			}
			vals[len(vals)-4] = fr.EVPA * deg
			vals[len(vals)-3] = fr.X * mas
			vals[len(vals)-2] = fr.Y * mas
			vals = append(vals, msg)
			if err := w.Write(vals...); err != nil {
				return nil, err
			}
			continue
		}
		other, orient, pperp, amb := nan, OrientUnknown.String(), nan, false
		if r.GKK != nil {
			other, orient, pperp, amb = r.GKK.Alt*deg, r.GKK.Orientation.String(), r.GKK.PPerpendicular, r.GKK.Ambiguous
		} else if !math.IsNaN(r.Theta) {
			orient = OrientParallel.String()
			if r.Theta > ThetaF {
				orient = OrientPerpendicular.String()
			}
			amb = math.Abs(r.Theta-ThetaF) <= r.ThetaErr
		}
		sat := math.Sqrt(r.SatLo * r.SatHi)
		err := w.Write(fr.Feature, string(r.Verdict), r.PeakV/1e3, r.Fit.A, r.Fit.AErr, r.Fit.C, r.Fit.CErr,
			r.Factor.Mid, r.Factor.Err, r.BLos*1e3, r.BLosErr*1e3, r.Detected, r.UpperLimit*1e3,
			r.Theta*deg, r.ThetaErr*deg, r.ThetaFrom, other, orient, pperp, amb, r.B*1e3, r.BErr*1e3,
			sat, r.SatLo, r.SatHi, r.RoverGOmega, r.Fit.RedChi2(), r.Fit.PValue, r.Fit.N, r.Window[0]/1e3, r.Window[1]/1e3,
			r.Hanning, r.Fit.Inflation, fr.Ml, fr.EVPA*deg, fr.X*mas, fr.Y*mas, strings.Join(r.Notes, "; "))
		if err != nil {
			return nil, err
		}
	}
	if err := w.Flush(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}
