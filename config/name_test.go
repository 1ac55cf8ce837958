package config

import (
	"regexp"
	"strings"
	"testing"
)

// The study-name rules as regular expressions (the form they had before
// validName and cleanName were written out): both must agree with them.
var (
	nameRE      = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9._-]{0,99}$`)
	notNameChar = regexp.MustCompile(`[^A-Za-z0-9._-]+`)
)

func cleanNameRE(s string) string {
	s = strings.Trim(notNameChar.ReplaceAllString(s, "-"), "-._")
	if len(s) > 100 {
		s = s[:100]
	}
	if !nameRE.MatchString(s) {
		return "example"
	}
	return s
}

func checkName(t *testing.T, s string) {
	t.Helper()
	if got, want := validName(s), nameRE.MatchString(s); got != want {
		t.Errorf("validName(%q) = %v, regular expression %v", s, got, want)
	}
	if got, want := cleanName(s), cleanNameRE(s); got != want {
		t.Errorf("cleanName(%q) = %q, regular expression %q", s, got, want)
	}
}

func TestNameRules(t *testing.T) {
	for _, s := range []string{"", "a", "A.b_c-9", "_a", ".a", "-a", "a b", "a\nb", "a/b", "é", "aé", "a\xffb",
		"speed-j10", "m0001", "a..", "a$", "a\x00", "  spaced  name  ", "x" + strings.Repeat("y", 99), "x" + strings.Repeat("y", 100),
		strings.Repeat("é", 60), "--a--", "a+b", "Ωmega"} {
		checkName(t, s)
	}
}

func FuzzNameRules(f *testing.F) {
	for _, s := range []string{"a", "a b", "é", "x.y_z-1", "-"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) { checkName(t, s) })
}
