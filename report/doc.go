// Package report draws forereach's figures and reports: the cell layout
// (plan and side elevation of the zones with their margins), and the
// figures of the review, margin and evaluation reports built on it. It
// writes SVG (gonum.org/v1/plot, vg/vgsvg) to an io.Writer and does no other
// I/O. Every report carries safety.Notice: forereach is advisory only.
package report
