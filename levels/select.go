package levels

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// ComponentLabels returns the label of every component: "Fu-Fl", or
// "F1u,Fu-F1l,Fl" when some component of the list has F1 != F (two or more
// spins), with half-integers as "13/2". SelectComponent accepts these.
func ComponentLabels(cs []Component) []string {
	full := false
	for _, c := range cs {
		full = full || c.F1u != c.Fu || c.F1l != c.Fl
	}
	out := make([]string, len(cs))
	for i, c := range cs {
		if full {
			out[i] = halfText(c.F1u) + "," + halfText(c.Fu) + "-" + halfText(c.F1l) + "," + halfText(c.Fl)
		} else {
			out[i] = halfText(c.Fu) + "-" + halfText(c.Fl)
		}
	}
	return out
}

// SelectComponent returns the index into cs of the component named by
// sel: an index as listed ("3"), the F labels of both levels ("2-1",
// "7/2-5/2"), or F1 and F of both levels ("13/2,7-15/2,8"; "6.5,7-7.5,8"
// also). A label that matches several components (the same F pair under
// different F1) is refused with every candidate listed; an unknown one
// with the full list.
func SelectComponent(cs []Component, sel string) (int, error) {
	sel = strings.TrimSpace(sel)
	labels := ComponentLabels(cs)
	list := func(idx []int) string {
		var b []string
		for _, i := range idx {
			b = append(b, fmt.Sprintf("%d (%s, F1=%s F=%s -> F1=%s F=%s, strength %.4g, %+.4g kHz)", i, labels[i],
				halfText(cs[i].F1u), halfText(cs[i].Fu), halfText(cs[i].F1l), halfText(cs[i].Fl), cs[i].Strength, cs[i].Offset/1e3))
		}
		return strings.Join(b, "; ")
	}
	all := make([]int, len(cs))
	for i := range all {
		all[i] = i
	}
	if i, err := strconv.Atoi(sel); err == nil {
		if i >= 0 && i < len(cs) {
			return i, nil
		}
		return 0, fmt.Errorf("component index %d out of range 0..%d (components: %s)", i, len(cs)-1, list(all))
	}
	up, lo, ok := strings.Cut(sel, "-")
	if !ok {
		return 0, fmt.Errorf("cannot read component %q: give an index, \"Fu-Fl\" or \"F1u,Fu-F1l,Fl\" (components: %s)", sel, list(all))
	}
	pu, err1 := parseLabels(up)
	pl, err2 := parseLabels(lo)
	if err1 != nil || err2 != nil || len(pu) != len(pl) {
		return 0, fmt.Errorf("cannot read component %q: give an index, \"Fu-Fl\" or \"F1u,Fu-F1l,Fl\" with the same labels on both sides (components: %s)", sel, list(all))
	}
	var match []int
	for i, c := range cs {
		var ok bool
		if len(pu) == 1 {
			ok = eqHalf(c.Fu, pu[0]) && eqHalf(c.Fl, pl[0])
		} else {
			ok = eqHalf(c.F1u, pu[0]) && eqHalf(c.Fu, pu[1]) && eqHalf(c.F1l, pl[0]) && eqHalf(c.Fl, pl[1])
		}
		if ok {
			match = append(match, i)
		}
	}
	switch len(match) {
	case 1:
		return match[0], nil
	case 0:
		return 0, fmt.Errorf("no component %q (components: %s)", sel, list(all))
	}
	return 0, fmt.Errorf("component %q is ambiguous: %d components match; name one by F1 and F of both levels or by index: %s", sel, len(match), list(match))
}

// parseLabels reads "F" or "F1,F", each a number or a fraction "n/2".
func parseLabels(s string) ([]float64, error) {
	parts := strings.Split(s, ",")
	if len(parts) > 2 {
		return nil, fmt.Errorf("too many labels")
	}
	var out []float64
	for _, p := range parts {
		p = strings.TrimSpace(p)
		n, d, frac := strings.Cut(p, "/")
		a, err := strconv.ParseFloat(n, 64)
		if err != nil {
			return nil, err
		}
		if frac {
			b, err := strconv.ParseFloat(d, 64)
			if err != nil || b == 0 {
				return nil, fmt.Errorf("bad fraction %q", p)
			}
			a /= b
		}
		out = append(out, a)
	}
	return out, nil
}

func eqHalf(a, b float64) bool { return math.Abs(a-b) < 1e-6 }

// halfText writes a multiple of 1/2 as an integer or "n/2".
func halfText(x float64) string {
	if t := twice(x); t%2 != 0 {
		return strconv.Itoa(t) + "/2"
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}
