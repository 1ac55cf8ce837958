// Package tomlpos finds the line on which each key of a TOML document is
// written, so that validation errors can name the line of the offending key.
//
// The TOML decoder (BurntSushi/toml) reports lines for syntax errors but not
// for keys of a document that parsed. This package does not parse values; it
// only follows table headers and "key =" assignments of a document that the
// decoder has already accepted, which is enough to locate keys.
//
// Paths are dotted; entries of arrays of tables carry their index:
// "field.theta", "spin[0].I", "coupling[2].kind". Keys of inline tables are
// located at the line of their assignment: "field.theta.from".
package tomlpos

import (
	"strconv"
	"strings"
)

// Positions maps key paths to 1-based line numbers.
type Positions struct {
	lines map[string]int
}

// Line returns the 1-based line of the key at path, or of its nearest
// located parent table, or 0 when nothing on the path is known.
func (p *Positions) Line(path string) int {
	if p == nil {
		return 0
	}
	for path != "" {
		if n, ok := p.lines[path]; ok {
			return n
		}
		i := strings.LastIndexAny(path, ".[")
		if i < 0 {
			break
		}
		path = path[:i]
	}
	return 0
}

// Index scans a TOML document and records the line of every key and table.
func Index(data []byte) *Positions {
	p := &Positions{lines: map[string]int{}}
	counts := map[string]int{} // array-of-tables path -> entries so far
	var table string
	depth := 0     // open brackets/braces of a multi-line value
	inStr := false // inside a multi-line string
	for i, raw := range strings.Split(string(data), "\n") {
		ln := i + 1
		line := strings.TrimSpace(raw)
		if inStr {
			if strings.Count(line, `"""`)%2 == 1 || strings.Count(line, `'''`)%2 == 1 {
				inStr = false
			}
			continue
		}
		if depth > 0 {
			if depth += nesting(line); depth < 0 {
				depth = 0
			}
			continue
		}
		line = stripComment(line)
		if line == "" {
			continue
		}
		if strings.HasPrefix(line, "[[") {
			name := keyPath(strings.TrimSuffix(strings.TrimPrefix(line, "[["), "]]"))
			n := counts[name]
			counts[name] = n + 1
			table = name + "[" + strconv.Itoa(n) + "]"
			p.set(name, ln)
			p.set(table, ln)
			continue
		}
		if strings.HasPrefix(line, "[") {
			table = resolve(keyPath(strings.TrimSuffix(strings.TrimPrefix(line, "["), "]")), counts)
			p.set(table, ln)
			continue
		}
		eq := strings.IndexByte(line, '=')
		if eq < 0 {
			continue
		}
		key := join(table, keyPath(line[:eq]))
		p.set(key, ln)
		val := strings.TrimSpace(line[eq+1:])
		if strings.HasPrefix(val, `"""`) || strings.HasPrefix(val, `'''`) {
			if strings.Count(val, val[:3]) == 1 {
				inStr = true
			}
			continue
		}
		if strings.HasPrefix(val, "{") {
			p.inline(key, val, ln)
		}
		if depth = nesting(val); depth < 0 {
			depth = 0
		}
	}
	return p
}

// set records the first line on which a path appears.
func (p *Positions) set(path string, ln int) {
	if _, ok := p.lines[path]; !ok {
		p.lines[path] = ln
	}
}

// inline records the keys of a one-line inline table.
func (p *Positions) inline(prefix, val string, ln int) {
	body := strings.TrimSuffix(strings.TrimPrefix(val, "{"), "}")
	for _, part := range splitTop(body) {
		if eq := strings.IndexByte(part, '='); eq > 0 {
			p.set(join(prefix, keyPath(part[:eq])), ln)
		}
	}
}

// resolve rewrites a table header below an array of tables ([spin.extra]
// after [[spin]]) to point into the latest entry.
func resolve(path string, counts map[string]int) string {
	parts := strings.Split(path, ".")
	out := ""
	for _, part := range parts {
		out = join(out, part)
		if n, ok := counts[out]; ok {
			out += "[" + strconv.Itoa(n-1) + "]"
		}
	}
	return out
}

func join(a, b string) string {
	if a == "" {
		return b
	}
	if b == "" {
		return a
	}
	return a + "." + b
}

// keyPath normalizes a (possibly dotted or quoted) key.
func keyPath(s string) string {
	var parts []string
	for _, part := range strings.Split(strings.TrimSpace(s), ".") {
		part = strings.TrimSpace(part)
		part = strings.Trim(part, `"'`)
		parts = append(parts, part)
	}
	return strings.Join(parts, ".")
}

// stripComment removes a trailing comment outside strings.
func stripComment(s string) string {
	var q byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case q != 0:
			if c == '\\' && q == '"' {
				i++
			} else if c == q {
				q = 0
			}
		case c == '"' || c == '\'':
			q = c
		case c == '#':
			return strings.TrimSpace(s[:i])
		}
	}
	return s
}

// nesting counts unclosed brackets and braces outside strings.
func nesting(s string) int {
	s = stripComment(s)
	d := 0
	var q byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case q != 0:
			if c == '\\' && q == '"' {
				i++
			} else if c == q {
				q = 0
			}
		case c == '"' || c == '\'':
			q = c
		case c == '[' || c == '{':
			d++
		case c == ']' || c == '}':
			d--
		}
	}
	return d
}

// splitTop splits an inline-table body at commas outside nested values.
func splitTop(s string) []string {
	var out []string
	d, start := 0, 0
	var q byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case q != 0:
			if c == '\\' && q == '"' {
				i++
			} else if c == q {
				q = 0
			}
		case c == '"' || c == '\'':
			q = c
		case c == '[' || c == '{':
			d++
		case c == ']' || c == '}':
			d--
		case c == ',' && d == 0:
			out = append(out, s[start:i])
			start = i + 1
		}
	}
	return append(out, s[start:])
}

// Unclosed returns the line on which an array or inline table still open
// at line `at` was opened, and the key assigned there (0 and "" when
// nothing is open). The TOML decoder reports an unclosed value where it
// notices it, at the next key or table; this is where the user must look.
func Unclosed(data []byte, at int) (line int, key string) {
	var table string
	counts := map[string]int{}
	depth := 0
	inStr := false
	for i, raw := range strings.Split(string(data), "\n") {
		ln := i + 1
		if ln >= at {
			break
		}
		s := strings.TrimSpace(raw)
		if inStr {
			if strings.Count(s, `"""`)%2 == 1 || strings.Count(s, `'''`)%2 == 1 {
				inStr = false
			}
			continue
		}
		if depth > 0 {
			if depth += nesting(s); depth <= 0 {
				depth, line, key = 0, 0, ""
			}
			continue
		}
		s = stripComment(s)
		switch {
		case s == "":
			continue
		case strings.HasPrefix(s, "[["):
			name := keyPath(strings.TrimSuffix(strings.TrimPrefix(s, "[["), "]]"))
			table = name + "[" + strconv.Itoa(counts[name]) + "]"
			counts[name]++
			continue
		case strings.HasPrefix(s, "["):
			table = resolve(keyPath(strings.TrimSuffix(strings.TrimPrefix(s, "["), "]")), counts)
			continue
		}
		eq := strings.IndexByte(s, '=')
		if eq < 0 {
			continue
		}
		val := strings.TrimSpace(s[eq+1:])
		if strings.HasPrefix(val, `"""`) || strings.HasPrefix(val, `'''`) {
			inStr = strings.Count(val, val[:3]) == 1
			continue
		}
		if d := nesting(val); d > 0 {
			depth, line, key = d, ln, join(table, keyPath(s[:eq]))
		}
	}
	if depth <= 0 {
		return 0, ""
	}
	return line, key
}
