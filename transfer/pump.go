package transfer

import (
	"fmt"
	"math"

	"maserpol/levels"
)

// This file holds the pump model of physics.md section 4: the relative
// pump weight of every eigenstate (isotropic, alignment, by hyperfine label).

// levelPumpWeights returns the relative pump weights of the upper level
// (upper true) or of the lower level of a model: pumpWeights with the
// level's F and {F1, F} weights.
func levelPumpWeights(pm Pump, st *levels.Structure, upper bool) ([]float64, error) {
	if upper {
		return weights(pm, st, pm.UpperF, pm.UpperLevels, pm.OnlyNamed)
	}
	return weights(pm, st, pm.LowerF, pm.LowerLevels, false)
}

// pumpWeights returns the relative pump weight of every eigenstate of st
// for the pump pm (mean 1 over the states of the level, so the total pump
// rate is fixed), with hyperfine weights by F label from byF. See doc.go
// for the alignment form.
func pumpWeights(pm Pump, st *levels.Structure, byF map[float64]float64) ([]float64, error) {
	return weights(pm, st, byF, nil, false)
}

// weights is pumpWeights with weights by {F1, F} level (taking precedence
// over byF) and, with onlyNamed, weight 0 for the states neither names.
func weights(pm Pump, st *levels.Structure, byF map[float64]float64, byLevel map[[2]float64]float64, onlyNamed bool) ([]float64, error) {
	n := len(st.States)
	w := make([]float64, n)
	switch pm.Kind {
	case Isotropic:
		for i := range w {
			w[i] = 1
		}
	case Anisotropic:
		if len(st.Level.Table) > 0 {
			return nil, fmt.Errorf("transfer: anisotropic pumping weights states by <m_J^2>, which a species given as a component table does not define: use its Hamiltonian form, or hyperfine-selective pumping")
		}
		j := st.Level.J
		jj := j * (j + 1)
		// Normalize 3<m_J^2> - J(J+1) by its largest magnitude over m_J so
		// that |f| <= 1 and p = 1 + Alignment f >= 0 for |Alignment| <= 1.
		norm := 0.0
		for m := -j; m <= j+1e-9; m++ {
			norm = math.Max(norm, math.Abs(3*m*m-jj))
		}
		for i, s := range st.States {
			f := 0.0
			if norm > 0 {
				f = (3*s.MJ2 - jj) / norm
			}
			w[i] = 1 + pm.Alignment*f
		}
	case Hyperfine:
		for k, v := range byLevel {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
				return nil, fmt.Errorf("transfer: pump weight %g of the level F1=%g F=%g: allowed finite weights >= 0", v, k[0], k[1])
			}
		}
		rest := 1.0
		if onlyNamed {
			rest = 0
		}
		for i, s := range st.States {
			w[i] = rest
			if v, ok := lookupF(byF, s.F); ok {
				w[i] = v
			}
			if v, ok := lookupLevel(byLevel, s.F1, s.F); ok {
				w[i] = v
			}
		}
	}
	sum := 0.0
	for _, v := range w {
		sum += v
	}
	if !(sum > 0) {
		return nil, fmt.Errorf("transfer: pump weights of the J=%g level sum to %g: nothing is pumped", st.Level.J, sum)
	}
	for i := range w {
		// Clamp the tiny negatives that rounding of <m_J^2> can give.
		w[i] = math.Max(0, w[i]*float64(n)/sum)
	}
	return w, nil
}

// lookupF finds the weight of label f allowing for rounding of half-integers.
func lookupF(m map[float64]float64, f float64) (float64, bool) {
	if v, ok := m[f]; ok {
		return v, true
	}
	for k, v := range m {
		if math.Abs(k-f) < 1e-6 {
			return v, true
		}
	}
	return 0, false
}

// lookupLevel finds the weight of the level {f1, f}, allowing for rounding.
func lookupLevel(m map[[2]float64]float64, f1, f float64) (float64, bool) {
	if v, ok := m[[2]float64{f1, f}]; ok {
		return v, true
	}
	for k, v := range m {
		if math.Abs(k[0]-f1) < 1e-6 && math.Abs(k[1]-f) < 1e-6 {
			return v, true
		}
	}
	return 0, false
}
