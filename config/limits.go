package config

import (
	"fmt"

	"maserpol/levels"
)

// MaxModelBytes is the largest estimated memory of one model: the level
// structure (levels.Species.Size) plus the transfer state, which holds the
// inversion of every line on every channel three times (the adaptive
// midpoint step keeps start, middle and end). Each worker holds one model,
// so a study needs up to workers times this.
const MaxModelBytes = 2 << 30

// modelBytes estimates the memory of one model with the given number of
// channels: the level structure, and per line and channel three inversions
// plus the line's share of the channel workspaces (about 40 bytes), with
// the grid padded by a few channels on each side.
func modelBytes(sz levels.Size, channels int) float64 {
	return sz.Bytes + 40*float64(sz.Lines)*float64(channels+16)
}

// checkMemory refuses a model whose estimated memory exceeds MaxModelBytes,
// naming line.channels (what the user can lower).
func (ps *parser) checkMemory(m *Model, sz levels.Size) *Error {
	b := modelBytes(sz, m.Params.Channels)
	if b <= MaxModelBytes {
		return nil
	}
	most := int((MaxModelBytes-sz.Bytes)/(40*float64(sz.Lines))) - 16
	return ps.err("line.channels", fmt.Sprintf("at most %d channels for this species (%d line components; %s per model)", max(most, 0), sz.Lines, levels.BytesText(MaxModelBytes)),
		"model %s: %d channels need an estimated %s of memory", m.Name, m.Params.Channels, levels.BytesText(b))
}
