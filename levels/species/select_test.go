package species_test

import (
	"strings"
	"testing"

	"maserpol/levels"
	"maserpol/levels/species"
)

func TestSelectComponent(t *testing.T) {
	hcn, err := species.Preset("hcn-like-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	cs, err := levels.Components(hcn)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		sel    string
		fu, fl float64
	}{{"2-1", 2, 1}, {"0-1", 0, 1}, {"0", 1, 1}, {"1,1-1,1", 1, 1}} {
		i, err := levels.SelectComponent(cs, c.sel)
		if err != nil || cs[i].Fu != c.fu || cs[i].Fl != c.fl {
			t.Errorf("%q: index %d, err %v", c.sel, i, err)
		}
	}
	for _, bad := range []string{"3-1", "9", "x", "1-1-1"} {
		if _, err := levels.SelectComponent(cs, bad); err == nil || !strings.Contains(err.Error(), "strength") {
			t.Errorf("%q: got %v, want an error listing the components", bad, err)
		}
	}
	meth, err := species.Load("../../testdata/species/methanol-like-6.7-table.toml")
	if err != nil {
		t.Fatal(err)
	}
	cm, err := levels.Components(meth)
	if err != nil {
		t.Fatal(err)
	}
	// F = 6 -> 5 occurs under several F1 pairs: refused, each candidate
	// listed with its labels and strength.
	_, err = levels.SelectComponent(cm, "6-5")
	if err == nil || !strings.Contains(err.Error(), "ambiguous") {
		t.Fatalf("6-5: %v", err)
	}
	for _, want := range []string{"11/2,6-11/2,5", "13/2,6-11/2,5", "F1=11/2 F=6 -> F1=9/2 F=5", "strength"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("6-5: %q lacks %q", err, want)
		}
	}
	i, err := levels.SelectComponent(cm, "13/2,7-15/2,8")
	if err != nil || cm[i].F1u != 6.5 || cm[i].Fu != 7 || cm[i].F1l != 7.5 || cm[i].Fl != 8 {
		t.Errorf("13/2,7-15/2,8: %d, %v", i, err)
	}
	if j, err := levels.SelectComponent(cm, "6.5,7-7.5,8"); err != nil || j != i {
		t.Errorf("decimal labels: %d, %v", j, err)
	}
	// Every listed label selects its own component.
	for k, l := range levels.ComponentLabels(cm) {
		if j, err := levels.SelectComponent(cm, l); err != nil || j != k {
			t.Errorf("label %q: %d, %v", l, j, err)
		}
	}
}
