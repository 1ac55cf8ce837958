// Package units converts quantities written by users ("25 mG", "43.122 GHz",
// "0.6 km/s", "30 deg") to the internal units of maserpol, and back.
//
// It is the one place where unit conversions happen: everything read from a
// file or a flag passes through Parse or Value, and every number written to
// a table or a terminal passes through In. The internal units are
//
//	Frequency    Hz
//	Field        gauss (G)
//	Velocity     m/s
//	Angle        rad
//	Temperature  K
//	Mass         amu (unified atomic mass unit, Da)
//	Rate         s^-1
//	SolidAngle   sr
//	Density      cm^-3
//	Length       m
//	FluxDensity  Jy
//
// Unit names are case-sensitive where case carries meaning (mG and MG are
// not the same field) and accept the usual spellings otherwise ("deg",
// "degree", "degrees", "°"). The unit table is Table.
package units

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"
)

// Kind is the physical dimension of a quantity.
type Kind int

const (
	Dimensionless Kind = iota
	Frequency
	Field
	Velocity
	Angle
	Temperature
	Mass
	Rate
	SolidAngle
	Density
	Length
	FluxDensity
)

var kindNames = [...]string{
	Dimensionless: "dimensionless",
	Frequency:     "frequency",
	Field:         "magnetic field",
	Velocity:      "velocity",
	Angle:         "angle",
	Temperature:   "temperature",
	Mass:          "mass",
	Rate:          "rate",
	SolidAngle:    "solid angle",
	Density:       "number density",
	Length:        "length",
	FluxDensity:   "flux density",
}

func (k Kind) String() string {
	if k < 0 || int(k) >= len(kindNames) {
		return "kind(" + strconv.Itoa(int(k)) + ")"
	}
	return kindNames[k]
}

// Unit is one entry of the unit table: its names and its size in the
// internal unit of its kind.
type Unit struct {
	Kind  Kind
	Names []string // first is the canonical spelling
	Scale float64  // internal units per one of this unit
}

// Astronomical length units: IAU 2012 resolution B2 (au) and the parsec
// derived from it; light year with the Julian year (IAU).
const (
	au = 149597870700.0
	pc = au * 648000 / math.Pi
)

// Table lists every unit maserpol accepts.
var Table = []Unit{
	{Frequency, []string{"Hz"}, 1},
	{Frequency, []string{"kHz"}, 1e3},
	{Frequency, []string{"MHz"}, 1e6},
	{Frequency, []string{"GHz"}, 1e9},

	{Field, []string{"G", "gauss"}, 1},
	{Field, []string{"mG", "milligauss"}, 1e-3},
	{Field, []string{"uG", "µG", "microgauss"}, 1e-6},
	{Field, []string{"kG", "kilogauss"}, 1e3},
	{Field, []string{"T", "tesla"}, 1e4},
	{Field, []string{"mT"}, 10},
	{Field, []string{"uT", "µT"}, 1e-2},
	{Field, []string{"nT"}, 1e-5},

	{Velocity, []string{"m/s", "m s-1", "m s^-1"}, 1},
	{Velocity, []string{"km/s", "km s-1", "km s^-1"}, 1e3},
	{Velocity, []string{"cm/s", "cm s-1", "cm s^-1"}, 1e-2},

	{Angle, []string{"deg", "degree", "degrees", "°"}, math.Pi / 180},
	{Angle, []string{"rad", "radian", "radians"}, 1},
	{Angle, []string{"arcmin"}, math.Pi / (180 * 60)},
	{Angle, []string{"arcsec"}, math.Pi / (180 * 3600)},
	{Angle, []string{"mas"}, math.Pi / (180 * 3600e3)},
	{Angle, []string{"uas", "µas"}, math.Pi / (180 * 3600e6)},

	{Temperature, []string{"K", "kelvin"}, 1},
	{Temperature, []string{"mK"}, 1e-3},

	{Mass, []string{"amu", "u", "Da", "dalton"}, 1},
	{Mass, []string{"kg"}, 1 / 1.66053906660e-27}, // CODATA 2018 atomic mass constant

	{Rate, []string{"s^-1", "s-1", "/s", "Hz"}, 1},
	{Rate, []string{"min^-1", "min-1", "/min"}, 1.0 / 60},
	{Rate, []string{"hr^-1", "h-1", "/hr", "/h"}, 1.0 / 3600},

	{SolidAngle, []string{"sr"}, 1},
	{SolidAngle, []string{"deg2", "deg^2", "sq deg"}, (math.Pi / 180) * (math.Pi / 180)},
	{SolidAngle, []string{"arcsec2", "arcsec^2"}, (math.Pi / 648000) * (math.Pi / 648000)},

	{Density, []string{"cm^-3", "cm-3", "/cm3", "/cm^3"}, 1},
	{Density, []string{"m^-3", "m-3", "/m3", "/m^3"}, 1e-6},

	{Length, []string{"m"}, 1},
	{Length, []string{"cm"}, 1e-2},
	{Length, []string{"km"}, 1e3},
	{Length, []string{"au", "AU"}, au},
	{Length, []string{"pc"}, pc},

	{FluxDensity, []string{"Jy"}, 1},
	{FluxDensity, []string{"mJy"}, 1e-3},
	{FluxDensity, []string{"uJy", "µJy"}, 1e-6},

	{Dimensionless, []string{"", "1"}, 1},
	{Dimensionless, []string{"%", "percent"}, 1e-2},
}

func lookup(name string, k Kind) (Unit, bool) {
	for _, u := range Table {
		if u.Kind != k {
			continue
		}
		for _, n := range u.Names {
			if n == name {
				return u, true
			}
		}
	}
	// Forgive case only for spelled-out names: in symbols case carries
	// meaning (MG is not mG).
	if len(name) <= 3 {
		return Unit{}, false
	}
	var found Unit
	n := 0
	for _, u := range Table {
		if u.Kind != k {
			continue
		}
		for _, nm := range u.Names {
			if strings.EqualFold(nm, name) {
				found = u
				n++
				break
			}
		}
	}
	return found, n == 1
}

// Allowed lists the canonical unit names of a kind, for error messages.
func Allowed(k Kind) string {
	var names []string
	for _, u := range Table {
		if u.Kind == k && u.Names[0] != "" {
			names = append(names, u.Names[0])
		}
	}
	if k == Dimensionless {
		names = append([]string{"a plain number"}, names...)
	}
	return strings.Join(names, ", ")
}

// Parse reads a number followed by a unit, such as "25 mG" or "1.2e-3 G",
// and returns the value in the internal unit of k. The space between the
// number and the unit is optional. A bare number is accepted only for
// Dimensionless quantities.
func Parse(s string, k Kind) (float64, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return 0, fmt.Errorf("empty %s; write a number and a unit (allowed: %s)", k, Allowed(k))
	}
	i := numberEnd(t)
	if i == 0 {
		return 0, fmt.Errorf("%q does not start with a number; write e.g. \"1.5 %s\"", s, firstUnit(k))
	}
	x, err := strconv.ParseFloat(t[:i], 64)
	if err != nil {
		return 0, fmt.Errorf("%q: bad number %q", s, t[:i])
	}
	name := strings.TrimSpace(t[i:])
	u, ok := lookup(name, k)
	if !ok {
		if name == "" {
			return 0, fmt.Errorf("%q has no unit; give a unit of %s (allowed: %s)", s, k, Allowed(k))
		}
		if other, ok := anyKind(name); ok {
			return 0, fmt.Errorf("%q: %q is a unit of %s, not of %s (allowed: %s)", s, name, other, k, Allowed(k))
		}
		return 0, fmt.Errorf("%q: unknown unit %q for %s (allowed: %s)", s, name, k, Allowed(k))
	}
	v := x * u.Scale
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}

// ParsePlain reads a quantity as Parse does, and also a bare number,
// taken to be in plainUnit, as config files accept one for the keys whose
// unit is fixed by the trade (temperatures in K, rates in s^-1, solid
// angles in sr). Command-line flags use it so that "--tb 1e11" means what
// tb = 1e11 means in a config. An empty plainUnit requires a unit.
func ParsePlain(s string, k Kind, plainUnit string) (float64, error) {
	t := strings.TrimSpace(s)
	if i := numberEnd(t); i > 0 && i == len(t) && plainUnit != "" {
		x, err := strconv.ParseFloat(t, 64)
		if err != nil {
			return 0, fmt.Errorf("%q: bad number", s)
		}
		return plain(x, k, plainUnit)
	}
	return Parse(s, k)
}

// numberEnd returns the length of the leading floating-point literal of s.
func numberEnd(s string) int {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for i < len(s) && s[i] >= '0' && s[i] <= '9' {
		i++
		digits++
	}
	if i < len(s) && s[i] == '.' {
		i++
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
			digits++
		}
	}
	if digits == 0 {
		return 0
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		j := i + 1
		if j < len(s) && (s[j] == '+' || s[j] == '-') {
			j++
		}
		k := j
		for k < len(s) && s[k] >= '0' && s[k] <= '9' {
			k++
		}
		if k > j {
			i = k
		}
	}
	return i
}

func anyKind(name string) (Kind, bool) {
	for _, u := range Table {
		for _, n := range u.Names {
			if n == name && n != "" {
				return u.Kind, true
			}
		}
	}
	return 0, false
}

func firstUnit(k Kind) string {
	for _, u := range Table {
		if u.Kind == k {
			return u.Names[0]
		}
	}
	return ""
}

// Value converts a value decoded from TOML: a string with a unit, or a plain
// number (int64 or float64) taken to be in plainUnit. An empty plainUnit
// means the key does not name its unit and a number alone is an error
// (unless k is Dimensionless).
func Value(v any, k Kind, plainUnit string) (float64, error) {
	switch x := v.(type) {
	case string:
		return Parse(x, k)
	case int64:
		return plain(float64(x), k, plainUnit)
	case int:
		return plain(float64(x), k, plainUnit)
	case float64:
		return plain(x, k, plainUnit)
	default:
		return 0, fmt.Errorf("expected %s as a string with a unit, got %s (allowed: %s)", k, kindOfValue(v), Allowed(k))
	}
}

func plain(x float64, k Kind, unit string) (float64, error) {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0, fmt.Errorf("%v is not a finite number", x)
	}
	if unit == "" && k != Dimensionless {
		return 0, fmt.Errorf("%v has no unit; write it as a string such as \"%v %s\" (allowed: %s)", x, x, firstUnit(k), Allowed(k))
	}
	u, ok := lookup(unit, k)
	if !ok {
		panic("units: unknown plain unit " + unit + " for " + k.String())
	}
	return x * u.Scale, nil
}

// In converts x from the internal unit of k to the named unit. It panics on
// a unit not in Table: output units are chosen by the program, not users.
func In(x float64, k Kind, unit string) float64 {
	u, ok := lookup(unit, k)
	if !ok {
		panic("units: unknown unit " + unit + " for " + k.String())
	}
	return x / u.Scale
}

// Format writes x (internal unit) in the named unit with its unit, using
// the shortest representation that round-trips through Parse.
func Format(x float64, k Kind, unit string) string {
	s := strconv.FormatFloat(In(x, k, unit), 'g', -1, 64)
	if unit == "" {
		return s
	}
	return s + " " + unit
}

// Kinds returns the kinds that have units, sorted, for documentation.
func Kinds() []Kind {
	seen := map[Kind]bool{}
	var ks []Kind
	for _, u := range Table {
		if !seen[u.Kind] {
			seen[u.Kind] = true
			ks = append(ks, u.Kind)
		}
	}
	sort.Slice(ks, func(i, j int) bool { return ks[i] < ks[j] })
	return ks
}

// kindOfValue names the TOML type of a decoded value for messages.
func kindOfValue(v any) string {
	switch v.(type) {
	case bool:
		return "a boolean"
	case []any, []map[string]any:
		return "an array"
	case map[string]any:
		return "a table"
	case time.Time:
		return "a date-time"
	case nil:
		return "nothing"
	}
	return "a value of another type"
}
