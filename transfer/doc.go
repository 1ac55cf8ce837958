// Package transfer computes the polarized radiation of a saturating maser:
// the steady-state populations of every hyperfine-mixed Zeeman sublevel of
// the transition (package levels) in every velocity class, coupled to a 1-D
// integration of the Stokes vector along the column. One run follows the
// emergent spectrum from the unsaturated regime into saturation and records
// it at checkpoints spaced evenly in log saturation.
//
// # Use
//
//	p := transfer.Params{Species: sp, Field: 30, Theta: 60 * math.Pi / 180,
//		Temperature: 1000}              // zero fields take their defaults
//	tj, err := transfer.Run(ctx, p)     // solves levels.NewTransition(sp, 30)
//
// or, for many models of one species, solve the transitions with a
// levels.TransitionSolver and call NewModel(tr, p) then Model.Run; a Model
// owns its workspaces and can be run repeatedly.
//
// # Grid and profile
//
// Channels and velocity classes share one uniform grid of Params.Channels
// points (default DefaultChannels) in radio velocity, v = c (nu0 - nu)/nu0, relative to
// the species rest frequency: higher frequency is lower velocity. The
// automatic span covers every line component (hyperfine offsets and Zeeman
// shifts) plus 4 Doppler widths on either side. The Doppler profile is
// exp(-(v/v_D)^2), with v_D = sqrt(2kT/m + v_turb^2) the 1/e half-width
// (FWHM = 2 sqrt(ln 2) v_D), see DopplerWidth. A molecule of class u meets
// line ab (offset Delta_ab = nu_ab - nu0) in the channel at
// v = u - c Delta_ab/nu0. Class labels u are radio velocities too
// (receding positive), i.e. u = -v_k with v_k the velocity along k (towards
// the observer) of physics.md section 4; the sign change is harmless
// because the Doppler profile is symmetric, phi(u) = phi(-u), and the
// resonance is written in u throughout. Off-grid positions are reached
// with a 4-point cubic B-spline kernel whose transpose carries the
// inversions back to the channels; the kernel is positive and broadens every line alike (variance
// dv^2/3), so it neither produces negative rates nor spurious V.
//
// # Polarization conventions
//
// Field frame: the reference direction is the sky projection of B; Q_f > 0
// is linear polarization parallel to it (q_b = Q_f/I). Sky frame: position
// angles are measured north through east (IAU); Q, U follow from Q_f, U_f by
// a rotation through 2 chi_B, so chi_B -> chi_B + 90 deg flips Q and U.
// The weights of a component with q = m_u - m_l are (physics.md section 3)
//
//	q = 0:   (w_I, w_Q, w_V) = (sin^2 theta/2, sin^2 theta/2, 0)
//	q = +-1: (w_I, w_Q, w_V) = ((1+cos^2 theta)/4, -sin^2 theta/4, +-cos theta/2)
//
// times 3, so that the direction-averaged rate of an unpolarized beam on an
// upper sublevel is the scalar one. The same weights build the stimulated
// rates and the propagation matrix: the energy the beam gains equals the
// energy the molecules give (tested to rounding).
//
// V = RCP - LCP (IAU 1973), RCP in the IEEE sense (counterclockwise as the
// observer sees it, positive helicity). Field > 0 points along +k, towards
// the observer, with Theta the angle between B and k (B_parallel = Field cos
// Theta). A q = +1 component emitted along +B carries positive helicity, so
// with B_parallel > 0 the sigma+ component is RCP. Hence V > 0 on the
// high-frequency (low-velocity) wing when the sigma+ component lies at the
// higher frequency and B_parallel > 0. Where sigma+ lies follows from the
// Zeeman term of package levels:
//   - nuclear magnetons, H_Z = -mu_N B g J_z: sigma+ is at the higher
//     frequency for B > 0 when g < 0 (e.g. SiO); for g > 0 the same V sign
//     needs B pointing away from the observer (TestVSign);
//   - Bohr magnetons (paramagnetic), H_Z = +mu_B B g J_z, electron sign: a
//     hyperfine level shifts by +g_F mu_B B M, so in a line F -> F with the
//     same g_F > 0 in both levels (the OH-like main lines, g_F = 1.25 g_J
//     and 0.75 g_J with g_J > 0) sigma+ is shifted by +g_F mu_B B, to the
//     higher frequency for B > 0: a field towards the observer gives V > 0
//     (RCP) on the high-frequency, low-velocity wing (TestVSignBohr). As
//     far as we recall (from memory, not checked against a source) this is
//     the usual reading of OH Zeeman pairs: RCP at the lower velocity for a
//     field towards the observer.
//
// In the weak field, thin line:
// V(v) = cos(theta) dv_Z dI/dv, dv_Z = c SplitHzPerG B / nu0 (the sigma+
// shift of levels.Component, in the sense of frequency).
//
// # Populations
//
// Steady state without coherences (physics.md section 4), per velocity class:
//
//	0 = lambda_a - Gamma_u n_a - sum_b R_ab (n_a - n_b)
//	0 = lambda_b - Gamma_l n_b + sum_a R_ab (n_a - n_b)
//
// Rates are in units of the reference Gamma = 2 Gamma_u Gamma_l/(Gamma_u +
// Gamma_l) (equal to both when equal; a two-level line then saturates as
// 1/(1 + 2R/Gamma)). R_ab/Gamma = 3 S_ab (w_I I + w_Q Q_f + w_V V) with the
// Stokes vector in units of the saturation intensity, the one whose rate in
// the unsplit line is Gamma: R = A k T_b dOmega/(4 pi h nu), so one unit is
// T_b dOmega = 4 pi h nu Gamma/(A k) (SaturationTbdOmega). The bipartite
// system is reduced to the side with the cheaper solve (the other side is
// diagonal) and solved by banded or dense Cholesky (gonum lapack64 for the
// dense case; the band factorization written out, rank 4 per pass); the
// reduced matrix is symmetric and strictly diagonally dominant. Its Schur
// updates are dense over the contiguous kept states of each eliminated
// state, four eliminated states at a time. A class whose rates are weak
// against the decay rates is solved instead by block Gauss-Seidel on the
// two sides from zero, stopped at a proven error bound of 1e-15 of the
// largest population (the contraction factor is the product of the
// largest R/(Gamma + R) of each side), where that costs less than the
// elimination; one kept state has a closed form. Either way the result is
// the direct solution to rounding and does not depend on earlier steps.
//
// Pumping: lambda_a = lambda_u p_a phi(u), lambda_b = LowerPump lambda_u p_b
// phi(u), with lambda_u = Gamma_u (unsaturated upper population 1 at the
// profile centre). The weights p have mean 1 over the sublevels of each
// level, so the total pump rate is fixed: Isotropic p = 1; Anisotropic
// p = 1 + Alignment (3<m_J^2> - J(J+1))/N, N = max over m_J of
// |3 m_J^2 - J(J+1)| (so p >= 0 for |Alignment| <= 1; positive favours
// |m_J| = J), applied to both levels with the same sign of Alignment, each
// with its own J; Hyperfine p proportional to the weight of the state's F
// label (UpperF, LowerF).
//
// # Zeeman coherences (density matrix)
//
// Params.Population chooses the population model of every velocity class
// (one seam in populate: the class returns what it deposits on the
// channels, and buildK, the integrator and the checkpoints do not know
// which model ran):
//   - Rates: the populations-only equations above (rates.go), valid for
//     R << g Omega;
//   - Density: the steady-state density matrix of each level in the
//     eigenstate basis, coherences between eigenstates of one level kept,
//     optical coherences eliminated in the broadband (rate) limit, with
//     the radiation entering through the beam's coherency tensor built
//     from (I, Q_f, U_f, V) (physics.md section 8; coherence.go holds the
//     equations, their derivation and the conventions). The coherences
//     give eta_U in the field frame; the dispersive terms of the line are
//     neglected;
//   - Auto (default): Rates while R/(g Omega) < AutoCoherenceFrom along the
//     column, Density from there on; Rates throughout, with a warning, when
//     the class system of the species exceeds autoMaxDim real unknowns or
//     its strong block at the target saturation exceeds autoMaxStrong.
//
// Once the density matrix is in use, a velocity class whose largest rate
// stays below classCoherentFrom x g Omega (AutoCoherenceFrom for Auto,
// 1e-5 for Density: the far wings of a narrowed line) is solved by the
// rate equations, which agree with it to second order in that ratio.
//
// The coherence set keeps a pair of eigenstates of one level when their
// splitting in rate units is below CoherenceThreshold x Saturation. Each
// class system (populations, then Re and Im of every kept pair, real form)
// is assembled from a stencil precomputed at NewModel, with the kept pairs
// ordered by splitting. Systems of up to iterativeFrom unknowns are solved
// by dense LU; larger ones (hyperfine-rich species) by GMRES preconditioned
// with the strong block (the populations and the pairs split by less than
// the class's rate, factored densely) and a block Gauss-Seidel sweep over
// the weakly coupled pairs, warm-started from the class's previous
// solution (classsolve.go): the cost per class is set by the strong block
// and the stencil, not by the cube of the kept set. Pairs split by more
// than adiabaticFactor (30) times the class's rate take their first-order
// value in one sweep after the solve (errors second order in R/|omega|),
// and a class whose pairs are all that weak takes its populations from
// the rate equations. A class whose
// populations come out negative stops the run with a StepError naming the
// position, class and saturation.
//
// # Transfer
//
// dS/ds = K S per channel (see Propagation), K from the inversions of every
// line, with s in units of the unsaturated line-centre gain (the peak of the
// unsaturated eta_I is 1; Checkpoint.Gain is s). Each step is exponential:
// S1 = exp(K_mid h) S, and the populations at S1 give the next step's K0
// (the warm start). For the first two steps K_mid comes from the
// populations at the predictor exp(K0 h/2) S; from then on it is
// extrapolated by the quadratic through K at the last two step starts and
// K0 (one population solve per step instead of two; the extrapolation
// error is O(h^3) in K_mid, so O(h^4) in S1, one order higher than the
// rule's own O(h^3)). The local error is estimated from the trapezoidal
// exponential exp((K0+K1) h/2) S (an embedded second-order pair) plus the
// extrapolation error, measured against K_mid interpolated through K at
// the last step start, K0 and K1, and held below Tolerance in ln I and in
// the fractional polarizations, where channels below 1e-2 of the peak I count
// in proportion to their intensity (|dS|/max(I, 1e-2 I_peak): the reported
// q_b, m_l and P_V = (V_max - V_min)/I_peak do not depend on relative
// errors far down the wings); steps are also limited to a change of 2 in
// ln I and of 0.2 in any inversion. Checkpoint levels are not hit by
// shortening steps: the state at the level is the dense output of the step
// that passes it (K quadratic through K0, K_mid and K1, the level found
// to 1e-6 in saturation). A step that cannot meet the tolerance returns
// a StepError naming the position and channel. In-source Faraday rotation is
// RhoV = 2 FaradayCoefficient n_e B_parallel lambda^2 GainLength per unit s
// (EVPA rotates at RhoV/2: B_parallel > 0, a field towards the observer,
// gives a positive rotation measure and the EVPA increases,
// counterclockwise on the sky north through east, by RhoV s/2 = RM lambda^2
// in the absence of gain; TestFaradaySign), and then the analytic operator with
// magneto-optical terms is used.
//
// # Outputs and validity
//
// Checkpoints are placed at FirstCheckpoint x 10^(i/CheckpointsPerDecade)
// up to Saturation (or up to the total Gain when Gain > 0, plus the final
// state; a gain-limited column that stays below FirstCheckpoint continues the
// grid down to the seed, i negative), where saturation is the largest R_ab/Gamma over lines in the class
// at the profile centre. Spectra are brightness temperatures in K (T_b dOmega
// divided by BeamSolid). g Omega is 2 pi times the smallest energy
// separation (Hz) between two sublevels of one level that couple to a
// common sublevel (for J=1-0 the sigma-pi splitting). Each checkpoint
// carries R/(g Omega) = Saturation Gamma/(g Omega), Coherent (which model
// gave it), FlatSpectrum and Valid: a populations-only checkpoint is valid
// where R/(g Omega) <= ValidLimit (0.1), a density-matrix one where the
// flat-spectrum measure is <= FlatLimit (0.01). Trajectory.Warnings says
// from where on either is exceeded. With zero field g Omega = 0: the rate
// equations are outside validity at every checkpoint, the density matrix
// is not.
//
// # Defaults
//
// Population Auto, CoherenceThreshold 300 (project choices, see
// coherence.go), Channels 256, CheckpointsPerDecade 8, FirstCheckpoint
// 1e-3, Saturation
// 1e4 (project defaults), Tolerance 4e-4 (calibrated: q_b within 1e-4
// absolute and P_V within 0.1 % of a run at Tolerance 1e-6 at every
// checkpoint, for J=1-0, h2o-22 and synthetic-j6-5; measured 4.6e-5 and
// 0.04-0.07 %, TestToleranceCalibration. The ln I limit 2 is measured too,
// with the solved K_mid of the first steps throughout:
// on J=1-0 at tolerance 3e-4 it took 194 steps against 207 with a limit of
// 1, the errors against the 1e-6 run staying at 7.4e-5 (7.6e-5) in q_b and
// 0.045 % (0.046 %) in P_V; 4 or no limit saved 1-2 more steps but rejected
// more; the inversion limit 0.2 never bound). GammaUpper = GammaLower = 1 s^-1
// (common practice, order of magnitude for SiO and H2O masers, from
// memory); BeamSolid 1e-2 sr (common practice, from memory); Seed.Tb
// 2.725 K (the cosmic microwave background, Fixsen 2009, from memory).
// Doppler follows from Temperature and Turbulence when zero.
package transfer
