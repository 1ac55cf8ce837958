package config

import (
	"fmt"
	"math"

	"maserpol/config/units"
	"maserpol/levels"
)

// Channel-grid checks made before any model runs. The grid is built as
// package transfer builds it: with line.span = 0 it reaches gridDopplers
// Doppler widths beyond the outermost line components, otherwise it is
// line.span wide, centred on them.
const (
	// gridDopplers is transfer's automatic margin (transfer.spanDopplers).
	gridDopplers = 4.0
	// MinChannelsPerDoppler is the least number of channels per Doppler
	// 1/e half-width a grid must give before gain narrowing (common
	// practice: a cubic-spline kernel needs about three samples per width
	// to keep the line shape; runs marks results whose narrowed line has
	// fewer as invalid).
	MinChannelsPerDoppler = 3.0
	// MinSpanDopplers is the least line.span, in Doppler widths: a narrower
	// grid cannot hold even one line (its emission is cut on both sides).
	MinSpanDopplers = 2.0
	// maxGridSolves bounds the level solves of the up-front check; studies
	// with more distinct field strengths are checked at run time only.
	maxGridSolves = 256
)

// lineSpread is the velocity range (m/s) of the line components of the
// species at one field.
type lineSpread struct {
	vmin, vmax float64
	ok         bool
}

// spreadAt returns the velocity range of the components at field B (G),
// from a cache.
func spreadAt(sp *levels.Species, field float64, cache map[float64]lineSpread) lineSpread {
	if s, ok := cache[field]; ok {
		return s
	}
	if len(cache) >= maxGridSolves {
		return lineSpread{}
	}
	var s lineSpread
	if tr, err := levels.NewTransition(sp, field); err == nil {
		maxS := 0.0
		for _, l := range tr.Lines {
			maxS = math.Max(maxS, l.Strength)
		}
		s.vmin, s.vmax = math.Inf(1), math.Inf(-1)
		for _, l := range tr.Lines {
			if !(l.Strength > 1e-12*maxS) {
				continue
			}
			v := -levels.SpeedOfLight * l.Offset / sp.Frequency
			s.vmin, s.vmax = math.Min(s.vmin, v), math.Max(s.vmax, v)
		}
		s.ok = s.vmin <= s.vmax
	}
	cache[field] = s
	return s
}

// checkGrid refuses a model whose channel grid cannot hold its line: a
// span narrower than MinSpanDopplers Doppler widths, or fewer than
// MinChannelsPerDoppler channels per Doppler width.
func (ps *parser) checkGrid(m *Model, pd *parsed, cache map[float64]lineSpread) *Error {
	par := &m.Params
	vd := par.Doppler
	kms := func(v float64) string { return fmt.Sprintf("%.4g km/s", units.In(v, units.Velocity, "km/s")) }
	widthKey := "line.doppler"
	if pd.given["line.temperature"] {
		widthKey = "line.temperature"
	}
	if par.Span > 0 && par.Span < MinSpanDopplers*vd {
		return ps.err("line.span", fmt.Sprintf("0 (automatic) or at least %g Doppler widths (%s here)", MinSpanDopplers, kms(MinSpanDopplers*vd)),
			"model %s: a span of %s cannot hold a line of Doppler width %s", m.Name, kms(par.Span), kms(vd))
	}
	s := spreadAt(pd.species, par.Field, cache)
	if !s.ok {
		return nil
	}
	span := par.Span
	if span == 0 {
		span = s.vmax - s.vmin + 2*gridDopplers*vd
	}
	perDoppler := vd * float64(par.Channels-1) / span
	if perDoppler >= MinChannelsPerDoppler {
		return nil
	}
	need := int(math.Ceil(MinChannelsPerDoppler*span/vd)) + 1
	what := fmt.Sprintf("model %s: %d channels over %s give %.2g channels per Doppler width (%s); the line is not resolved",
		m.Name, par.Channels, kms(span), perDoppler, kms(vd))
	if need <= 1<<16 {
		return ps.err("line.channels", fmt.Sprintf("at least %d channels for this span (%g per Doppler width)", need, MinChannelsPerDoppler), "%s", what)
	}
	if par.Span > 0 {
		return ps.err("line.span", fmt.Sprintf("a span of at most %s with 65536 channels", kms(65535*vd/MinChannelsPerDoppler)), "%s", what)
	}
	return ps.err(widthKey, fmt.Sprintf("a Doppler width of at least %s for the %s spread of the line components, or a narrower line.span", kms(MinChannelsPerDoppler*span/65535), kms(s.vmax-s.vmin)), "%s", what)
}
