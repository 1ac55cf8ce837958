// Package ecsv writes and reads tables in the Enhanced Character Separated
// Values format, version 1.0: a CSV body preceded by '#'-prefixed YAML that
// gives each column its name, datatype, unit and description, and carries
// table metadata.
//
// A file written here looks like
//
//	# %ECSV 1.0
//	# ---
//	# delimiter: ','
//	# datatype:
//	# - {name: velocity_kms, unit: km / s, datatype: float64, description: "channel velocity"}
//	# - {name: I, unit: K, datatype: float64, description: "Stokes I"}
//	# meta: !!omap
//	# - {program: "maserpol 0.1.0"}
//	# schema: astropy-2.0
//	velocity_kms,I
//	-1.5,0.25
//
// It is read by astropy (Table.read(path), which picks the format from the
// .ecsv extension; hence every table the program writes is named *.ecsv)
// and, since every header line starts with '#', by any CSV reader told to
// skip comment lines (pandas.read_csv(path, comment="#")). NewPlainWriter
// writes the same rows as plain CSV, for a user who asks for a .csv file.
//
// Units are written in the astropy string form ("km / s", "K sr", "mG",
// "deg"). Floating-point values use the shortest decimal form that
// round-trips to the same float64 (strconv 'g', -1), so a table written,
// read and written again is byte-identical, and so are tables written from
// the same numbers on different machines or by different worker counts.
//
// The Reader also accepts plain CSV (or whitespace-separated) files whose
// first non-comment line is a header row, which is how observed spectra are
// commonly exported; those columns have no units unless a header cell
// carries one in brackets, e.g. "velocity [km/s]".
package ecsv
