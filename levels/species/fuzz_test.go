package species

import (
	"errors"
	"testing"

	"maserpol/levels"
)

// FuzzParse: Parse never panics, reports every refusal as an *Error
// naming the file, and every species it accepts is valid, within the size
// limits, and solves (levels.NewTransition) without error.
func FuzzParse(f *testing.F) {
	for _, n := range Names() {
		data, err := PresetSource(n)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data)
	}
	f.Add([]byte(""))
	f.Add([]byte("name = \"x\"\nfrequency = \"1 GHz\"\neinstein_a = 1e-6\nmass = 20\n[upper]\nJ = \"3/2\"\ng = 0.1\n[lower]\nJ = \"1/2\"\ng = 0.1\n[[spin]]\nname = \"H\"\nI = \"1/2\"\ng = 5.58\n[[coupling]]\nkind = \"spin-rotation\"\nlevel = \"both\"\nspins = [\"H\"]\nvalue = \"30 kHz\"\n"))
	f.Add([]byte("name = \"x\"\n[upper]\nJ = 100000\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) > 4096 {
			return
		}
		sp, err := Parse(data, "fuzz.toml")
		if err != nil {
			var e *Error
			if !errors.As(err, &e) || e.File != "fuzz.toml" || e.Msg == "" {
				t.Fatalf("refusal is not a species error naming the file: %#v", err)
			}
			return
		}
		if err := sp.Validate(); err != nil {
			t.Fatalf("accepted species does not validate: %v", err)
		}
		if s := sp.Size(); s.UpperDim > levels.MaxDim || s.LowerDim > levels.MaxDim || s.Lines > levels.MaxLines {
			t.Fatalf("accepted species beyond the size limits: %+v", s)
		}
		if s := sp.Size(); s.UpperDim > 256 || s.LowerDim > 256 {
			return // solving a large structure takes a second under coverage; TestSizeLimits covers them
		}
		if _, err := levels.NewTransition(sp, 1); err != nil {
			t.Fatalf("accepted species does not solve: %v", err)
		}
	})
}
