package main

import (
	"fmt"
	"io"

	"gonum.org/v1/plot/vg"

	"forereach/report"
)

// zonesDraw is the draw subcommand of zones (see cmd_zones.go).
func zonesDraw(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet(zonesCmd, stderr)
	out := fs.String("o", "", "output SVG file (\"-\" for standard output)")
	grid := fs.Float64("grid", 0, "grid spacing in metres (0: chosen from the cell size)")
	width := fs.Float64("width", 30, "figure width in centimetres")
	views := fs.String("views", "plan,elevation", "views to draw, left to right: plan, elevation")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usage := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach zones draw: "+format+"\n\n", a...)
		printCommandHelp(stderr, zonesCmd)
		return 2
	}
	if *out == "" {
		return usage("-o FILE is required (\"-\" for standard output)")
	}
	if !(*grid >= 0) || *grid > 100 {
		return usage("-grid %g: want a spacing in metres, > 0 (or 0 for automatic)", *grid)
	}
	if !(*width >= 5) || *width > 500 {
		return usage("-width %g: want a width between 5 and 500 cm", *width)
	}
	names, err := parseViewNames(*views)
	if err != nil {
		return usage("%v", err)
	}
	opt := report.LayoutOptions{Width: vg.Length(*width) * vg.Centimeter, Grid: *grid}
	for _, n := range names {
		if n == "elevation" {
			opt.Views = append(opt.Views, report.Elevation)
		} else {
			opt.Views = append(opt.Views, report.Plan)
		}
	}
	cfg, code := loadCell("draw", pos, stderr)
	if cfg == nil {
		return code
	}
	if *out == "-" {
		if err := report.Layout(stdout, cfg, opt); err != nil {
			fmt.Fprintf(stderr, "forereach zones draw: %v\n", err)
			return 1
		}
		return 0
	}
	if err := writeFile(*out, func(w io.Writer) error { return report.Layout(w, cfg, opt) }); err != nil {
		fmt.Fprintf(stderr, "forereach zones draw: %v\n", err)
		return 1
	}
	fmt.Fprintf(stdout, "wrote %s (%d zones of cell %s)\n", *out, len(cfg.Zones), cfg.Cell)
	return 0
}
