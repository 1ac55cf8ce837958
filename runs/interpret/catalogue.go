package interpret

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/unit/constant"

	"maserpol/config/units"
	"maserpol/runs/ecsv"
)

// CatalogueRow is one feature of a catalogue file. Absent values are NaN.
type CatalogueRow struct {
	Line     int // 1-based line of the row in the file
	Feature  string
	Spectrum string // path, relative paths resolved against the catalogue's directory
	// Tb is the peak brightness temperature (K); Flux (Jy) with the
	// feature's FWHM sizes SizeMaj, SizeMin (rad) gives it instead.
	Tb, Flux, SizeMaj, SizeMin float64
	DOmega                     float64 // beaming solid angle, sr
	SatLo, SatHi               float64 // saturation R/Gamma
	Ml, MlErr                  float64 // fractions
	EVPA                       float64 // rad
	Theta, ThetaErr            float64 // rad
	X, Y                       float64 // sky offsets east and north, rad
	WinLo, WinHi               float64 // fit window, m/s
	Branch                     Branch
	BranchGiven                bool
	// Err is a problem with this row; the others still run.
	Err error
}

// catColumn is a catalogue quantity: accepted names (case-insensitive;
// the unit may follow the last underscore) and its kind.
type catColumn struct {
	names []string
	kind  units.Kind
	set   func(r *CatalogueRow, x float64)
}

var catColumns = []catColumn{
	{[]string{"tb", "t_b", "tb_peak"}, units.Temperature, func(r *CatalogueRow, x float64) { r.Tb = x }},
	{[]string{"flux", "flux_peak", "s_peak"}, units.FluxDensity, func(r *CatalogueRow, x float64) { r.Flux = x }},
	{[]string{"size", "size_maj", "fwhm_maj"}, units.Angle, func(r *CatalogueRow, x float64) { r.SizeMaj = x }},
	{[]string{"size_min", "fwhm_min"}, units.Angle, func(r *CatalogueRow, x float64) { r.SizeMin = x }},
	{[]string{"domega", "beaming"}, units.SolidAngle, func(r *CatalogueRow, x float64) { r.DOmega = x }},
	{[]string{"saturation_lo", "saturation"}, units.Dimensionless, func(r *CatalogueRow, x float64) { r.SatLo = x }},
	{[]string{"saturation_hi"}, units.Dimensionless, func(r *CatalogueRow, x float64) { r.SatHi = x }},
	{[]string{"ml", "m_l"}, units.Dimensionless, func(r *CatalogueRow, x float64) { r.Ml = x }},
	{[]string{"ml_err", "m_l_err", "e_ml"}, units.Dimensionless, func(r *CatalogueRow, x float64) { r.MlErr = x }},
	{[]string{"evpa", "chi"}, units.Angle, func(r *CatalogueRow, x float64) { r.EVPA = x }},
	{[]string{"theta"}, units.Angle, func(r *CatalogueRow, x float64) { r.Theta = x }},
	{[]string{"theta_err", "e_theta"}, units.Angle, func(r *CatalogueRow, x float64) { r.ThetaErr = x }},
	{[]string{"ra_offset", "x_offset", "dx"}, units.Angle, func(r *CatalogueRow, x float64) { r.X = x }},
	{[]string{"dec_offset", "y_offset", "dy"}, units.Angle, func(r *CatalogueRow, x float64) { r.Y = x }},
	{[]string{"window_lo"}, units.Velocity, func(r *CatalogueRow, x float64) { r.WinLo = x }},
	{[]string{"window_hi"}, units.Velocity, func(r *CatalogueRow, x float64) { r.WinHi = x }},
}

// CatalogueColumns lists the accepted column names of a catalogue with
// their kinds, for documentation and error messages.
func CatalogueColumns() string {
	s := []string{"feature (text, required)", "spectrum (file name, required)"}
	for _, c := range catColumns {
		s = append(s, fmt.Sprintf("%s (%s)", strings.Join(c.names, "|"), c.kind))
	}
	return strings.Join(append(s, "branch (auto|parallel|perpendicular)"), ", ")
}

// IsCatalogue reports whether a table is a feature catalogue (it has a
// spectrum column) rather than a spectrum.
func IsCatalogue(b []byte, name string) bool {
	t, err := ecsv.Read(bytes.NewReader(b), name)
	return err == nil && findColumn(t, []string{"spectrum", "spectrum_file", "file"}) >= 0
}

// matchCatColumn finds the column for quantity c and the unit its name
// carries: "tb" or "tb_K" or "TB_mK". The unit in the ECSV header wins.
func matchCatColumn(t *ecsv.Table, c catColumn) (int, string) {
	for _, n := range c.names {
		for i, col := range t.Columns {
			name := col.Name
			if strings.EqualFold(name, n) {
				return i, ""
			}
			if len(name) > len(n)+1 && strings.EqualFold(name[:len(n)], n) && name[len(n)] == '_' {
				suffix := name[len(n)+1:]
				if suffix == "kms" {
					suffix = "km/s"
				}
				if _, err := units.Parse("1 "+suffix, c.kind); err == nil {
					// A longer quantity name must not be taken for this one
					// (theta_err is not theta with unit "err").
					return i, suffix
				}
			}
		}
	}
	return -1, ""
}

// ParseCatalogue reads a feature catalogue (ECSV or CSV). A problem with
// the file as a whole (no feature or spectrum column, a unit that does not
// convert) is an error; a problem with one row is recorded in its Err.
func ParseCatalogue(b []byte, name string) ([]CatalogueRow, error) {
	t, err := ecsv.Read(bytes.NewReader(b), name)
	if err != nil {
		return nil, err
	}
	lines := dataLines(b)
	fj := findColumn(t, []string{"feature", "name", "id"})
	sj := findColumn(t, []string{"spectrum", "spectrum_file", "file"})
	if fj < 0 || sj < 0 {
		miss := "feature"
		if fj >= 0 {
			miss = "spectrum"
		}
		return nil, &ObservedError{File: name, Column: miss, Msg: "missing column", Allowed: CatalogueColumns()}
	}
	if len(t.Rows) == 0 {
		return nil, &ObservedError{File: name, Msg: "no features", Allowed: "one row per feature"}
	}
	dir := filepath.Dir(name)
	rows := make([]CatalogueRow, len(t.Rows))
	nan := math.NaN()
	for i := range rows {
		r := &rows[i]
		*r = CatalogueRow{Tb: nan, Flux: nan, SizeMaj: nan, SizeMin: nan, DOmega: nan, SatLo: nan, SatHi: nan, Ml: nan, MlErr: nan, EVPA: nan, Theta: nan, ThetaErr: nan, X: nan, Y: nan, WinLo: nan, WinHi: nan}
		if i < len(lines) {
			r.Line = lines[i]
		}
		r.Feature = strings.TrimSpace(t.Rows[i][fj])
		if r.Feature == "" {
			r.Feature = fmt.Sprintf("row%d", i+1)
		}
		sp := strings.TrimSpace(t.Rows[i][sj])
		if sp == "" {
			r.Err = &ObservedError{File: name, Line: r.Line, Column: t.Columns[sj].Name, Msg: "empty spectrum file name", Allowed: "the file name of the feature's spectrum"}
		} else if filepath.IsAbs(sp) {
			r.Spectrum = sp
		} else {
			r.Spectrum = filepath.Join(dir, sp)
		}
	}
	for _, c := range catColumns {
		j, suffix := matchCatColumn(t, c)
		if j < 0 {
			continue
		}
		col := t.Columns[j]
		u := astropyUnit(col.Unit)
		if u == "" {
			u = suffix
		}
		scale := 1.0
		if u != "" || c.kind != units.Dimensionless {
			if u == "" {
				return nil, &ObservedError{File: name, Column: col.Name, Msg: fmt.Sprintf("no unit for a %s", c.kind), Allowed: "a unit in the ECSV header, in the name (e.g. " + c.names[0] + "_" + firstUnitOf(c.kind) + ") or in brackets in CSV; units: " + units.Allowed(c.kind)}
			}
			if scale, err = units.Parse("1 "+u, c.kind); err != nil {
				return nil, &ObservedError{File: name, Column: col.Name, Msg: fmt.Sprintf("unit %q does not convert to a %s", u, c.kind), Allowed: units.Allowed(c.kind)}
			}
		}
		for i := range rows {
			v := strings.TrimSpace(t.Rows[i][j])
			if v == "" || strings.EqualFold(v, "nan") {
				continue // absent
			}
			x, err := parseCell(v)
			if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
				if rows[i].Err == nil {
					rows[i].Err = &ObservedError{File: name, Line: rows[i].Line, Column: col.Name, Msg: fmt.Sprintf("%q is not a finite number", v), Allowed: "a number, or an empty cell for none"}
				}
				continue
			}
			c.set(&rows[i], x*scale)
		}
	}
	if bj := findColumn(t, []string{"branch"}); bj >= 0 {
		for i := range rows {
			switch strings.ToLower(strings.TrimSpace(t.Rows[i][bj])) {
			case "", "auto":
			case "parallel":
				rows[i].Branch, rows[i].BranchGiven = Parallel, true
			case "perpendicular":
				rows[i].Branch, rows[i].BranchGiven = Perpendicular, true
			default:
				if rows[i].Err == nil {
					rows[i].Err = &ObservedError{File: name, Line: rows[i].Line, Column: t.Columns[bj].Name, Msg: fmt.Sprintf("branch %q", t.Rows[i][bj]), Allowed: "auto, parallel, perpendicular"}
				}
			}
		}
	}
	seen := map[string]int{}
	for i := range rows {
		r := &rows[i]
		if k, ok := seen[r.Feature]; ok && r.Err == nil {
			r.Err = &ObservedError{File: name, Line: r.Line, Column: t.Columns[fj].Name, Msg: fmt.Sprintf("feature %q repeats line %d", r.Feature, rows[k].Line), Allowed: "unique feature names"}
		}
		seen[r.Feature] = i
		if r.Err == nil && !math.IsNaN(r.Ml) && (r.Ml < 0 || r.Ml > 1) {
			r.Err = &ObservedError{File: name, Line: r.Line, Column: "ml", Msg: fmt.Sprintf("m_l = %g", r.Ml), Allowed: "0 to 1 (or 0 to 100 %)"}
		}
	}
	return rows, nil
}

// ReadCatalogue reads a catalogue file.
func ReadCatalogue(path string) ([]CatalogueRow, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseCatalogue(b, path)
}

func parseCell(v string) (float64, error) { return strconv.ParseFloat(v, 64) }

func firstUnitOf(k units.Kind) string {
	for _, u := range units.Table {
		if u.Kind == k && u.Names[0] != "" {
			return strings.ReplaceAll(u.Names[0], "/", "")
		}
	}
	return ""
}

// BrightnessFromFlux is the Rayleigh-Jeans brightness temperature (K) of
// a source of flux density s (Jy) with Gaussian FWHM sizes maj, min (rad)
// at frequency nu (Hz): T_b = S c^2 / (2 k nu^2 Omega), Omega = pi maj
// min / (4 ln 2) (standard radio astronomy).
func BrightnessFromFlux(s, maj, min, nu float64) float64 {
	const jy = 1e-26 // W m^-2 Hz^-1
	c := float64(constant.LightSpeedInVacuum)
	k := float64(constant.Boltzmann)
	omega := math.Pi * maj * min / (4 * math.Ln2)
	return s * jy * c * c / (2 * k * nu * nu * omega)
}
