package figures

import (
	"fmt"
	"image"
	"image/png"
	"os"
)

// EmptyPanels reads a PNG written by s.Save and returns the indices of
// the panels whose data area holds no ink: no pixel of a curve, band or
// marker (coloured, or darker than the grey of grid and zero lines). It
// is the check that a figure shows something, for tests and pipelines.
func EmptyPanels(pngPath string, s *Stack) ([]int, error) {
	f, err := os.Open(pngPath)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", pngPath, err)
	}
	if len(s.DataAreas) == 0 || s.Size.Y <= 0 {
		return nil, fmt.Errorf("%s: the figure has not been saved", pngPath)
	}
	px := func(l float64) int { return int(l * DPI / 72) }
	h := px(float64(s.Size.Y))
	var empty []int
	for i, a := range s.DataAreas {
		// Inside the axes, off the frame by a margin of 3 px.
		r := image.Rect(px(float64(a.Min.X))+3, h-px(float64(a.Max.Y))+3, px(float64(a.Max.X))-3, h-px(float64(a.Min.Y))-3)
		if inkPixels(img, r.Intersect(img.Bounds())) < minInk {
			empty = append(empty, i)
		}
	}
	return empty, nil
}

// minInk is the fewest ink pixels of a non-empty panel: a single marker
// at 300 dpi covers more than 100.
const minInk = 50

// inkPixels counts coloured pixels and pixels darker than the grey of the
// zero line (160) in r; white, grid grey (225) and zero-line grey are not
// ink.
func inkPixels(img image.Image, r image.Rectangle) int {
	n := 0
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			cr, cg, cb, _ := img.At(x, y).RGBA()
			r8, g8, b8 := int(cr>>8), int(cg>>8), int(cb>>8)
			hi, lo := max(r8, g8, b8), min(r8, g8, b8)
			if hi-lo > 40 || hi < 140 {
				n++
			}
		}
	}
	return n
}
