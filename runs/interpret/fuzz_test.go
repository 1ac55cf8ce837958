package interpret

import (
	"math"
	"os"
	"strconv"
	"testing"
)

// FuzzParseObserved: reading an observed spectrum never panics, and what
// it accepts is usable by the fit: strictly increasing finite velocities,
// finite Stokes values of one length, positive finite errors.
func FuzzParseObserved(f *testing.F) {
	if data, err := os.ReadFile("../../testdata/observed/kestrel9-sio.ecsv"); err == nil {
		f.Add(data, "IQUV")
	}
	csv := "velocity_kms,I,Q,U,V\n"
	for i := 0; i < 40; i++ {
		v := -4 + 0.2*float64(i)
		csv += formatRow(v, 10*math.Exp(-v*v)+0.01*float64(i%3))
	}
	f.Add([]byte(csv), "IV")
	f.Add([]byte("vlsr [km/s],I [K],dI [K]\n1,2,0.1\n"), "I")
	f.Add([]byte("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: v, datatype: float64}\nv\n1\n"), "I")
	f.Fuzz(func(t *testing.T, data []byte, stokes string) {
		if len(data) > 1<<16 {
			return
		}
		o, err := ParseObserved(data, "fuzz.csv", ReadOptions{Stokes: stokes, VelocityUnit: "km/s"})
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error")
			}
			return
		}
		n := len(o.Velocity)
		for i, v := range o.Velocity {
			if math.IsNaN(v) || math.IsInf(v, 0) || (i > 0 && !(v > o.Velocity[i-1])) {
				t.Fatalf("velocity %d = %v: not finite and strictly increasing", i, v)
			}
		}
		for k := 0; k < 4; k++ {
			if !o.Use[k] {
				continue
			}
			if len(o.Stokes[k]) != n || len(o.Err[k]) != n {
				t.Fatalf("Stokes %d: %d values, %d errors, %d channels", k, len(o.Stokes[k]), len(o.Err[k]), n)
			}
			for i := range o.Stokes[k] {
				if x, e := o.Stokes[k][i], o.Err[k][i]; math.IsNaN(x) || math.IsInf(x, 0) || !(e > 0) || math.IsInf(e, 0) {
					t.Fatalf("Stokes %d channel %d: value %v error %v", k, i, x, e)
				}
			}
		}
	})
}

func formatRow(v, i float64) string {
	return fmtG(v) + "," + fmtG(i) + "," + fmtG(0.1*i) + "," + fmtG(0.02*i) + "," + fmtG(0.001*v) + "\n"
}

func fmtG(x float64) string { return strconv.FormatFloat(x, 'g', 8, 64) }
