// Package figures draws the figures of maserpol with gonum/plot: stacked
// panels that share their horizontal axis, sized for a journal column
// (3.5 in wide) with fonts that stay readable at that size, axis labels
// with units, and legends.
//
// The package knows nothing about run directories or physics; callers
// pass curves in display units. Lines differ in colour and in dash
// pattern, so figures survive grey-scale printing.
package figures
