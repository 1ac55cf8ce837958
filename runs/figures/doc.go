// Package figures draws the figures of maserpol with gonum/plot: stacked
// panels that share their horizontal axis, sized for a journal column
// (3.5 in wide) with fonts that stay readable at that size, axis labels
// with units, and legends in rows of their own above each panel (never on
// the data), capped at six entries plus "+N more". Linear axes are ticked
// at fixed steps of 1, 2 or 5 times a power of ten; a panel of round-off
// (e.g. V at theta = 90 deg) is drawn as zero with a note; a figure with
// nothing to draw is reported as ErrNoData, and drawing never panics.
//
// SkyMap is the one figure that is not a stack: feature positions on the
// sky with east to the left and equal scales, polarization vectors and
// field directions.
// Text is drawn by the Scripts handler: "m_l", "P_V", "10^{-3}" come out
// with real sub- and superscripts, and in PDF and EPS every glyph is drawn
// as its outline, so the files need no fonts (gonum/plot's PDF canvas
// cannot encode Greek letters, its EPS canvas does not embed fonts). EPS
// headers are repaired to the EPSF 3.0 form. Panels may carry shaded
// bands (model ranges), error bars (data), text-only legend entries, and
// a y axis that turns logarithmic when its values span more than two
// decades. A title is drawn only when set: journal figures carry none.
// EmptyPanels checks a written PNG for panels without ink.
//
// The package knows nothing about run directories or physics; callers
// pass curves in display units. Lines differ in colour and in dash
// pattern, so figures survive grey-scale printing.
package figures
