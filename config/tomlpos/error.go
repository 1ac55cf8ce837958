package tomlpos

import (
	"strconv"
	"strings"
)

// Error is an input error that names where it is: the file, the line and
// key of the offending value, what is allowed there and, for a misspelt
// name, the nearest known one. Species files (package levels/species) and
// model configs (package config) report through it, so the command treats
// both alike (exit status 2).
type Error struct {
	File    string
	Line    int // 1-based; 0 when unknown
	Key     string
	Msg     string
	Allowed string // allowed values or range, if any
	Suggest string // "did you mean" suggestion, if any
}

func (e *Error) Error() string {
	s := e.File
	if e.Line > 0 {
		s += ":" + strconv.Itoa(e.Line)
	}
	if e.Key != "" {
		s += ": key " + e.Key
	}
	s += ": " + e.Msg
	// A message that already states what is allowed (from a helper such
	// as config/units) does not get a second clause.
	if e.Allowed != "" && !strings.Contains(e.Msg, "(allowed: ") {
		s += " (allowed: " + e.Allowed + ")"
	}
	if e.Suggest != "" {
		s += "; did you mean " + e.Suggest + "?"
	}
	return s
}

// Locate moves a TOML syntax error to where the user must look: an array
// or inline table left open is reported at the line that opened it (the
// decoder notices it only at the next key or table), and a malformed
// table header names no key (the decoder's last key is the previous
// table's).
func Locate(e *Error, data []byte) {
	if e.Line <= 0 {
		return
	}
	if ln, key := Unclosed(data, e.Line); ln > 0 {
		e.Line, e.Key = ln, key
		e.Msg += " (the array or inline table opened on this line is not closed)"
		return
	}
	lines := strings.Split(string(data), "\n")
	if e.Line <= len(lines) && strings.HasPrefix(strings.TrimSpace(lines[e.Line-1]), "[") {
		e.Key = ""
		e.Msg = strings.Replace(e.Msg, "malformed TOML:", "malformed TOML (table header):", 1)
	}
}
