package units

import (
	"math"
	"strings"
	"testing"
)

func TestParse(t *testing.T) {
	// Conversion factors: SI definitions (1 T = 1e4 G; 1 deg = pi/180 rad;
	// IAU 2012 B2 for the au; pc = 648000/pi au).
	tests := []struct {
		in   string
		kind Kind
		want float64
	}{
		{"25 mG", Field, 0.025},
		{"1.2 G", Field, 1.2},
		{"3 uG", Field, 3e-6},
		{"3µG", Field, 3e-6},
		{"1 T", Field, 1e4},
		{"43.122080 GHz", Frequency, 43.12208e9},
		{"0.942 MHz", Frequency, 942e3},
		{"-12.5 kHz", Frequency, -12.5e3},
		{"0.6 km/s", Velocity, 600},
		{"600 m s-1", Velocity, 600},
		{"30 deg", Angle, math.Pi / 6},
		{"1.5e-1 rad", Angle, 0.15},
		{"1e9 K", Temperature, 1e9},
		{"44 amu", Mass, 44},
		{"44 u", Mass, 44},
		{"2 s^-1", Rate, 2},
		{"1e-2 sr", SolidAngle, 1e-2},
		{"1e4 cm^-3", Density, 1e4},
		{"1 pc", Length, 3.0856775814913673e16},
		{"0.5", Dimensionless, 0.5},
		{"20 %", Dimensionless, 0.2},
	}
	for _, tc := range tests {
		got, err := Parse(tc.in, tc.kind)
		if err != nil {
			t.Errorf("Parse(%q): %v", tc.in, err)
			continue
		}
		if math.Abs(got-tc.want) > 1e-12*math.Abs(tc.want) {
			t.Errorf("Parse(%q) = %v, want %v", tc.in, got, tc.want)
		}
	}
}

func TestParseErrors(t *testing.T) {
	tests := []struct {
		in   string
		kind Kind
		msg  string
	}{
		{"25", Field, "no unit"},
		{"25 km/s", Field, "unit of velocity"},
		{"25 furlong", Field, "unknown unit"},
		{"mG", Field, "does not start with a number"},
		{"", Angle, "empty"},
		{"1e999 G", Field, "bad number"},
		{"25 MG", Field, "unknown unit"}, // mega-gauss is not milligauss
	}
	for _, tc := range tests {
		_, err := Parse(tc.in, tc.kind)
		if err == nil || !strings.Contains(err.Error(), tc.msg) {
			t.Errorf("Parse(%q) error = %v, want it to mention %q", tc.in, err, tc.msg)
		}
		if err != nil && tc.msg == "unknown unit" && !strings.Contains(err.Error(), "mG") {
			t.Errorf("Parse(%q) error %q should list the allowed units", tc.in, err)
		}
	}
}

func TestValue(t *testing.T) {
	if v, err := Value(int64(30), Angle, "deg"); err != nil || math.Abs(v-math.Pi/6) > 1e-15 {
		t.Errorf("Value(30, deg) = %v, %v", v, err)
	}
	if v, err := Value("30 deg", Angle, ""); err != nil || math.Abs(v-math.Pi/6) > 1e-15 {
		t.Errorf("Value(\"30 deg\") = %v, %v", v, err)
	}
	if _, err := Value(30.0, Angle, ""); err == nil {
		t.Error("plain number for a key without unit accepted")
	}
	if _, err := Value(true, Angle, "deg"); err == nil {
		t.Error("boolean accepted as angle")
	}
}

func TestRoundTrip(t *testing.T) {
	for _, u := range Table {
		for _, x := range []float64{1, 0.3, 2.5e-7, 123456.789} {
			internal := x * u.Scale
			s := Format(internal, u.Kind, u.Names[0])
			back, err := Parse(s, u.Kind)
			if err != nil {
				t.Fatalf("Parse(Format) %q: %v", s, err)
			}
			if math.Abs(back-internal) > 1e-14*math.Abs(internal) {
				t.Errorf("%s: %v -> %q -> %v", u.Names[0], internal, s, back)
			}
		}
	}
}

// A bare number in the plain unit, as configs accept; a unit still wins,
// and without a plain unit a bare number is refused.
func TestParsePlain(t *testing.T) {
	for _, c := range []struct {
		s     string
		k     Kind
		plain string
		want  float64
	}{
		{"1e11", Temperature, "K", 1e11},
		{"300 mK", Temperature, "K", 0.3},
		{" 0.01 ", SolidAngle, "sr", 0.01},
		{"5", Rate, "s^-1", 5},
		{"2 min^-1", Rate, "s^-1", 2.0 / 60},
	} {
		got, err := ParsePlain(c.s, c.k, c.plain)
		if err != nil || math.Abs(got-c.want) > 1e-12*math.Abs(c.want) {
			t.Errorf("ParsePlain(%q) = %g, %v; want %g", c.s, got, err, c.want)
		}
	}
	if _, err := ParsePlain("5", Field, ""); err == nil {
		t.Error("a bare field accepted without a plain unit")
	}
}
