package tomlpos

import "strings"

// Distance is the optimal-string-alignment edit distance between a and b:
// insertions, deletions, substitutions and transpositions of adjacent runes
// each cost 1 (Damerau 1964), so "feild" is one edit from "field".
func Distance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	d := make([][]int, len(ra)+1)
	for i := range d {
		d[i] = make([]int, len(rb)+1)
		d[i][0] = i
	}
	for j := range d[0] {
		d[0][j] = j
	}
	for i := 1; i <= len(ra); i++ {
		for j := 1; j <= len(rb); j++ {
			c := 1
			if ra[i-1] == rb[j-1] {
				c = 0
			}
			d[i][j] = min(d[i-1][j]+1, d[i][j-1]+1, d[i-1][j-1]+c)
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				d[i][j] = min(d[i][j], d[i-2][j-2]+1)
			}
		}
	}
	return d[len(ra)][len(rb)]
}

// Closest returns the candidate nearest to s, or "" when none is close: a
// case-insensitive match, a prefix of at least 3 characters, or an edit
// distance of at most max(1, len/3) (common practice for "did you mean").
func Closest(s string, candidates []string) string {
	best, bestD := "", 1<<30
	for _, c := range candidates {
		if strings.EqualFold(s, c) {
			return c
		}
		d := Distance(strings.ToLower(s), strings.ToLower(c))
		if d < bestD {
			best, bestD = c, d
		}
	}
	limit := max(1, len([]rune(s))/3)
	if bestD <= limit {
		return best
	}
	for _, c := range candidates {
		if len(s) >= 3 && (strings.HasPrefix(c, s) || strings.HasPrefix(s, c) && len(c) >= 3) {
			return c
		}
	}
	return ""
}
