package interpret

import (
	"fmt"
	"math"
	"sort"
)

// FieldVerdict is the one-word outcome of a feature's field measurement.
type FieldVerdict string

// Verdicts, in the order they are decided.
const (
	// VerdictPoorFit: V is not A dI/dv + C I within the noise (p < PoorFitP).
	VerdictPoorFit FieldVerdict = "poor fit"
	// VerdictNotDetected: |A| < DetectSigma sigma_A; UpperLimit bounds |B_los|.
	VerdictNotDetected FieldVerdict = "not detected"
	// VerdictOutside: the field lies outside the model's validity: R/(g Omega)
	// above ValidLimit, a splitting above 0.1 Doppler widths, a model V not
	// shaped like dI/dv at the feature's saturation, or a saturation
	// outside the factor grid.
	VerdictOutside FieldVerdict = "outside validity"
	// VerdictOK: a detected field inside the model's validity.
	VerdictOK FieldVerdict = "ok"
)

// DetectSigma is the significance of |A| above which a field counts as
// detected, and the multiple of sigma in the upper limit (common practice).
const DetectSigma = 3

// PoorFitP is the chi-square probability below which the fit is poor: V
// departs from A dI/dv + C I by more than noise (common practice: 0.1 %).
const PoorFitP = 1e-3

// Feature is one maser feature to analyse.
type Feature struct {
	Name string
	Obs  *Observed // I and V with errors
	// Window overrides the automatic fit window (m/s) when Window[1] >
	// Window[0].
	Window  [2]float64
	Hanning bool
	// SatLo, SatHi bound the saturation R/Gamma of the feature.
	SatLo, SatHi float64
	SatFrom      string
	// Theta (rad) with ThetaErr when given; NaN when not.
	Theta, ThetaErr float64
	// Ml, MlErr: measured fractional linear polarization (NaN when not
	// measured); Branch fixes the GKK branch or leaves it (AnyBranch).
	Ml, MlErr float64
	Branch    Branch
	// Notes from reading the feature, carried into the result.
	Notes []string
}

// FeatureResult is the field of one feature.
type FeatureResult struct {
	Name     string
	Fit      ZeemanFit
	Window   [2]float64 // m/s
	PeakV    float64    // velocity of the I peak, m/s
	PeakI    float64
	NoiseV   string // where the noise of V came from
	Factor   FactorSpread
	BLos     float64 // gauss, positive towards the observer
	BLosErr  float64
	Theta    float64 // rad, NaN when unknown
	ThetaErr float64
	// ThetaFrom says where theta came from: "given", "m_l (GKK)", "none".
	ThetaFrom string
	GKK       *ThetaEstimate // when theta came from m_l
	B, BErr   float64        // gauss; NaN without theta
	SatLo     float64
	SatHi     float64
	// RoverGOmega is R/(g Omega) at the top of the saturation range and at
	// the measured |B| (|B_los| without theta, the upper limit when not
	// detected): it scales as 1/|B|.
	RoverGOmega float64
	Detected    bool
	UpperLimit  float64 // gauss, DetectSigma bound on |B_los| (every feature)
	Verdict     FieldVerdict
	Notes       []string
	Hanning     bool // channels treated as Hanning-correlated
}

// ThetaGridMax is the largest angle the factor grid holds: cos theta = 0
// at 90 deg, where V carries no field and the factor is undefined.
const ThetaGridMax = 85 * math.Pi / 180

// AnalyzeFeature fits the feature's V, converts A into B_los with the
// factor grid at the feature's saturation and angle, infers theta when
// needed and decides the verdict.
func AnalyzeFeature(ft Feature, g *FactorGrid) (*FeatureResult, error) {
	o := ft.Obs
	if o == nil || !o.Use[0] || !o.Use[3] {
		return nil, fmt.Errorf("feature %s: the spectrum needs Stokes I and V", ft.Name)
	}
	if !(ft.SatLo > 0) || ft.SatHi < ft.SatLo {
		return nil, fmt.Errorf("feature %s: saturation %g..%g (allowed: 0 < lo <= hi)", ft.Name, ft.SatLo, ft.SatHi)
	}
	r := &FeatureResult{Name: ft.Name, SatLo: ft.SatLo, SatHi: ft.SatHi, NoiseV: o.ErrFrom[3], Theta: math.NaN(), ThetaErr: math.NaN(), B: math.NaN(), BErr: math.NaN(),
		Notes: append([]string(nil), ft.Notes...)}
	sigI := median(sortedCopy(o.Err[0]))
	win, pk, err := LineWindow(o.Velocity, o.Stokes[0], sigI)
	if err != nil {
		return nil, fmt.Errorf("feature %s: %w", ft.Name, err)
	}
	if ft.Window[1] > ft.Window[0] {
		win = ft.Window
	}
	r.Window, r.PeakV, r.PeakI = win, o.Velocity[pk], o.Stokes[0][pk]
	fit, err := FitZeeman(ZeemanFitInput{Velocity: o.Velocity, I: o.Stokes[0], V: o.Stokes[3], SigmaV: o.Err[3], SigmaI: o.Err[0], Window: win, Hanning: ft.Hanning})
	if err != nil {
		return nil, fmt.Errorf("feature %s: %w", ft.Name, err)
	}
	r.Fit, r.Hanning = fit, ft.Hanning

	// Field angle.
	thLo, thHi := g.Thetas[0], math.Min(g.Thetas[len(g.Thetas)-1], ThetaGridMax)
	switch {
	case !math.IsNaN(ft.Theta):
		r.Theta, r.ThetaErr, r.ThetaFrom = ft.Theta, math.Max(ft.ThetaErr, 0), "given"
		if math.IsNaN(r.ThetaErr) {
			r.ThetaErr = 0
		}
	case !math.IsNaN(ft.Ml):
		e, err := GKKTheta(ft.Ml, math.Max(ft.MlErr, 0), ft.Branch)
		if err != nil {
			return nil, fmt.Errorf("feature %s: %w", ft.Name, err)
		}
		r.GKK = &e
		r.Theta, r.ThetaErr, r.ThetaFrom = e.Theta, e.ThetaErr, "m_l (GKK)"
		if ft.SatHi < 10 {
			r.Notes = append(r.Notes, fmt.Sprintf("theta from m_l assumes a saturated maser (GKK, R >> Gamma); R/Gamma here is at most %.3g", ft.SatHi))
		}
	default:
		r.ThetaFrom = "none"
		r.Notes = append(r.Notes, fmt.Sprintf("theta unknown: B_los uses the factor over theta %.0f..%.0f deg; B not given", thLo*180/math.Pi, thHi*180/math.Pi))
	}
	if !math.IsNaN(r.Theta) {
		// The factor A/(B cos theta) is the same at theta and 180 deg -
		// theta (A changes sign with cos theta): look up the acute angle.
		look := math.Min(r.Theta, math.Pi-r.Theta)
		thLo = math.Max(thLo, look-r.ThetaErr)
		thHi = math.Min(thHi, look+r.ThetaErr)
		if thHi < thLo { // theta beyond the grid: its edge
			thLo = math.Min(math.Max(look, g.Thetas[0]), ThetaGridMax)
			thHi = thLo
		}
		if look > ThetaGridMax {
			r.Notes = append(r.Notes, fmt.Sprintf("theta %.1f deg: the factor is taken at %.0f deg (cos theta -> 0: V carries little field)", r.Theta*180/math.Pi, ThetaGridMax*180/math.Pi))
		}
	}
	fs := g.Spread(ft.SatLo, ft.SatHi, thLo, thHi)
	r.Factor = fs
	f := fs.Mid
	r.BLos = fit.A / f
	r.BLosErr = math.Hypot(fit.AErr/f, r.BLos*fs.Err/f)
	r.UpperLimit = (math.Abs(fit.A) + DetectSigma*fit.AErr) / fs.MinAbs
	r.Detected = math.Abs(fit.A) >= DetectSigma*fit.AErr
	if !math.IsNaN(r.Theta) {
		c := math.Cos(r.Theta)
		r.B = r.BLos / c
		r.BErr = math.Hypot(r.BLosErr/c, r.B*math.Tan(r.Theta)*r.ThetaErr)
	}
	bAbs := math.Abs(r.BLos)
	if !math.IsNaN(r.B) {
		bAbs = math.Abs(r.B)
	}
	if !r.Detected {
		bAbs = r.UpperLimit
	}
	r.RoverGOmega = fs.RGOMax * g.B0 / math.Max(bAbs, 1e-30)

	// Verdict.
	var outside []string
	if r.RoverGOmega > ValidLimit {
		outside = append(outside, fmt.Sprintf("R/(g Omega) = %.3g > %g", r.RoverGOmega, ValidLimit))
	}
	if bAbs > g.BMax {
		outside = append(outside, fmt.Sprintf("|B| = %.3g G above %.3g G (splitting > 0.1 Doppler widths or non-linear Zeeman shifts)", bAbs, g.BMax))
	}
	if !fs.Good {
		outside = append(outside, "the model V is not dI/dv-shaped at this saturation and angle (factor grid rows with residual > 10 %)")
	}
	if fs.Outside {
		lo, hi := g.SatRange()
		outside = append(outside, fmt.Sprintf("saturation %.3g..%.3g outside the factor grid %.3g..%.3g (taken at its edge)", ft.SatLo, ft.SatHi, lo, hi))
	}
	switch {
	case fit.PValue < PoorFitP:
		r.Verdict = VerdictPoorFit
		r.Notes = append(r.Notes, fmt.Sprintf("chi2 = %.4g for %d channels (p = %.2g): V is not A dI/dv + C I within the noise", fit.Chi2, fit.N, fit.PValue))
	case !r.Detected:
		r.Verdict = VerdictNotDetected
	case len(outside) > 0:
		r.Verdict = VerdictOutside
	default:
		r.Verdict = VerdictOK
	}
	r.Notes = append(r.Notes, outside...)
	if r.GKK != nil && r.GKK.Ambiguous {
		r.Notes = append(r.Notes, fmt.Sprintf("EVPA orientation ambiguous: %s branch taken (probability %.2f for field directions uniform on the sphere); other branch theta = %.1f deg", r.GKK.Orientation, branchProb(r.GKK), r.GKK.Alt*180/math.Pi))
	}
	return r, nil
}

func branchProb(e *ThetaEstimate) float64 {
	if e.Orientation == OrientPerpendicular {
		return e.PPerpendicular
	}
	return 1 - e.PPerpendicular
}

func sortedCopy(x []float64) []float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	return s
}
