package config

import (
	"maserpol/config/tomlpos"
	"maserpol/transfer"
)

// This file is the contract between config and its consumers (runs, cmd).

// Value is the value of one swept (or always-reported) parameter of a model.
type Value struct {
	Key    string  // dotted TOML key, e.g. "field.theta"
	Column string  // summary column name with its unit, e.g. "theta_deg", "B_mG"
	Number float64 // value in the column's unit
	Text   string  // as a user would write it, e.g. "30 deg"
}

// Model is one fully resolved model of a study.
type Model struct {
	Index   int     // 0-based position in the expanded study (stable, independent of workers)
	Name    string  // e.g. "m0007"
	Species string  // preset name or species file path as written
	Values  []Value // B_mG, theta_deg, chi_deg always, then every other swept parameter
	Params  transfer.Params
}

// Output describes what a study writes.
type Output struct {
	Dir     string   // run directory
	Plots   bool     // write figures (default true)
	Formats []string // figure formats, default ["png", "svg"]
	// Spectra is SpectraAll, SpectraDecades, or "" when not set: the run
	// chooses by the number of models (runs.SpectraCheckpoints). Unset,
	// it is absent from the resolved config, so configs written before
	// the key existed keep their hash.
	Spectra string
}

// Values of output.spectra.
const (
	SpectraAll     = "all"
	SpectraDecades = "decades"
)

// Study is a parsed, validated and expanded configuration.
type Study struct {
	File     string
	Models   []Model
	Swept    []string // summary column names of swept parameters beyond B_mG, theta_deg, chi_deg
	Output   Output
	Resolved []byte // the resolved config (all defaults filled in) as TOML
	Hash     string // hex SHA-256 of Resolved
	Warnings []string
}

// Error is a configuration error that names where it is (file, line, key,
// allowed values, suggestion). The command exits with status 2 on any
// *Error. It is the same type as the species-file error.
type Error = tomlpos.Error
