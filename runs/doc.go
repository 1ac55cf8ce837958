// Package runs executes parameter studies: it runs the models of a
// config.Study on a pool of workers and keeps the results in a run
// directory that survives interruption.
//
// # Run directory
//
//	config.toml        the resolved configuration (config.Study.Resolved)
//	manifest.json      program (with the VCS revision when the build has
//	                   one), version, config hash, parameter_columns and
//	                   varied_columns, sessions (times, workers, shard),
//	                   per-model status: done, failed (with the error) or
//	                   pending
//	summary.ecsv       ECSV table, one row per model and checkpoint
//	models/m0007.ecsv  the summary rows of one model, with its status; the
//	                   record that the model is finished
//	spectra/m0007.ecsv emergent Stokes spectra of one model at every
//	                   checkpoint, or at a subset (output.spectra,
//	                   SpectraCheckpoints: by default the decades of
//	                   saturation for studies of more than MaxAllSpectra
//	                   models), long form, K, sky frame, with the
//	                   checkpoint's r_over_gomega and valid on each row
//	plots/             figures drawn from the tables alone (see Plot), on
//	                   a pool of workers; the files do not depend on it
//
// The manifest records the status of every model before figures are
// drawn, so a failure to draw (PlotError) leaves a complete record.
//
// Every file is written to a temporary file in the same directory and
// renamed into place, so a crash or kill leaves either the old file or the
// new one, never half of one. A model counts as finished only when its
// models/ file exists; the spectrum is written before it. Resume therefore
// re-runs exactly the models without a models/ file (and failed ones), and
// summary.ecsv is rebuilt from models/ at the end of every session.
//
// # Determinism
//
// Each model depends only on its config.Model; no state is shared between
// models, and all tables are assembled in model-index order. Tables are
// therefore byte-identical whatever the number of workers, the order in
// which models finish, interruption and resumption, or sharding and
// merging. Only manifest.json records times and workers.
//
// # Sharding
//
// Shard K/N (K = 1..N, 1-based so that it matches the task index of common
// cluster job arrays) runs the models with index % N == K-1. Merge joins
// shard directories of the same config into one run directory.
package runs

// Version is the program version, recorded in every run directory and
// printed by "maserpol version".
const Version = "0.1.0"
