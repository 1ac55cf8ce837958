package tomlpos

import "strconv"

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
	if e.Allowed != "" {
		s += " (allowed: " + e.Allowed + ")"
	}
	if e.Suggest != "" {
		s += "; did you mean " + e.Suggest + "?"
	}
	return s
}
