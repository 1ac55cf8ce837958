// Package species reads species files and holds the built-in species
// presets of maserpol.
//
// A species file is TOML. Every frequency-like value carries its unit as a
// string ("43.122080 GHz", "-15 kHz"); einstein_a is a number in s^-1 or a
// string with a rate unit; mass a number in amu or a string with a mass unit.
// Angular momenta (J, I) are numbers or strings like "3/2".
//
//	name = "free text"
//	frequency = "43.122080 GHz"   # rest frequency of the unsplit line
//	einstein_a = 3.0e-6           # s^-1
//	mass = "44 amu"
//	magneton = "nuclear"          # "nuclear" or "bohr" (paramagnetic, electron sign)
//	unverified = true             # some constant is from memory: users are warned
//	sources = ["..."]             # free-text provenance, kept in Species.Notes
//	[upper]
//	J = 1
//	g = -0.155                    # rotational g-factor in units of the magneton
//	label = "v=1 J=1"             # optional free text
//	[lower]
//	J = 0
//	g = -0.155
//	[[spin]]                      # zero or more
//	name = "N"
//	I = 1
//	g = 0.4038                    # in units of the magneton
//	shielding = 0.0               # optional, default 0
//	[[coupling]]                  # zero or more
//	kind = "quadrupole"           # spin-rotation | spin-spin | spin-spin-tensor | quadrupole
//	level = "upper"               # upper | lower | both
//	spins = ["N"]                 # one name, or two for the spin-spin kinds
//	value = "0.942 MHz"           # for quadrupole: the level's effective eQq_J
//	source = "..."                # optional provenance, kept in Species.Notes
//
// An optional [typical] table (field, fwhm, theta) gives conditions typical
// of observed masers of the line, for starter configs. unverified may also
// be an array naming the values that are not checked against a source.
//
// Instead of [[spin]] and [[coupling]], a species may be a hyperfine
// component table (table.go): [components] with an optional spins = ["3/2",
// "1/2"] and table = """...""", a header of columns (Fu, Fl, F1u, F1l,
// offset_<unit>, strength or A, gFu, gFl) and one row per component;
// einstein_a may then be left out when an A column is given. Errors in a
// table name the file line, the row and the column.
//
// The meaning and normalization of each coupling is that of package levels.
// The sign of g depends on the magneton: with "nuclear" the Zeeman term is
// H_Z = -mu_N B (g_J J_z + ...), g > 0 a moment parallel to the angular
// momentum; with "bohr" it is H_Z = +mu_B B (g_J J_z + ...), g > 0 an
// electron-like moment (OH 2Pi(3/2) J=3/2 has g_J about +0.935), and nuclear
// g-factors are written in Bohr magnetons with that sign (g_I = -g_N m_e/m_p).
// Errors are *Error values naming the file, line, key and what is allowed.
package species
