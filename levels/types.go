package levels

// This file is the contract between levels and its consumers (transfer,
// runs, cmd). Field names and meanings here are relied on elsewhere; change
// them only together with their users.

// Magneton selects the unit of the Zeeman moments of a species.
type Magneton int

const (
	// Nuclear is the nuclear magneton, for non-paramagnetic (closed-shell) molecules.
	Nuclear Magneton = iota
	// Bohr is the Bohr magneton, for paramagnetic species; the moment then
	// carries the sign of an electron moment (see doc.go).
	Bohr
)

// Spin is one nuclear spin (or an effective spin of several equivalent nuclei).
type Spin struct {
	Name string
	// I is the spin quantum number, a non-negative multiple of 1/2.
	I float64
	// G is the nuclear g-factor in units of the species magneton.
	G float64
	// Shielding is the nuclear magnetic shielding sigma (dimensionless,
	// usually 0); the Zeeman term uses G*(1-Shielding).
	Shielding float64
}

// CouplingKind names a hyperfine interaction term.
type CouplingKind int

const (
	SpinRotation   CouplingKind = iota // c (I.J), one spin
	SpinSpin                           // d (I1.I2), two spins, scalar
	SpinSpinTensor                     // rank-2 coupling of two spins projected on J, two spins
	Quadrupole                         // electric quadrupole, one spin with I >= 1; Value is eQq_J of the level
)

// Coupling is one hyperfine term of a rotational level. Value is in Hz.
type Coupling struct {
	Kind  CouplingKind
	Spins []int // indices into Level.Spins: one for SpinRotation/Quadrupole, two for spin-spin
	Value float64
}

// Level is a rotational level with its nuclear spins and hyperfine couplings.
type Level struct {
	J         float64 // rotational quantum number, non-negative multiple of 1/2
	G         float64 // rotational g-factor in units of Magneton
	Magneton  Magneton
	Spins     []Spin
	Couplings []Coupling
	// Table, when not empty, defines the level by its zero-field hyperfine
	// levels instead of a Hamiltonian (the component-table form, table.go):
	// each F level splits linearly in the field with its own g_F, and F
	// levels do not mix. J and Spins are then descriptive only, G and
	// Couplings unused.
	Table []FLevel
}

// FLevel is one zero-field hyperfine level of a component-table level.
type FLevel struct {
	F, F1  float64 // F1 equals F for fewer than two spins
	Energy float64 // zero-field E/h, Hz, relative to the unsplit level
	G      float64 // g_F in units of the species magneton (sign as for g_J, doc.go)
}

// TableLine is one hyperfine component of a component-table species: the
// dipole between F levels Upper.Table[Upper] and Lower.Table[Lower].
type TableLine struct {
	Upper, Lower int
	// Branching is the fraction of the decay of the upper F level that goes
	// through this component (the components of each upper F level sum to 1).
	Branching float64
}

// BasisState is one vector of the uncoupled product basis |J mJ>|I1 m1>...|Ik mk>.
type BasisState struct {
	MJ float64
	MI []float64 // one per spin, in Level.Spins order
}

// State is an eigenstate of a Level at a given field.
type State struct {
	// Energy is E/h in Hz relative to the unsplit rotational level.
	Energy float64
	// M is the total projection m_J + sum m_i (conserved with B along z).
	M float64
	// F is the zero-field total angular momentum label carried to this field
	// by maximal overlap. F1 is the intermediate label (J coupled to the first
	// spin) when the level has two or more spins, otherwise equal to F.
	F, F1 float64
	// MJ2 is <m_J^2> of the state, used by alignment (anisotropic) pumping.
	MJ2 float64
	// Multiplet indexes the zero-field hyperfine level (Solver.Multiplets)
	// the state is carried from; it distinguishes levels with equal F, F1.
	Multiplet int
	// Vector holds the amplitudes on Structure.Basis (real: the Hamiltonian is real symmetric).
	Vector []float64
}

// Structure is the solved level structure at one field strength.
type Structure struct {
	Level  Level
	Field  float64 // gauss
	Basis  []BasisState
	States []State // ordered by M, then by energy
}

// Species describes one maser transition between two rotational levels that
// share the same nuclear spins.
type Species struct {
	Name      string
	Frequency float64 // rest frequency of the unsplit line, Hz
	EinsteinA float64 // s^-1, of the unsplit rotational line
	Mass      float64 // molecular mass, amu
	Magneton  Magneton
	Upper     Level
	Lower     Level
	// Unverified is true when some constant comes from memory or is
	// otherwise not checked against a source; users get a warning.
	Unverified bool
	// UnverifiedValues names the values that are not checked (e.g.
	// "rotational g"); it may be empty when Unverified is set without
	// naming them. UnverifiedWarning turns it into the user's warning.
	UnverifiedValues []string
	// Notes carry the source of each constant, as written in the species file.
	Notes []string
	// ReferenceShift (Hz) is how far Frequency was moved from the unsplit
	// line to a chosen hyperfine component (Referenced), so that velocities
	// are measured from that component; line and component offsets stay
	// relative to Frequency. Level energies are not affected.
	ReferenceShift float64
	// Typical holds conditions typical of observed masers of this line,
	// which starter configs use; zero values are not given.
	Typical Typical
	// TableLines are the components of a component-table species (both
	// levels with a Table); nil for the Hamiltonian form.
	TableLines []TableLine
}

// Line is one allowed dipole component between an upper eigenstate and a
// lower eigenstate at a given field.
type Line struct {
	Upper, Lower int     // indices into Transition.Upper.States / Lower.States
	Q            int     // m_u - m_l, one of -1, 0, +1
	Offset       float64 // (E_u - E_l)/h in Hz: frequency relative to the species rest frequency
	// Strength is |<u|d_q|l>|^2 normalized so that, for every upper
	// eigenstate, the sum over lower eigenstates is 1.
	Strength float64
	// Amplitude is the signed <u|d_q|l> on the same normalization
	// (Amplitude^2 = Strength). Its sign is fixed by the phase of the
	// eigenvectors; only products of amplitudes that share a state, as in
	// the Zeeman coherences of package transfer, are physical.
	Amplitude float64
}

// Transition is the solved upper and lower structures at one field and all
// their allowed components.
type Transition struct {
	Species *Species
	Field   float64 // gauss
	Upper   *Structure
	Lower   *Structure
	Lines   []Line
}

// Component is one zero-field hyperfine component F_u -> F_l of a transition,
// with its weak-field Zeeman behaviour.
type Component struct {
	Fu, Fl   float64
	F1u, F1l float64 // intermediate labels (equal to Fu, Fl with fewer than two spins)
	Offset   float64 // zero-field frequency offset from the species rest frequency, Hz
	// Strength is the relative line strength; all components sum to 1.
	Strength float64
	// SplitHzPerG is the weak-field shift of the sigma+ (q=+1) centroid
	// relative to the pi centroid, in Hz per gauss: the effective Zeeman
	// splitting that the thin-line V relation uses. Sign follows the
	// convention of doc.go.
	SplitHzPerG float64
	// SplitKmsPerG is SplitHzPerG in velocity units, km/s per gauss
	// (c * SplitHzPerG / Frequency).
	SplitKmsPerG float64
	// LinearUpTo is the field (gauss) below which the component's shifts stay
	// linear in B within 1 % (the onset of hyperfine decoupling).
	LinearUpTo float64
}

// Typical is a set of conditions typical of observed masers of a line.
type Typical struct {
	Field   float64 // gauss
	Doppler float64 // 1/e half-width of the velocity distribution, m/s
	Theta   float64 // angle of the field to the line of sight, rad
}
