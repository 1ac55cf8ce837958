package config

import (
	"math"
	"strconv"

	"maserpol/config/units"
	"maserpol/transfer"
)

// keyType is the TOML shape a key accepts.
type keyType int

const (
	tQuantity keyType = iota // number with a unit (units.Kind); sweepable
	tNumber                  // dimensionless number; sweepable
	tInt                     // integer; sweepable by list or range
	tString                  // free string
	tEnum                    // one of spec.enum
	tBool                    // true or false
	tStrings                 // list of strings from spec.enum (not a sweep)
	tWeights                 // table of F label -> non-negative weight
)

// spec describes one key of the schema. Ranges are in internal units.
type spec struct {
	table, name string
	typ         keyType
	kind        units.Kind
	plain       string // unit of a bare number; "" = a unit is required
	unit        string // unit of defaults, generated texts and the summary column
	rangeUnit   string // unit of the allowed range in messages, if not unit
	example     string // value written by Starter, if not the default
	column      string // summary column name when swept
	def         string // default as TOML text; "" = no default
	min, max    float64
	minOpen     bool // min excluded
	enum        []string
	doc         string
	set         func(p *transfer.Params, x float64)
}

func (s *spec) path() string {
	if s.table == "" {
		return s.name
	}
	return s.table + "." + s.name
}

func (s *spec) sweepable() bool {
	return s.typ == tQuantity || s.typ == tNumber || s.typ == tInt
}

// allowed describes the accepted values of s for messages.
func (s *spec) allowed() string {
	switch s.typ {
	case tEnum, tStrings:
		return quoteList(s.enum)
	case tBool:
		return "true, false"
	case tString:
		return "a string"
	case tWeights:
		return `a table of F label (or "F1,F") = weight >= 0, e.g. { "1" = 1.0, "2" = 0.5 } or { "13/2,7" = 2.0 }`
	}
	f := func(x float64) string {
		if s.typ == tQuantity {
			u := s.unit
			if s.rangeUnit != "" {
				u = s.rangeUnit
			}
			return units.Format(x, s.kind, u)
		}
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	lo := ">= "
	if s.minOpen {
		lo = "> "
	}
	r := ""
	switch {
	case math.IsInf(s.min, -1) && math.IsInf(s.max, 1):
		r = "any finite value"
	case math.IsInf(s.max, 1):
		r = lo + f(s.min)
	default:
		r = lo + f(s.min) + " and <= " + f(s.max)
	}
	if s.typ == tInt {
		r = "an integer " + r
	}
	if s.typ == tQuantity {
		r += "; units: " + units.Allowed(s.kind)
		if s.plain != "" {
			r += "; a bare number is in " + s.plain
		}
	}
	return r
}

func (s *spec) inRange(x float64) bool {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return false
	}
	if s.minOpen && x <= s.min || !s.minOpen && x < s.min {
		return false
	}
	return x <= s.max
}

func quoteList(xs []string) string {
	s := ""
	for i, x := range xs {
		if i > 0 {
			s += ", "
		}
		s += strconv.Quote(x)
	}
	return s
}

var inf = math.Inf(1)

const deg = math.Pi / 180

// Pump kinds, in the order of transfer.PumpKind.
var pumpKinds = []string{"isotropic", "anisotropic", "hyperfine"}

// Population models, in the order of transfer.PopulationModel.
var populationModels = []string{transfer.Auto.String(), transfer.Rates.String(), transfer.Density.String()}

// Figure formats gonum/plot writes.
var figureFormats = []string{"png", "svg", "pdf", "eps"}

// tables lists the tables of the schema in reference order; "" is the top level.
var tables = []string{"", "field", "line", "rates", "beam", "pump", "seed", "faraday", "populations", "column", "output"}

// Defaults of the decay rates, beaming, seed and column come from the
// transfer package's Default constants, where their sources are given.
var rateDefault = quoted(units.Format(transfer.DefaultGamma, units.Rate, "s^-1"))

func quoted(s string) string { return strconv.Quote(s) }

func floatText(x float64) string { return tomlValue(x) }

// schema is the key reference, in the order keys are resolved, reported and
// written. doc.go documents the same keys; a test holds them together.
func schema() []*spec {
	return []*spec{
		{name: "name", typ: tString, example: `"example"`, doc: "study name; default: the config file name without extension"},
		{name: "species", typ: tString, doc: "preset name, or a species file path relative to this file; or an inline [species] table"},

		{table: "field", name: "strength", typ: tQuantity, kind: units.Field, unit: "mG", rangeUnit: "G", column: "B_mG",
			min: -1e4, max: 1e4, doc: "magnetic field strength; negative reverses B (required)",
			set: func(p *transfer.Params, x float64) { p.Field = x }},
		{table: "field", name: "theta", typ: tQuantity, kind: units.Angle, unit: "deg", column: "theta_deg",
			def: `"90 deg"`, min: 0, max: math.Pi, doc: "angle between B and the line of sight",
			set: func(p *transfer.Params, x float64) { p.Theta = x }},
		{table: "field", name: "chi", typ: tQuantity, kind: units.Angle, unit: "deg", column: "chi_deg",
			def: `"0 deg"`, min: -2 * math.Pi, max: 2 * math.Pi, doc: "sky position angle of the projected field, north through east",
			set: func(p *transfer.Params, x float64) { p.Chi = x }},

		{table: "line", name: "doppler", typ: tQuantity, kind: units.Velocity, unit: "km/s", column: "doppler_kms",
			def: `"1 km/s"`, min: 0, minOpen: true, max: 1e5, doc: "1/e half-width of the profile (default when temperature is not given)",
			set: func(p *transfer.Params, x float64) { p.Doppler = x }},
		{table: "line", name: "temperature", typ: tQuantity, kind: units.Temperature, plain: "K", unit: "K", column: "T_K", example: `"1000 K"`,
			min: 0, minOpen: true, max: 1e5, doc: "kinetic temperature; with turbulence, instead of doppler",
			set: func(p *transfer.Params, x float64) { p.Temperature = x }},
		{table: "line", name: "turbulence", typ: tQuantity, kind: units.Velocity, unit: "km/s", column: "turb_kms",
			def: `"0 km/s"`, example: `"0.5 km/s"`, min: 0, max: 1e5, doc: "1/e turbulent half-width added in quadrature (only with temperature)",
			set: func(p *transfer.Params, x float64) { p.Turbulence = x }},
		{table: "line", name: "channels", typ: tInt, column: "channels",
			def: strconv.Itoa(transfer.DefaultChannels), min: 16, max: 65536, doc: "number of velocity channels",
			set: func(p *transfer.Params, x float64) { p.Channels = int(x) }},
		{table: "line", name: "span", typ: tQuantity, kind: units.Velocity, unit: "km/s", column: "span_kms",
			def: `"0 km/s"`, min: 0, max: 1e7, doc: "total velocity span of the channels; 0 = automatic",
			set: func(p *transfer.Params, x float64) { p.Span = x }},
		{table: "line", name: "reference", typ: tString, example: `"0"`, doc: "hyperfine component whose rest frequency is velocity 0 and the centre of a given span (index or label as maserpol levels lists them); default: the unsplit line"},

		{table: "rates", name: "gamma_upper", typ: tQuantity, kind: units.Rate, plain: "s^-1", unit: "s^-1", column: "gamma_upper_per_s",
			def: rateDefault, min: 0, minOpen: true, max: 1e9, doc: "decay rate of the upper eigenstates",
			set: func(p *transfer.Params, x float64) { p.GammaUpper = x }},
		{table: "rates", name: "gamma_lower", typ: tQuantity, kind: units.Rate, plain: "s^-1", unit: "s^-1", column: "gamma_lower_per_s",
			def: rateDefault, min: 0, minOpen: true, max: 1e9, doc: "decay rate of the lower eigenstates",
			set: func(p *transfer.Params, x float64) { p.GammaLower = x }},

		{table: "beam", name: "solid_angle", typ: tQuantity, kind: units.SolidAngle, plain: "sr", unit: "sr", column: "dOmega_sr",
			def: quoted(units.Format(transfer.DefaultBeamSolid, units.SolidAngle, "sr")), min: 0, minOpen: true, max: 4 * math.Pi, doc: "beam solid angle dOmega of the maser radiation",
			set: func(p *transfer.Params, x float64) { p.BeamSolid = x }},

		{table: "pump", name: "kind", typ: tEnum, enum: pumpKinds, def: `"isotropic"`, doc: "pumping model"},
		{table: "pump", name: "alignment", typ: tNumber, column: "alignment",
			def: "0.0", min: -1, max: 1, doc: "signed pump anisotropy for kind = \"anisotropic\"",
			set: func(p *transfer.Params, x float64) { p.Pump.Alignment = x }},
		{table: "pump", name: "lower_ratio", typ: tNumber, column: "lower_ratio",
			def: "0.0", min: 0, max: 1e6, doc: "pump rate into each lower sublevel relative to each upper one (< gamma_lower/gamma_upper)",
			set: func(p *transfer.Params, x float64) { p.Pump.LowerPump = x }},
		{table: "pump", name: "component", typ: tInt, column: "component", example: "0",
			min: 0, max: 100000, doc: "pump only the upper hyperfine level of this component (kind = \"hyperfine\"): an index as listed by maserpol levels, or a label \"Fu-Fl\" or \"F1u,Fu-F1l,Fl\"; a list compares components"},
		{table: "pump", name: "upper_f", typ: tWeights, example: `{ "1" = 1.0, "2" = 0.5 }`, doc: "relative pump weights of upper F labels for kind = \"hyperfine\" (missing: 1)"},
		{table: "pump", name: "lower_f", typ: tWeights, example: `{ "1" = 1.0 }`, doc: "relative pump weights of lower F labels for kind = \"hyperfine\" (missing: 1)"},

		{table: "seed", name: "tb", typ: tQuantity, kind: units.Temperature, plain: "K", unit: "K", column: "tb_K",
			def: quoted(units.Format(transfer.DefaultSeedTb, units.Temperature, "K")), min: 0, minOpen: true, max: 1e15, doc: "brightness temperature of the seed radiation",
			set: func(p *transfer.Params, x float64) { p.Seed.Tb = x }},
		{table: "seed", name: "linear", typ: tNumber, column: "seed_linear",
			def: "0.0", min: 0, max: 1, doc: "linear polarization fraction of the seed",
			set: func(p *transfer.Params, x float64) { p.Seed.LinearFraction = x }},
		{table: "seed", name: "circular", typ: tNumber, column: "seed_circular",
			def: "0.0", min: -1, max: 1, doc: "circular polarization fraction V/I of the seed (linear^2 + circular^2 <= 1)",
			set: func(p *transfer.Params, x float64) { p.Seed.CircularFraction = x }},
		{table: "seed", name: "angle", typ: tQuantity, kind: units.Angle, unit: "deg", column: "seed_angle_deg",
			def: `"0 deg"`, min: -2 * math.Pi, max: 2 * math.Pi, doc: "sky position angle of the seed's linear polarization",
			set: func(p *transfer.Params, x float64) { p.Seed.Angle = x }},

		{table: "faraday", name: "electron_density", typ: tQuantity, kind: units.Density, plain: "cm^-3", unit: "cm^-3", column: "ne_cm3",
			def: `"0 cm^-3"`, min: 0, max: 1e12, doc: "in-source free-electron density for Faraday rotation; 0 = none",
			set: func(p *transfer.Params, x float64) { p.ElectronDensity = x }},
		{table: "faraday", name: "gain_length", typ: tQuantity, kind: units.Length, unit: "au", column: "gain_length_au", example: `"1 au"`,
			min: 0, minOpen: true, max: 1e20, doc: "path over which the unsaturated gain grows by one e-fold (required when electron_density > 0)",
			set: func(p *transfer.Params, x float64) { p.GainLength = x }},

		{table: "populations", name: "model", typ: tEnum, enum: populationModels, def: `"auto"`,
			doc: "population model: \"rates\" (populations only, valid for R << g Omega), \"density\" (Zeeman coherences, any R/g Omega) or \"auto\" (rates until R/g Omega reaches 1e-4, then the density matrix)"},
		{table: "populations", name: "coherence_threshold", typ: tNumber, column: "coherence_threshold",
			def: floatText(transfer.DefaultCoherenceThreshold), min: 1, max: 1e6,
			doc: "keep the coherence of two sublevels of one level whose splitting (rate units) is below this times the target saturation",
			set: func(p *transfer.Params, x float64) { p.CoherenceThreshold = x }},

		{table: "column", name: "saturation", typ: tNumber, column: "saturation",
			def: floatText(transfer.DefaultSaturation), min: 0, minOpen: true, max: MaxSaturation, doc: "stop when R/Gamma at line centre reaches this (default unless gain is given)",
			set: func(p *transfer.Params, x float64) { p.Saturation = x }},
		{table: "column", name: "gain", typ: tNumber, column: "gain", example: "20.0",
			min: 0, minOpen: true, max: 700, doc: "or stop at this total unsaturated line-centre gain |tau|",
			set: func(p *transfer.Params, x float64) { p.Gain = x }},
		{table: "column", name: "checkpoints_per_decade", typ: tInt, column: "checkpoints_per_decade",
			def: strconv.Itoa(transfer.DefaultCheckpointsPerDecade), min: 1, max: 100, doc: "checkpoints per decade of saturation",
			set: func(p *transfer.Params, x float64) { p.CheckpointsPerDecade = int(x) }},
		{table: "column", name: "first_checkpoint", typ: tNumber, column: "first_checkpoint",
			def: floatText(transfer.DefaultFirstCheckpoint), min: 0, minOpen: true, max: MaxSaturation, doc: "lowest saturation recorded (below the target saturation)",
			set: func(p *transfer.Params, x float64) { p.FirstCheckpoint = x }},
		{table: "column", name: "tolerance", typ: tNumber, column: "tolerance",
			def: floatText(transfer.DefaultTolerance), min: 1e-10, max: 0.1, doc: "relative local error per integration step",
			set: func(p *transfer.Params, x float64) { p.Tolerance = x }},

		{table: "output", name: "dir", typ: tString, doc: "run directory, relative to the working directory; default \"runs/<name>\""},
		{table: "output", name: "plots", typ: tBool, def: "true", doc: "write figures"},
		{table: "output", name: "formats", typ: tStrings, enum: figureFormats, def: `["png", "svg"]`, doc: "figure formats"},
		{table: "output", name: "spectra", typ: tEnum, enum: []string{SpectraAll, SpectraDecades}, example: `"decades"`,
			doc: "checkpoints written to spectra/: \"all\", or \"decades\" (the first, the one nearest each power of ten of saturation, the last); default \"all\" for studies of at most 16 models, \"decades\" above"},
	}
}

// defaultApplies reports whether the default of s is filled in, given which
// keys are present: alternatives take their defaults only when the other
// form is absent.
func defaultApplies(s *spec, given map[string]bool) bool {
	switch s.path() {
	case "line.doppler":
		return !given["line.temperature"]
	case "line.turbulence":
		return given["line.temperature"]
	case "column.saturation":
		return !given["column.gain"]
	}
	return s.def != ""
}

// Keys of the sweep forms, in the order they are written back.
var (
	rangeKeys  = []string{"from", "to", "steps", "spacing"}
	randomKeys = []string{"dist", "n", "seed", "from", "to"}
	spacings   = []string{"lin", "log"}
	dists      = []string{"uniform", "loguniform", "isotropic-angle"}
)

// Limits of a study.
const (
	// MaxSaturation is the largest column.saturation: the column is bounded
	// at 1e9 unsaturated gain lengths in transfer, where SiO v=1 J=1-0
	// reaches R/Gamma = 2.5e8 (the saturated intensity grows linearly with
	// path); 1e8 leaves room for species that saturate more slowly.
	MaxSaturation = 1e8

	maxModels  = 1000000
	maxSamples = 100000
)
