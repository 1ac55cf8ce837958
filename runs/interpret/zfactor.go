package interpret

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sort"

	"maserpol/levels"
	"maserpol/transfer"
)

// Blend selects the whole line (every hyperfine component) in FactorSpec.
const Blend = -1

// FactorSpec describes a Zeeman-factor computation.
type FactorSpec struct {
	// Base carries species, line width, decay rates, beaming and column
	// settings; Field, Theta, Pump and Seed polarization are set here
	// (isotropic pumping, unpolarized seed).
	Base   transfer.Params
	Thetas []float64 // rad; theta = 90 deg is skipped (cos theta = 0)
	// Component is an index into levels.Components(Base.Species), or Blend.
	Component int
	// B0 is the small field (gauss) of the model; 0 chooses the field that
	// makes the selected component's weak-field splitting (the blend: the
	// largest) SplitRatio Doppler widths.
	B0         float64
	SplitRatio float64 // default 1e-2
	// PumpOnly pumps only the upper hyperfine level of Component (the
	// component masers alone) instead of every state alike.
	PumpOnly bool
}

// FactorRow is the Zeeman factor at one field angle and checkpoint.
type FactorRow struct {
	Theta       float64 // rad
	Saturation  float64 // R/Gamma
	RoverGOmega float64
	// A is the least-squares V = A dI/dv + C I coefficient of the model at
	// B0, in m/s; C is the I-shaped part of V (dimensionless, at B0).
	A, C float64
	// Factor is A / (B0 cos theta), m/s per gauss: B cos theta = A_obs / Factor.
	Factor float64
	// Linear is the single-component linear-Zeeman value, m/s per gauss.
	Linear float64
	// Ratio is Factor / Linear.
	Ratio float64
	// PVPerG is P_V / (B0 |cos theta|), per gauss.
	PVPerG float64
	// Linearity is Factor(2 B0) / Factor(B0) - 1: zero when V is linear in B.
	Linearity float64
	// Residual is rms(V - A dI/dv - C I) / rms(V) over the fitted channels.
	Residual float64
	// GoodFit is Residual <= MaxResidual: V has the dI/dv shape the
	// factor assumes. Above it the factor is not a measure of B.
	GoodFit bool
	// BValidMin is the smallest field (gauss) at which this row lies in
	// the populations-only regime: R/(g Omega) is given at B0 and scales
	// as 1/B (g Omega is the linear Zeeman splitting), so the row holds
	// for |B| >= B0 RoverGOmega/ValidLimit.
	BValidMin float64
	// Valid is GoodFit and RoverGOmega <= ValidLimit at B0.
	Valid bool
}

// MaxResidual is the largest relative rms residual of the V = A dI/dv +
// C I fit for which the factor is reported as a good fit (common
// practice: a residual of 10 % of V means V is not dI/dv-shaped).
const MaxResidual = 0.1

// ErrNoAngles is returned by ZeemanFactors when every angle is 90 deg:
// there B cos(theta) = 0 and V carries no field, so the factor is
// undefined.
var ErrNoAngles = errors.New("theta = 90 deg only: B cos(theta) = 0 there, so V carries no field and the Zeeman factor is undefined; give angles other than 90 deg")

// Factors is the result of ZeemanFactors.
type Factors struct {
	Species    *levels.Species
	Components []levels.Component
	Component  int     // index or Blend
	B0         float64 // gauss
	// Window is the velocity range of the fit, m/s (radio convention).
	Window [2]float64
	Linear float64 // m/s per gauss, the single-component value used
	// BMax is the field (gauss) up to which the factors hold as constants:
	// the Zeeman splitting stays below 0.1 Doppler widths (Watson & Wyld
	// 2001) and the fitted components' shifts linear (levels.Component.
	// LinearUpTo).
	BMax     float64
	Rows     []FactorRow
	Warnings []string
	// First is the model at B0 and the first (smallest) angle, for figures.
	First *transfer.Trajectory
}

// ComponentVelocity returns the velocity (m/s, radio convention: higher
// frequency, lower velocity, as transfer's channel grid) of a component.
func ComponentVelocity(sp *levels.Species, c levels.Component) float64 {
	return -levels.SpeedOfLight * c.Offset / sp.Frequency
}

// LinearFactor returns the single-component linear-Zeeman factor (m/s per
// gauss) that the thin-line relation V = cos(theta) dv_Z dI/dv predicts
// for component c in transfer's conventions. dv_Z is the sigma+ shift
// against pi: +SplitHzPerG in frequency is -c SplitHzPerG/nu0 in radio
// velocity, while the sigma+ weight w_V = +cos(theta)/2 puts V =
// +cos(theta) (c SplitHzPerG/nu0) dI/dv. So the factor is +SplitKmsPerG
// (in m/s). Note dv_Z is half the sigma+ to sigma- separation.
func LinearFactor(c levels.Component) float64 { return c.SplitKmsPerG * 1e3 }

// BlendLinearFactor is the strength-weighted mean of the components'
// factors: the thin-line value when the hyperfine structure is much
// narrower than the line.
func BlendLinearFactor(cs []levels.Component) float64 {
	var s, w float64
	for _, c := range cs {
		s += c.Strength * LinearFactor(c)
		w += c.Strength
	}
	return s / w
}

// ZeemanFactors runs the model at B0 and 2 B0 for every angle and fits
// V = A dI/dv at every checkpoint. run is transfer's Run (or a substitute
// in tests); workers run models in parallel.
func ZeemanFactors(ctx context.Context, spec FactorSpec, workers int, run RunFunc) (*Factors, error) {
	sp := spec.Base.Species
	if sp == nil {
		return nil, fmt.Errorf("interpret: no species")
	}
	comps, err := levels.Components(sp)
	if err != nil {
		return nil, err
	}
	if spec.Component != Blend && (spec.Component < 0 || spec.Component >= len(comps)) {
		return nil, fmt.Errorf("component %d out of range (allowed: 0..%d, or the blend)", spec.Component, len(comps)-1)
	}
	userChannels, userTol := spec.Base.Channels, spec.Base.Tolerance
	base := spec.Base.WithDefaults()
	vd := base.Doppler
	if !(vd > 0) {
		return nil, fmt.Errorf("interpret: Doppler width not set")
	}
	f := &Factors{Species: sp, Components: comps, Component: spec.Component}
	maxSplit := 0.0
	for _, c := range comps {
		maxSplit = math.Max(maxSplit, math.Abs(LinearFactor(c)))
	}
	if maxSplit == 0 {
		return nil, fmt.Errorf("species %q has no linear Zeeman splitting: V does not measure B", sp.Name)
	}
	ratio := spec.SplitRatio
	if ratio == 0 {
		ratio = 1e-2
	}
	// B0 from the selected component's own splitting (the blend: the
	// largest), so that its V is well above the integrator's error.
	ref := maxSplit
	if spec.Component != Blend {
		ref = math.Abs(LinearFactor(comps[spec.Component]))
		if ref == 0 {
			return nil, fmt.Errorf("component F=%g-%g has no linear Zeeman splitting: V does not measure B there", comps[spec.Component].Fu, comps[spec.Component].Fl)
		}
	}
	f.B0 = spec.B0
	if f.B0 == 0 {
		f.B0 = ratio * vd / ref
		// Stay well inside the linear Zeeman regime of the fitted lines
		// (hyperfine decoupling): 2 B0 at most half of LinearUpTo.
		for i, c := range comps {
			if (spec.Component == Blend || i == spec.Component) && c.LinearUpTo > 0 {
				f.B0 = math.Min(f.B0, c.LinearUpTo/4)
			}
		}
	}
	f.BMax = 0.1 * vd / maxSplit
	strongest := 0.0
	for _, c := range comps {
		strongest = math.Max(strongest, c.Strength)
	}
	for i, c := range comps {
		// Components below 5 % of the strongest hardly move the blend.
		use := i == spec.Component || spec.Component == Blend && c.Strength >= 0.05*strongest
		if use && c.LinearUpTo > 0 {
			f.BMax = math.Min(f.BMax, c.LinearUpTo)
		}
	}
	if r := f.B0 * maxSplit / vd; r > 0.1 {
		f.Warnings = append(f.Warnings, fmt.Sprintf("splitting/Doppler width = %.3g at B0 = %.4g G: above 0.1 V is no longer linear in B (Watson & Wyld 2001)", r, f.B0))
	}
	// Fit window and the single-component value.
	if spec.Component == Blend {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range comps {
			v := ComponentVelocity(sp, c)
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		f.Window = [2]float64{lo - 3*vd, hi + 3*vd}
		f.Linear = BlendLinearFactor(comps)
	} else {
		c := comps[spec.Component]
		v := ComponentVelocity(sp, c)
		half := 2 * vd
		for i, o := range comps {
			if i == spec.Component || o.Strength < 0.05*c.Strength {
				continue
			}
			d := math.Abs(ComponentVelocity(sp, o) - v)
			if d < 2*vd {
				f.Warnings = append(f.Warnings, fmt.Sprintf("component F=%g-%g lies %.3g km/s from F=%g-%g, within 2 Doppler widths: not isolated, the fit includes its emission", o.Fu, o.Fl, d/1e3, c.Fu, c.Fl))
			} else {
				half = math.Min(half, d/2)
			}
		}
		f.Window = [2]float64{v - half, v + half}
		f.Linear = LinearFactor(c)
		if c.LinearUpTo < 2*f.B0 {
			f.Warnings = append(f.Warnings, fmt.Sprintf("component F=%g-%g is linear in B only up to %.3g G, below 2 B0 = %.3g G", c.Fu, c.Fl, c.LinearUpTo, 2*f.B0))
		}
	}

	// The transfer couples lines to channels by linear interpolation, so a
	// shift much smaller than a channel is resolved only in the mean: with
	// fewer than ~24 channels per Doppler width the V profile departs from
	// dI/dv at the per-cent level. Unless the caller chose, use enough.
	if userChannels == 0 {
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, c := range comps {
			v := ComponentVelocity(sp, c)
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		span := hi - lo + 8*vd
		base.Channels = int(math.Min(8192, math.Max(float64(transfer.DefaultChannels), math.Ceil(24*span/vd))))
	} else if per := float64(base.Channels) * vd / (8*vd + f.Window[1] - f.Window[0]); per < 24 {
		f.Warnings = append(f.Warnings, fmt.Sprintf("about %.0f channels per Doppler width: the fitted factor may be off by per cents (use >= 24)", per))
	}

	// V is a small difference of I-sized terms: a local tolerance 1e-4 on
	// I leaves per-cent errors in V when V/I ~ 1e-3. Tighten it unless the
	// caller chose.
	if userTol == 0 {
		base.Tolerance = 1e-7
	}

	var thetas []float64
	for _, th := range spec.Thetas {
		if math.Abs(math.Cos(th)) < 1e-6 {
			f.Warnings = append(f.Warnings, "theta = 90 deg skipped: cos(theta) = 0, V carries no field information there")
			continue
		}
		thetas = append(thetas, th)
	}
	if len(thetas) == 0 {
		return nil, ErrNoAngles
	}
	sort.Float64s(thetas)
	var cases []Case
	for _, th := range thetas {
		for _, b := range []float64{f.B0, 2 * f.B0} {
			p := base
			p.Field, p.Theta = b, th
			p.Pump = transfer.Pump{Kind: transfer.Isotropic, LowerPump: base.Pump.LowerPump}
			if spec.PumpOnly && spec.Component != Blend {
				c := comps[spec.Component]
				p.Pump.Kind = transfer.Hyperfine
				p.Pump.UpperLevels = map[[2]float64]float64{{c.F1u, c.Fu}: 1}
				p.Pump.OnlyNamed = true
			}
			p.Seed.LinearFraction, p.Seed.CircularFraction = 0, 0
			cases = append(cases, Case{Mechanism: FieldIsotropic, Theta: th, Params: p})
		}
	}
	if err := samePopulationModel(cases, f); err != nil {
		return nil, err
	}
	trs := make([]*transfer.Trajectory, len(cases))
	errs := make([]error, len(cases))
	res := runTrajectories(ctx, cases, workers, run, nil)
	for i := range res {
		trs[i], errs[i] = res[i].tr, res[i].err
	}
	var dIdv []float64
	for i := 0; i < len(cases); i += 2 {
		th := cases[i].Theta
		if errs[i] != nil || errs[i+1] != nil {
			e := errs[i]
			if e == nil {
				e = errs[i+1]
			}
			return nil, fmt.Errorf("theta %.4g deg: %w", th*180/math.Pi, e)
		}
		t1, t2 := trs[i], trs[i+1]
		if i == 0 {
			f.First = t1
		}
		if len(t1.Checkpoints) != len(t2.Checkpoints) {
			f.Warnings = append(f.Warnings, fmt.Sprintf("theta %.4g deg: B0 and 2 B0 runs have different checkpoints; linearity is matched by saturation", th*180/math.Pi))
		}
		ct := math.Cos(th)
		for j, cp := range t1.Checkpoints {
			dIdv = Derivative(dIdv, t1.Velocity, cp.I)
			a, cI, resid, n := FitVdI(t1.Velocity, cp.I, dIdv, cp.V, f.Window[0], f.Window[1])
			if n < 3 {
				return nil, fmt.Errorf("fit window %.4g..%.4g km/s holds %d channels (need 3)", f.Window[0]/1e3, f.Window[1]/1e3, n)
			}
			row := FactorRow{Theta: th, Saturation: cp.Saturation, RoverGOmega: cp.RoverGOmega, A: a, C: cI, Residual: resid, Linear: f.Linear}
			row.Factor = a / (f.B0 * ct)
			row.Ratio = row.Factor / f.Linear
			row.PVPerG = cp.PV / (f.B0 * math.Abs(ct))
			row.Linearity = math.NaN()
			row.GoodFit = resid <= MaxResidual
			row.BValidMin = f.B0 * cp.RoverGOmega / ValidLimit
			row.Valid = row.GoodFit && cp.RoverGOmega <= ValidLimit
			if k := matchCheckpoint(t2, cp.Saturation, j); k >= 0 {
				c2 := t2.Checkpoints[k]
				dIdv = Derivative(dIdv, t2.Velocity, c2.I)
				a2, _, _, _ := FitVdI(t2.Velocity, c2.I, dIdv, c2.V, f.Window[0], f.Window[1])
				row.Linearity = (a2/(2*f.B0*ct))/row.Factor - 1
			}
			f.Rows = append(f.Rows, row)
		}
		f.Warnings = append(f.Warnings, t1.Warnings...)
	}
	f.Warnings = dedupe(f.Warnings)
	return f, nil
}

// matchCheckpoint finds the checkpoint of tr at saturation sat (relative
// 1e-3), trying index j first.
func matchCheckpoint(tr *transfer.Trajectory, sat float64, j int) int {
	near := func(k int) bool {
		return k >= 0 && k < len(tr.Checkpoints) && math.Abs(tr.Checkpoints[k].Saturation/sat-1) < 1e-3
	}
	if near(j) {
		return j
	}
	for k := range tr.Checkpoints {
		if near(k) {
			return k
		}
	}
	return -1
}

func dedupe(xs []string) []string {
	seen := map[string]bool{}
	out := xs[:0]
	for _, x := range xs {
		if !seen[x] {
			seen[x] = true
			out = append(out, x)
		}
	}
	return out
}

type trajResult struct {
	tr  *transfer.Trajectory
	err error
}

// runTrajectories runs cases on a pool of workers, results in case order.
// progress, if not nil, is called after each case from the calling goroutine.
func runTrajectories(ctx context.Context, cases []Case, workers int, run RunFunc, progress func(done, total int)) []trajResult {
	out := make([]trajResult, len(cases))
	if workers < 1 {
		workers = 1
	}
	jobs := make(chan int)
	done := make(chan struct{})
	for w := 0; w < workers; w++ {
		go func() {
			for i := range jobs {
				if err := ctx.Err(); err != nil {
					out[i].err = err
				} else {
					out[i].tr, out[i].err = run(ctx, cases[i].Params)
				}
				done <- struct{}{}
			}
		}()
	}
	go func() {
		for i := range cases {
			jobs <- i
		}
		close(jobs)
	}()
	for n := 1; n <= len(cases); n++ {
		<-done
		if progress != nil {
			progress(n, len(cases))
		}
	}
	return out
}

// samePopulationModel holds one population model for the B0 and 2 B0 runs
// of every angle, so that their ratio (Linearity) compares like with like:
// with the automatic model, the smallest field has the most strongly
// coupled coherences, and when the automatic model keeps the rate
// equations there, every run is set to the rate equations (with a
// warning in f).
func samePopulationModel(cases []Case, f *Factors) error {
	if len(cases) == 0 || cases[0].Params.Population != transfer.Auto {
		return nil
	}
	p := cases[0].Params // B0, the first angle
	tr, err := levels.NewTransition(p.Species, p.Field)
	if err != nil {
		return err
	}
	m, err := transfer.NewModel(tr, p)
	if err != nil {
		return err
	}
	if m.Coherent() {
		return nil
	}
	for i := range cases {
		cases[i].Params.Population = transfer.Rates
	}
	f.Warnings = append(f.Warnings, fmt.Sprintf("the automatic population model keeps the rate equations at B0 = %.4g G for this species: its density matrix there couples more sublevels strongly than the automatic model takes on (README, population models); the 2 B0 runs use the rate equations too, so that the linearity compares like with like", p.Field))
	return nil
}
