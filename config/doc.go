// Package config reads the TOML description of a maser model or of a
// parameter study, validates it, expands its sweeps into models, and writes
// it back resolved.
//
// # Files
//
// One TOML file describes one study. Parse and Load return a *Study whose
// Models carry transfer.Params in SI units (gauss, rad, m/s, s^-1, sr, K,
// cm^-3, m). Every problem is a *Error naming the file, line, key, the
// allowed values and, for unknown keys, the nearest known key ("did you
// mean"). Unknown keys are errors, not warnings: a typo must not silently
// fall back to a default.
//
// Paths: a species file path is relative to the config file's directory (a
// study and its species travel together); output.dir is relative to the
// working directory, like any path given to a command-line program.
//
// # Quantities and units
//
// A quantity is a string of a number and a unit: "25 mG", "1.2 G",
// "0.6 km/s", "30 deg", "1000 K". The space is optional. Units are those of
// package config/units:
//
//	field        G (gauss), mG, uG, kG, T, mT, uT, nT
//	velocity     m/s, km/s, cm/s
//	angle        deg, rad, arcmin, arcsec
//	temperature  K, mK
//	rate         s^-1, min^-1, hr^-1 (also "/s", "Hz")
//	solid angle  sr, deg2, arcsec2
//	density      cm^-3, m^-3
//	length       m, cm, km, au, pc
//	dimensionless a plain number, or "%"
//
// A bare number is accepted where the unit is the one astronomers always
// use for that key: temperatures (K), rates (s^-1), solid angle (sr) and
// electron density (cm^-3). Fields, angles and velocities always need a
// unit: "30" is ambiguous between G and mG, deg and rad, km/s and m/s.
//
// # Sweeps
//
// Any numeric key (marked "sweep" below) may be written instead as
//
//	a list         theta = ["30 deg", "60 deg", "90 deg"]
//	a range        strength = { from = "1 G", to = "100 G", steps = 5, spacing = "log" }
//	               spacing "lin" (default) or "log"; steps >= 2; the end
//	               points are exact; log needs from, to > 0
//	a random draw  theta = { dist = "isotropic-angle", n = 200, seed = 7 }
//	               dist "uniform" (from, to), "loguniform" (from, to > 0) or
//	               "isotropic-angle" (angles only: cos theta uniform, i.e.
//	               directions uniform on the sphere; from, to default
//	               0 deg, 180 deg); n samples; seed default 1
//
// Integer keys take lists and ranges (whose steps must land on integers),
// not random draws.
//
// The study is the product of its axes, in the order of the key reference
// below; the first axis varies slowest and the last fastest, like nested
// loops written in that order, so a model's Index and Name ("m0007") are
// fixed by the file alone. Each list or range is one axis. Random draws
// with the same n are one joint axis of n models drawn by Latin hypercube
// sampling (gonum stat/samplemv.LatinHypercube): each parameter's range is
// cut into n equally probable strata and each stratum holds exactly one
// sample, paired at random across parameters. The group sits at the place
// of its first member, uses one stream, rand.NewPCG(seed, "maserpol" as a
// 64-bit word), and its members must give the same seed or none. Draws with
// different n are separate axes. A study has at most 1000000 models.
//
// Every model reports B_mG, theta_deg and chi_deg (in that order), then one
// column per other swept key, named below; Study.Swept lists those extra
// columns.
//
// # Key reference
//
// Units are those in which defaults are written; "sweep" marks sweepable
// keys; ranges are inclusive unless marked (>, <).
//
//	key                            unit     default        allowed / notes                                column
//	name                           -        file name      letters, digits, . _ -                           -
//	species                        -        (required)     preset name, species file path, or a [species] table -
//	field.strength                 G, mG    (required)     -10000 G .. 10000 G; sign reverses B, sweep     B_mG
//	field.theta                    deg      "90 deg"       0 .. 180 deg, angle of B to line of sight, sweep theta_deg
//	field.chi                      deg      "0 deg"        -360 .. 360 deg, sky PA of projected B (N->E), sweep chi_deg
//	line.doppler                   km/s     "1 km/s"       > 0 .. 100 km/s, 1/e half-width, sweep          doppler_kms
//	line.temperature               K        -              > 0 .. 1e5 K, instead of doppler, sweep         T_K
//	line.turbulence                km/s     "0 km/s"       0 .. 100 km/s, with temperature only, sweep     turb_kms
//	line.channels                  -        512            16 .. 65536, integer, sweep                     channels
//	line.span                      km/s     "0 km/s"       0 .. 10000 km/s, total span; 0 = automatic, sweep span_kms
//	line.reference                 -        -              component index or label ("1-1", "13/2,7-15/2,8"): velocity 0 at its rest frequency  -
//	rates.gamma_upper              s^-1     "1 s^-1"       > 0 .. 1e9 s^-1, sweep                          gamma_upper_per_s
//	rates.gamma_lower              s^-1     "1 s^-1"       > 0 .. 1e9 s^-1, sweep                          gamma_lower_per_s
//	beam.solid_angle               sr       "0.01 sr"      > 0 .. 4 pi sr, beaming dOmega, sweep           dOmega_sr
//	pump.kind                      -        "isotropic"    "isotropic", "anisotropic", "hyperfine"          -
//	pump.alignment                 -        0.0            -1 .. 1, signed anisotropy (anisotropic), sweep alignment
//	pump.lower_ratio               -        0.0            0 .. < gamma_lower/gamma_upper, lower/upper pump rate, sweep lower_ratio
//	pump.component                 -        -              index or label "Fu-Fl", "F1u,Fu-F1l,Fl" (hyperfine): pump only its upper level, sweep component
//	pump.upper_f                   -        all 1          { "F" = weight >= 0 } or { "F1,F" = weight } (hyperfine); F as "2", "1.5" or "3/2"  -
//	pump.lower_f                   -        all 1          as upper_f, for the lower level                  -
//	seed.tb                        K        "2.725 K"      > 0 K, seed brightness temperature, sweep       tb_K
//	seed.linear                    -        0.0            0 .. 1, linear fraction, sweep                  seed_linear
//	seed.circular                  -        0.0            -1 .. 1, V/I; linear^2 + circular^2 <= 1, sweep seed_circular
//	seed.angle                     deg      "0 deg"        -360 .. 360 deg, sky PA of the seed's E vector, sweep seed_angle_deg
//	faraday.electron_density       cm^-3    "0 cm^-3"      0 .. 1e12 cm^-3, in-source electrons; 0 = none, sweep ne_cm3
//	faraday.gain_length            au       -              > 0 m, path per e-fold of unsaturated gain; required if electron_density > 0, sweep gain_length_au
//	populations.model              -        "auto"         "auto", "rates", "density": population model (transfer.PopulationModel)
//	populations.coherence_threshold -       300            1 .. 1e6, coherence kept below this x saturation, sweep coherence_threshold
//	column.saturation              -        1e4            > 0 .. 1e12, target R/Gamma at line centre, sweep saturation
//	column.gain                    -        -              > 0 .. 700, or target unsaturated gain |tau| (not with saturation), sweep gain
//	column.checkpoints_per_decade  -        8              1 .. 100, integer, sweep                        checkpoints_per_decade
//	column.first_checkpoint        -        1e-3           > 0, below saturation, sweep                     first_checkpoint
//	column.tolerance               -        4e-4           1e-10 .. 0.1, relative error per step, sweep     tolerance
//	output.dir                     -        "runs/<name>"  path, relative to the working directory          -
//	output.plots                   -        true           true, false                                      -
//	output.formats                 -        ["png", "svg"] any of "png", "svg", "pdf", "eps"                -
//	output.spectra                 -        see right      "all", "decades": checkpoints in spectra/;       -
//	                                                       default "all" up to 16 models, else "decades"
//
// The Doppler width is either line.doppler or line.temperature (with
// optional line.turbulence), v_D = sqrt(2 k T / m + v_turb^2) with m the
// species mass (transfer.DopplerWidth). The column ends at either
// column.saturation or column.gain, never both. The defaults of the rates,
// beaming, seed and column are the transfer package's Default constants.
//
// # Resolved configuration
//
// Study.Resolved is the configuration with every default filled in, the
// sweeps kept as written (ranges and draws with their defaults and the
// group seed), in the order of the key reference; Study.Hash is its SHA-256
// in hex. The hash must change whenever the physics does, so the species
// enters it by content: a species preset keeps its name, followed by a
// comment with the SHA-256 of the preset's definition in this program (a
// preset changed in a later version changes the hash); a species file is
// copied in as an inline [species] table (its decoded keys, so comments in
// the file do not matter), which makes a run directory's config.toml
// self-contained; an inline [species] table is kept as a table. Parsing
// Resolved gives the same models, and its own Resolved is byte-identical.
//
// Pump weights (pump.upper_f, pump.lower_f) must name F labels (or F1,F
// pairs) the level has: the zero-field multiplets of its hyperfine
// structure. pump.component names a component as levels.SelectComponent
// reads it; labels become indices in the resolved config, so a list of them
// sweeps like any integer key.
//
// Starter and StarterNamed write a commented starter configuration, every
// key with its unit, default and allowed range, named after the file
// (output.dir "runs/<name>"), with a field, line width, channel grid and
// saturation chosen for the species and a note on where R/(g Omega) <= 0.1
// holds.
package config
