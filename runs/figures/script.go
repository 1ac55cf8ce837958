package figures

import (
	"math"
	"strings"

	xfont "golang.org/x/image/font"
	"golang.org/x/image/font/sfnt"
	"golang.org/x/image/math/fixed"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgeps"
	"gonum.org/v1/plot/vg/vgpdf"
)

// Scripts is the text handler of every figure: plain text in which
// "_x" and "_{...}" are subscripts and "^x" and "^{...}" superscripts,
// drawn smaller and shifted off the baseline ("m_l", "P_V", "10^{-3}",
// "s^{-1}"); "\_" and "\^" are the characters themselves. It exists
// because gonum/plot's LaTeX handler (text.Latex, go-latex v0.2) parses
// but cannot draw sub- and superscripts; the glyphs themselves come from
// gonum/plot's font cache as with text.Plain, so every output format
// (PNG, SVG, PDF) renders them with the same embedded fonts.
type Scripts struct {
	Fonts *font.Cache
}

var _ text.Handler = Scripts{}

// Script sizes and shifts relative to the font size (common practice,
// close to TeX's defaults: script size 70 %, superscript raised by about
// 0.4 em, subscript lowered by about 0.2 em).
const (
	scriptScale = 0.7
	supRise     = 0.38
	subDrop     = 0.18
)

// scriptRun is a piece of a line at one baseline shift.
type scriptRun struct {
	text  string
	shift int // +1 superscript, -1 subscript, 0 baseline
}

// parseScripts splits a line into runs. An unmatched "{" runs to the end
// of the line; a lone "_" or "^" at the end is drawn as it is.
func parseScripts(s string) []scriptRun {
	var runs []scriptRun
	var cur strings.Builder
	flush := func(shift int) {
		if cur.Len() > 0 {
			runs = append(runs, scriptRun{cur.String(), shift})
			cur.Reset()
		}
	}
	rs := []rune(s)
	for i := 0; i < len(rs); i++ {
		r := rs[i]
		switch {
		case r == '\\' && i+1 < len(rs) && (rs[i+1] == '_' || rs[i+1] == '^' || rs[i+1] == '\\'):
			cur.WriteRune(rs[i+1])
			i++
		case (r == '_' || r == '^') && i+1 < len(rs):
			flush(0)
			shift := 1
			if r == '_' {
				shift = -1
			}
			if rs[i+1] == '{' {
				j := i + 2
				for j < len(rs) && rs[j] != '}' {
					j++
				}
				cur.WriteString(string(rs[i+2 : j]))
				i = j
			} else {
				cur.WriteRune(rs[i+1])
				i++
			}
			flush(shift)
		default:
			cur.WriteRune(r)
		}
	}
	flush(0)
	return runs
}

// outlined reports whether text is drawn as glyph outlines on canvas c:
// on PDF and EPS. gonum/plot's PDF canvas encodes text in code page 1252,
// which has no Greek letters, and its EPS canvas names fonts without
// embedding them; outlines need no font at all and look the same in every
// viewer and at the printer (common practice for journal figures).
func outlined(c vg.Canvas) bool {
	for {
		switch t := c.(type) {
		case *vgpdf.Canvas, *vgeps.Canvas:
			return true
		case *draw.Canvas:
			c = t.Canvas
		case draw.Canvas:
			c = t.Canvas
		default:
			return false
		}
	}
}

// fillOutlines fills the glyph outlines of s with its baseline origin at
// pt, advancing and kerning as font.Face.Width does.
func fillOutlines(c vg.Canvas, f *font.Face, pt vg.Point, s string) {
	var buf sfnt.Buffer
	ppem := fixed.Int26_6(f.Face.UnitsPerEm())
	scale := f.Font.Size / vg.Length(ppem)
	x := 0
	var prev sfnt.GlyphIndex
	for i, r := range []rune(s) {
		idx, err := f.Face.GlyphIndex(&buf, r)
		if err != nil {
			continue
		}
		if i > 0 {
			if k, err := f.Face.Kern(&buf, prev, idx, ppem, xfont.HintingNone); err == nil {
				x += int(k)
			}
		}
		segs, err := f.Face.LoadGlyph(&buf, idx, ppem, nil)
		if err == nil && len(segs) > 0 {
			at := func(p fixed.Point26_6) vg.Point {
				return vg.Point{X: pt.X + vg.Length(x+int(p.X))*scale, Y: pt.Y - vg.Length(p.Y)*scale}
			}
			var path vg.Path
			for _, sg := range segs {
				switch sg.Op {
				case sfnt.SegmentOpMoveTo:
					if len(path) > 0 {
						path.Close()
					}
					path.Move(at(sg.Args[0]))
				case sfnt.SegmentOpLineTo:
					path.Line(at(sg.Args[0]))
				case sfnt.SegmentOpQuadTo:
					path.QuadTo(at(sg.Args[0]), at(sg.Args[1]))
				case sfnt.SegmentOpCubeTo:
					path.CubeTo(at(sg.Args[0]), at(sg.Args[1]), at(sg.Args[2]))
				}
			}
			path.Close()
			c.Fill(path)
		}
		if adv, err := f.Face.GlyphAdvance(&buf, idx, ppem, xfont.HintingNone); err == nil {
			x += int(adv)
		}
		prev = idx
	}
}

// Escape protects "_", "^" and "\" in text that is not markup (file names,
// species names), so that Scripts draws it unchanged.
func Escape(s string) string {
	return strings.NewReplacer(`\`, `\\`, "_", `\_`, "^", `\^`).Replace(s)
}

// Cache returns the font cache.
func (h Scripts) Cache() *font.Cache { return h.Fonts }

// Extents returns the extents of a font.
func (h Scripts) Extents(fnt font.Font) font.Extents {
	f := h.Fonts.Lookup(fnt, fnt.Size)
	return f.Extents()
}

// Lines splits text into lines.
func (h Scripts) Lines(txt string) []string {
	return strings.Split(strings.TrimRight(txt, "\n"), "\n")
}

func (h Scripts) face(fnt font.Font, shift int) *font.Face {
	size := fnt.Size
	if shift != 0 {
		size *= scriptScale
	}
	f := h.Fonts.Lookup(fnt, size)
	return &f
}

func baseline(fnt font.Font, shift int) vg.Length {
	switch shift {
	case 1:
		return fnt.Size * supRise
	case -1:
		return -fnt.Size * subDrop
	}
	return 0
}

// Box returns the width, height above and depth below the baseline of a
// line, scripts included.
func (h Scripts) Box(txt string, fnt font.Font) (width, height, depth vg.Length) {
	ext := h.Extents(fnt)
	height, depth = ext.Ascent, ext.Descent
	for _, r := range parseScripts(txt) {
		f := h.face(fnt, r.shift)
		width += f.Width(r.text)
		e := f.Extents()
		b := baseline(fnt, r.shift)
		height = max(height, b+e.Ascent)
		depth = max(depth, e.Descent-b)
	}
	return width, height, depth
}

// Draw draws text as text.Plain does (rotation, alignment, lines), each
// run at its size and baseline.
func (h Scripts) Draw(c vg.Canvas, txt string, sty text.Style, pt vg.Point) {
	txt = strings.TrimRight(txt, "\n")
	if txt == "" {
		return
	}
	c.SetColor(sty.Color)
	if sty.Rotation != 0 {
		c.Push()
		c.Rotate(sty.Rotation)
	}
	sin64, cos64 := math.Sincos(sty.Rotation)
	cos, sin := vg.Length(cos64), vg.Length(sin64)
	pt.X, pt.Y = pt.Y*sin+pt.X*cos, pt.Y*cos-pt.X*sin
	lines := h.Lines(txt)
	ht := sty.Height(txt)
	pt.Y += ht*vg.Length(sty.YAlign) - h.Extents(sty.Font).Ascent
	for i, line := range lines {
		w, _, _ := h.Box(line, sty.Font)
		x := pt.X + vg.Length(sty.XAlign)*w
		y := pt.Y + vg.Length(len(lines)-i)*sty.Font.Size
		for _, r := range parseScripts(line) {
			f := h.face(sty.Font, r.shift)
			at := vg.Point{X: x, Y: y + baseline(sty.Font, r.shift)}
			if outlined(c) {
				fillOutlines(c, f, at, r.text)
			} else {
				c.FillString(*f, at, r.text)
			}
			x += f.Width(r.text)
		}
	}
	if sty.Rotation != 0 {
		c.Pop()
	}
}
