package config

import (
	"fmt"
	"math"
	"strings"

	"maserpol/levels"
	"maserpol/transfer"
)

// This file reads hyperfine-selective pumping by component (pump.component)
// and by {F1, F} level (pump.upper_f / lower_f keys "F1,F").

// parseLevelKey reads a pump-weight key: "F" (f1 = -1) or "F1,F".
func parseLevelKey(k string) (f1, f float64, err error) {
	a, b, two := strings.Cut(k, ",")
	if !two {
		f, err = parseF(strings.TrimSpace(k))
		return -1, f, err
	}
	if f1, err = parseF(strings.TrimSpace(a)); err != nil {
		return 0, 0, err
	}
	f, err = parseF(strings.TrimSpace(b))
	return f1, f, err
}

// components returns the zero-field components of the species, computed once.
func (pd *parsed) components() ([]levels.Component, error) {
	if pd.comps == nil {
		cs, err := levels.Components(pd.species)
		if err != nil {
			return nil, err
		}
		pd.comps = cs
	}
	return pd.comps, nil
}

func componentsAllowed(cs []levels.Component) string {
	labels := levels.ComponentLabels(cs)
	var b []string
	for i, l := range labels {
		b = append(b, fmt.Sprintf("%d or %q", i, l))
	}
	return strings.Join(b, ", ")
}

// componentLabels replaces component labels in pump.component (a string,
// or strings in a list) by their indices, so that the key sweeps like an
// integer; the species is resolved first for that.
func (ps *parser) componentLabels(pd *parsed) *Error {
	pt, _ := pd.raw["pump"].(map[string]any)
	v, ok := pt["component"]
	if !ok {
		return nil
	}
	hasLabel := false
	switch x := v.(type) {
	case string:
		hasLabel = true
	case []any:
		for _, e := range x {
			if _, isS := e.(string); isS {
				hasLabel = true
			}
		}
	}
	if !hasLabel {
		return nil
	}
	if err := ps.resolveSpecies(pd); err != nil {
		return err
	}
	cs, err := pd.components()
	if err != nil {
		return ps.err("pump.component", "", "species %s: %v", pd.species.Name, err)
	}
	resolve := func(s string) (int64, *Error) {
		i, err := levels.SelectComponent(cs, s)
		if err != nil {
			return 0, ps.err("pump.component", componentsAllowed(cs), "%v", err)
		}
		return int64(i), nil
	}
	switch x := v.(type) {
	case string:
		i, e := resolve(x)
		if e != nil {
			return e
		}
		pt["component"] = i
	case []any:
		for k, el := range x {
			if s, isS := el.(string); isS {
				i, e := resolve(s)
				if e != nil {
					return e
				}
				x[k] = i
			}
		}
	}
	return nil
}

// pumpComponent sets the pump of one model to feed only the upper
// hyperfine level of component i (levels.Components order).
func (ps *parser) pumpComponent(pd *parsed, par *transfer.Params, i int, kind transfer.PumpKind) *Error {
	if kind != transfer.Hyperfine {
		return ps.err("pump.component", `pump.kind = "hyperfine"`, "pumping one component needs pump.kind = \"hyperfine\"")
	}
	cs, err := pd.components()
	if err != nil {
		return ps.err("pump.component", "", "species %s: %v", pd.species.Name, err)
	}
	if i < 0 || i >= len(cs) {
		return ps.err("pump.component", componentsAllowed(cs), "component index %d out of range 0..%d", i, len(cs)-1)
	}
	c := cs[i]
	lv := map[[2]float64]float64{}
	for k, w := range par.Pump.UpperLevels {
		lv[k] = w
	}
	if _, set := lv[[2]float64{c.F1u, c.Fu}]; !set {
		lv[[2]float64{c.F1u, c.Fu}] = 1
	}
	par.Pump.UpperLevels = lv
	par.Pump.OnlyNamed = true
	return nil
}

// checkLevelKeys rejects {F1, F} pump weights for levels the species does
// not have.
func (ps *parser) checkLevelKeys(pd *parsed, path string, l levels.Level) *Error {
	lw := pd.levelWeights[path]
	if len(lw) == 0 {
		return nil
	}
	s, err := levels.NewSolver(l)
	if err != nil {
		return ps.err(path, "", "species %s: %v", pd.species.Name, err)
	}
	have := map[[2]float64]bool{}
	var names []string
	for _, m := range s.Multiplets() {
		k := [2]float64{m.F1, m.F}
		if !have[k] {
			have[k] = true
			names = append(names, fmt.Sprintf("%q", halfText(m.F1)+","+halfText(m.F)))
		}
	}
	t, _ := lookupRaw(pd.raw, &spec{table: "pump", name: strings.TrimPrefix(path, "pump.")})
	tbl, _ := t.(map[string]any)
	for _, k := range sortedKeys(tbl) {
		f1, f, _ := parseLevelKey(k)
		if f1 < 0 || have[[2]float64{f1, f}] {
			continue
		}
		e := ps.err(path+"."+k, "the F1,F levels of this level: "+strings.Join(names, ", "),
			"species %s has no %s level with F1 = %s, F = %s", pd.species.Name, strings.TrimSuffix(strings.TrimPrefix(path, "pump."), "_f"), halfText(f1), halfText(f))
		if e.Line == 0 && ps.pos != nil {
			e.Line = ps.pos.Line(path)
		}
		return e
	}
	return nil
}

// reference moves the velocity zero of the species to the component named
// by line.reference (levels.Species.Referenced).
func (ps *parser) reference(pd *parsed) *Error {
	ref := pd.str["line.reference"]
	if ref == "" || ref == "rest" {
		return nil
	}
	cs, err := pd.components()
	if err != nil {
		return ps.err("line.reference", "", "species %s: %v", pd.species.Name, err)
	}
	i, err := levels.SelectComponent(cs, ref)
	if err != nil {
		return ps.err("line.reference", componentsAllowed(cs)+", or \"rest\"", "%v", err)
	}
	pd.species = pd.species.Referenced(cs[i].Offset)
	return nil
}

// tableWarning states the validity of a component-table species in a
// study: without mixing between F levels, V misses a part shaped like I of
// relative size about (Doppler width / smallest hyperfine gap) against the
// Zeeman V (levels/species TestTableEqualsHamiltonian), and hyperfine
// decoupling is absent. "" for a Hamiltonian species.
func tableWarning(st *Study) string {
	if len(st.Models) == 0 {
		return ""
	}
	sp := st.Models[0].Params.Species
	if sp == nil || !sp.IsTable() {
		return ""
	}
	gap := math.Inf(1)
	for _, lv := range []levels.Level{sp.Upper, sp.Lower} {
		for i, a := range lv.Table {
			for _, b := range lv.Table[i+1:] {
				if d := math.Abs(a.Energy - b.Energy); d > 0 {
					gap = math.Min(gap, d)
				}
			}
		}
	}
	vd := 0.0
	for _, m := range st.Models {
		vd = math.Max(vd, m.Params.Doppler)
	}
	if math.IsInf(gap, 1) || !(vd > 0) {
		return ""
	}
	r := vd / levels.SpeedOfLight * sp.Frequency / gap
	return fmt.Sprintf("species %q is a component table (no mixing between F levels): Stokes V leaves out a part of relative size about Doppler width / smallest hyperfine gap = %.2g (%.3g kHz / %.3g kHz), and hyperfine decoupling; use the Hamiltonian form where that matters",
		sp.Name, r, vd/levels.SpeedOfLight*sp.Frequency/1e3, gap/1e3)
}
