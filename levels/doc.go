// Package levels computes the hyperfine-mixed Zeeman structure of the two
// rotational levels of a maser line and the electric-dipole components
// between them.
//
// # Units
//
// Energies and frequencies are E/h in Hz; fields are in gauss (1 T = 1e4 G);
// coupling constants (Coupling.Value) are in Hz. Energies are relative to
// the unsplit rotational level; line offsets are relative to the species
// rest frequency. Constants are CODATA 2018, in constants.go:
// mu_N/h = 7.622593229 MHz/T, mu_B/h = 13.996244936 GHz/T.
//
// # Basis
//
// One Level is a rotational level J with spins I_1..I_k, in the uncoupled
// product basis |J m_J>|I_1 m_1>...|I_k m_k> (Structure.Basis; m_J outermost,
// every m from +j down to -j), dimension (2J+1) prod(2I_i+1). All operators
// are built from J_z, J_+-, I_z, I_+-; any number of spins works.
//
// # Hamiltonian (H/h, Hz)
//
//   - SpinRotation, one spin:       c (I.J)
//   - SpinSpin, two spins:          d (I_1.I_2)
//   - SpinSpinTensor, two spins:    d_T [3((I_1.J)(I_2.J) + (I_2.J)(I_1.J)) - 2(I_1.I_2) J(J+1)] / [(2J-1)(2J+3)],
//     the rank-2 coupling of the two spins projected on J (J >= 1). This
//     normalization is the one of this package; convert a published constant
//     to it before use (conventions differ by J-independent factors).
//   - Quadrupole, one spin I >= 1, J >= 1: eQq_J [3(I.J)^2 + (3/2)(I.J) - I(I+1)J(J+1)] / [2I(2I-1)J(2J-1)],
//     whose eigenvalues for a single spin are the Casimir formula
//     (Townes & Schawlow 1955). Value is the effective constant of the level;
//     for a linear molecule eQq_J = -eQq J/(2J+3).
//   - Zeeman, B along z: H_Z = s mu B (g_J J_z + sum_i g_i (1 - sigma_i) I_iz).
//     Nuclear magneton (closed-shell molecules): s = -1, mu = mu_N: a
//     positive g means a moment parallel to the angular momentum, so for
//     g_J > 0 the m_J = +J state lies lowest. Bohr magneton (paramagnetic):
//     s = +1, mu = mu_B, the electron sign convention (moment = -g mu_B J):
//     for g_J > 0 the m_J = -J state lies lowest; nuclear g-factors are then
//     also in Bohr magnetons with that sign (g_I = -g_N m_e/m_p).
//
// B along z conserves M = m_J + sum m_i: each M block is diagonalized on its
// own (gonum mat.EigenSym). States are ordered by M, then by energy.
//
// # Labels
//
// At zero field each state is labeled by F (from <F^2>) and, with two or
// more spins, F1 (J coupled to the first spin, from <F1^2>); zero-field
// eigenvectors are rotated within degenerate clusters to diagonalize F^2,
// then F1^2. F1 is not a good quantum number: within each F the allowed
// F1 values are matched one-to-one to the states in order of <F1^2>.
// States of equal F, F1 and energy form a Multiplet (State.Multiplet).
// At finite field each eigenvector takes the labels of the zero-field
// eigenvector of its M block with the largest overlap (greedy one-to-one
// assignment), and its sign is chosen to make that overlap positive.
// Labels are names; the physics uses the eigenvectors. MJ2 = <m_J^2>.
// Known limitation: past hyperfine decoupling the overlaps with the
// zero-field vectors become comparable and two states of one M block can
// swap labels between neighbouring fields although their eigenvectors
// hardly change (seen above about 40 G for h2o-22, 80 G for oh-like-main,
// 7 G for synthetic-j6-5; not for single-spin quadrupole levels, which
// TestLabelsThroughDecoupling follows to 1e8 G). Track states across
// fields by eigenvector overlap or by energy order within an M block
// (non-crossing rule), as the Zeeman diagram does, not by label.
//
// # Transitions
//
// Electric-dipole components act on the rotation only (spins are
// spectators): <J_u m_u|d_q|J_l m_l> = (-1)^(J_u-m_u) (J_u 1 J_l; -m_u q m_l)
// with q = m_u - m_l, summed over the eigenvector amplitudes. Strengths are
// S_ab = (2J_u+1) |d_q(a,b)|^2, which makes sum_b S_ab = 1 for every upper
// eigenstate at any field (3j orthogonality); components below 1e-12 are
// dropped. Offsets are (E_a - E_b)/h. Wigner 3j and 6j symbols come from the
// Racah formulae (Wigner3j, Wigner6j; exact rational fallback for large J).
//
// Components gives the zero-field hyperfine components (F_u -> F_l) with
// relative strengths summing to 1, offsets, the weak-field splitting
// SplitHzPerG (sigma+ centroid minus pi centroid, positive when sigma+ lies
// at higher frequency) and LinearUpTo, the field at which that splitting
// departs from linear by 1 % (+Inf above the 1e6 G scan limit).
//
// # Component-table form
//
// A level with a Table (table.go) is a list of zero-field F levels, each
// with an energy and a g_F, instead of a Hamiltonian: basis |F_k M>, states
// E_k + s mu g_F M B (linear at every field, no mixing between F levels).
// Dipoles are (-1)^(F_u-M_u) (F_u 1 F_l; -M_u q M_l) sqrt((2F_u+1) b) with b
// the component's branching ratio from its upper F level (Species.
// TableLines), which keeps the per-upper-state sum rule. TableFromComponents
// builds such a species from the rows of a published table; TableRows
// writes a Hamiltonian species as one. Everything else (Solve, Components,
// labels, Multiplets) works alike; MJ2 is M^2 there (no J is known).
//
// # Components by name and velocity reference
//
// ComponentLabels names components "Fu-Fl" or, with two spins,
// "F1u,Fu-F1l,Fl"; SelectComponent resolves an index or a label and
// refuses an ambiguous one, listing the candidates. Species.Referenced
// moves Frequency to one component's rest frequency (ReferenceShift), so
// that line and component offsets, and velocities, are measured from it.
//
// # Use
//
//	sp, _ := species.Preset("h2o-22")        // maserpol/levels/species
//	ts, _ := levels.NewTransitionSolver(sp)  // build once
//	var tr levels.Transition
//	for _, B := range fields {               // gauss
//		ts.Solve(B, &tr)                     // reuses all storage
//		for _, ln := range tr.Lines { ... }  // ln.Q, ln.Offset (Hz), ln.Strength
//	}
//	cs, _ := levels.Components(sp)           // zero-field components
//
// NewTransition(sp, B) and Level.Solve(B) are one-shot conveniences. Solvers
// are not safe for concurrent use: make one per goroutine.
package levels
