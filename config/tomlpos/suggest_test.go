package tomlpos

import "testing"

func TestClosest(t *testing.T) {
	keys := []string{"strength", "theta", "chi"}
	for _, c := range []struct{ in, want string }{
		{"thta", "theta"}, {"Theta", "theta"}, {"strenght", "strength"}, {"chi", "chi"}, {"xyz", ""}, {"phi", "chi"}, {"str", "strength"},
	} {
		if got := Closest(c.in, keys); got != c.want {
			t.Errorf("closest(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	for _, c := range []struct {
		a, b string
		d    int
	}{{"kitten", "sitting", 3}, {"feild", "field", 1}, {"ca", "abc", 3}, {"", "abc", 3}} {
		// kitten/sitting: the textbook example; ca/abc: 3 under optimal
		// string alignment (2 under unrestricted Damerau-Levenshtein).
		if d := Distance(c.a, c.b); d != c.d {
			t.Errorf("distance(%q, %q) = %d, want %d", c.a, c.b, d, c.d)
		}
	}
}
