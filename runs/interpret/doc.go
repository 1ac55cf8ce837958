// Package interpret turns model trajectories (transfer.Run) into answers to
// an observer's questions:
//
//   - Diagnose: could a measured fractional linear polarization m_l arise from
//     something other than the magnetic field? It runs a modest grid of models
//     for four mechanisms (the field under isotropic pumping, anisotropic
//     pumping, a polarized seed, and a weak field with R > g Omega), reads
//     m_l at the measured saturation and states which parameters reproduce
//     the measurement within its errors, whether it exceeds what the field
//     alone can give there, and whether the populations-only model is valid.
//   - ZeemanFactors: the factor that turns a fitted V = A dI/dv (or P_V) into
//     B cos(theta), from the full model, against the single-component
//     linear-Zeeman value.
//   - Compare: shifts and scales every model spectrum of a run directory onto
//     an observed full-Stokes spectrum and ranks the models by chi-square.
//   - AnalyzeFeature (maserpol field): fits V = A dI/dv + C I to an observed
//     feature with errors from the channel noise (Hanning correlation
//     included, FitZeeman), converts A into B_los with a FactorGrid of the
//     full model at the feature's saturation and angle, infers the angle
//     from m_l by GKK 1973 (GKKTheta) and gives a verdict.
//
// # Conventions
//
// Orientation. The field frame of transfer is used: q_b = Q_f/I > 0 means
// the electric vector is parallel to the sky projection of B. A measured
// EVPA relative to the projected field, psi = EVPA - chi_B, selects a branch:
// parallel when cos(2 psi) > 0, perpendicular when cos(2 psi) < 0. A model
// is compared with the measurement through its polarization projected on the
// measured branch, p = +q_b (parallel) or -q_b (perpendicular); p < 0 means
// the model polarization is orthogonal to the measured one. Without an EVPA
// the branch is unknown and p = m_l (the orientation is not tested).
//
// Saturation. Every comparison happens at the saturation R/Gamma of the
// maser, the quantity transfer records per checkpoint. Between checkpoints
// m_l is interpolated linearly in log(R/Gamma). A brightness temperature
// with beaming, T_b dOmega, converts to R/Gamma through physics.md section 4,
// R = A k T_b dOmega / (4 pi h nu) (transfer.SaturationOf).
//
// Consistency. A model reproduces a measurement m +/- sigma when, for some
// saturation in the measured range, |p - m| <= n sigma (n = Measurement.NSigma,
// default 2). Because p is piecewise linear in log saturation, this is
// decided exactly from the checkpoint values inside the range and the two
// interpolated end points. A measurement exceeds the field alone when
// m - n sigma is larger than every p that isotropic pumping gives on the
// grid of field angles at that saturation.
//
// Validity. The populations-only model neglects coherences between Zeeman
// sublevels; it holds for R << g Omega. Every verdict carries R/(g Omega)
// over the measured saturation range and is flagged invalid above 0.1
// (physics.md section 4).
//
// # Stokes V and the field
//
// For an optically thin line with splitting much smaller than the line width
// (physics.md section 7), V(v) = cos(theta) dv_Z dI/dv, where dv_Z = B x
// levels.Component.SplitKmsPerG is the shift of the sigma+ centroid against
// the pi centroid in velocity units. ZeemanFactors fits V = A dI/dv by least
// squares over the line of the full model run at a small field B0 and reports
// A/(B0 cos theta) in km/s per gauss; the linear-Zeeman value is
// SplitKmsPerG with the sign that the velocity axis of transfer implies (see
// LinearFactor). An observer who fits A to a spectrum then has
// B cos(theta) = A / factor.
//
// # Comparing with an observation
//
// The model spectrum (sky-frame I, Q, U, V in K) is interpolated linearly
// onto the observed velocities after a velocity shift dv; outside the model
// grid it is zero. For a given dv the scale s is the weighted linear least
// squares solution on I alone, and the same s multiplies Q, U and V (so the
// fractional polarization of the model is kept). dv minimises the total
// chi-square over the Stokes parameters used: a coarse scan followed by a
// Nelder-Mead refinement (gonum optimize). Errors come from error columns
// when present; otherwise from the rms of each Stokes parameter over
// line-free channels (channels whose observed I stays below three times a
// robust noise estimate, with a guard band; see EstimateNoise). Models are
// ranked by the total reduced chi-square chi2 / (N - 3), with dv, s and the
// checkpoint (the saturation) as the three free parameters; the best
// checkpoint of each model is chosen by the same total chi-square.
package interpret
