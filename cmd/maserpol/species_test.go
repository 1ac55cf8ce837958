package main

import (
	"bytes"
	"strings"
	"testing"

	"maserpol/levels/species"
	"maserpol/runs"
)

// The unverified-species warning is printed once per command: the study
// prints it, and the per-model copies that transfer records are skipped.
func TestUnverifiedWarningOnce(t *testing.T) {
	sp, err := species.Preset("sio-v1-j1-0")
	if err != nil {
		t.Fatal(err)
	}
	w := sp.UnverifiedWarning()
	for _, want := range []string{"rotational g-factor", "rest frequency", "dipole moment"} {
		if !strings.Contains(w, want) {
			t.Errorf("warning %q does not name %q", w, want)
		}
	}
	var b bytes.Buffer
	printWarnings(&b, []runs.Warning{{Model: "m0000", Index: 0, Msg: w}, {Model: "m0001", Index: 1, Msg: w}, {Model: "m0001", Index: 1, Msg: "other"}}, []string{w})
	if strings.Contains(b.String(), "rotational") || !strings.Contains(b.String(), "m0001: other") {
		t.Errorf("printWarnings:\n%s", b.String())
	}
	oh, err := species.Preset("oh-like-main")
	if err != nil {
		t.Fatal(err)
	}
	if w := oh.UnverifiedWarning(); w != "" {
		t.Errorf("OH preset is sourced, got warning %q", w)
	}
}
