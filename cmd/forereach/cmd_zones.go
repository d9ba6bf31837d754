package main

import (
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"forereach/zones"
)

var zonesCmd = &command{
	Name:    "zones",
	Summary: "check a cell configuration, or draw its zones (plan and side elevation)",
	Usage: `Usage:
  forereach zones check CELL.yaml
  forereach zones draw CELL.yaml -o LAYOUT.svg [-grid M] [-width CM] [-views plan,elevation]

check loads the cell configuration, reports every problem in it (one line
each, file:line:column: field: what is wrong) and, when there is none,
prints one row per zone: shape, bounds in metres (attached zones at their
frame's configured pose), volume in cubic metres, margin in metres and the
robot frame an attached zone moves with.

draw writes an SVG of the zones: the plan (x-y) and the side elevation
(x-z) side by side on a metric grid at one scale, each zone's shape tinted
and named, its margin as a paler region with a dashed outline, robot-attached
zones at their frame's configured pose, and the stations.

Flags of draw (they may come before or after CELL.yaml):
  -o FILE        output SVG file ("-" for standard output); required
  -grid M        grid spacing in metres (default: chosen from the cell size)
  -width CM      figure width in centimetres (default 30)
  -views LIST    views to draw, left to right: plan, elevation (default both)

Exit status: 0 valid (or drawn), 1 invalid configuration or failure,
2 usage error.
`,
}

func init() {
	zonesCmd.Run = runZones // set here: runZones refers to zonesCmd
	register(zonesCmd)
}

func runZones(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprintln(stderr, "forereach zones: want a subcommand: check or draw")
		fmt.Fprintln(stderr)
		printCommandHelp(stderr, zonesCmd)
		return 2
	}
	switch args[0] {
	case "check":
		return zonesCheck(args[1:], stdout, stderr)
	case "draw":
		return zonesDraw(args[1:], stdout, stderr)
	case "-h", "-help", "--help", "help":
		printCommandHelp(stdout, zonesCmd)
		return 0
	default:
		fmt.Fprintf(stderr, "forereach zones: unknown subcommand %q (want check or draw)\n\n", args[0])
		printCommandHelp(stderr, zonesCmd)
		return 2
	}
}

// loadCell loads the one CELL.yaml of a zones subcommand and prints its
// errors. It returns the exit code to use when cfg is nil.
func loadCell(sub string, pos []string, stderr io.Writer) (*zones.Config, int) {
	if len(pos) != 1 {
		fmt.Fprintf(stderr, "forereach zones %s: want one cell configuration file, got %d arguments\n", sub, len(pos))
		fmt.Fprintln(stderr)
		printCommandHelp(stderr, zonesCmd)
		return nil, 2
	}
	cfg, err := zones.Load(pos[0])
	if err != nil {
		var ces *zones.ConfigErrors
		if errors.As(err, &ces) {
			fmt.Fprintln(stderr, err)
			fmt.Fprintf(stderr, "forereach zones %s: %s: %d %s\n", sub, pos[0], len(*ces), plural(len(*ces), "problem", "problems"))
		} else {
			fmt.Fprintf(stderr, "forereach zones %s: %v\n", sub, err)
		}
		return nil, 1
	}
	return cfg, 0
}

func zonesCheck(args []string, stdout, stderr io.Writer) int {
	fs := newFlagSet(zonesCmd, stderr)
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	cfg, code := loadCell("check", pos, stderr)
	if cfg == nil {
		return code
	}
	zs, err := cfg.BuildZones()
	if err != nil {
		fmt.Fprintf(stderr, "forereach zones check: %s: %v\n", pos[0], err)
		return 1
	}
	if err := writeZoneTable(stdout, cfg, zs); err != nil {
		fmt.Fprintf(stderr, "forereach zones check: %v\n", err)
		return 1
	}
	return 0
}

// writeZoneTable prints the summary line and one row per zone.
func writeZoneTable(w io.Writer, cfg *zones.Config, zs *zones.ZoneSet) error {
	units := cfg.Units
	if units == "" {
		units = "m"
	}
	digest := cfg.Digest
	if len(digest) > 12 {
		digest = digest[:12]
	}
	fmt.Fprintf(w, "cell %s: %s (units %s, sha256 %s): valid, %d %s, %d %s\n",
		cfg.Cell, filepath.ToSlash(cfg.Source), units, digest,
		zs.Len(), plural(zs.Len(), "zone", "zones"), len(cfg.Stations), plural(len(cfg.Stations), "station", "stations"))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "zone\tshape\tmin x, y, z (m)\tmax x, y, z (m)\tvolume (m³)\tmargin (m)\tframe")
	for i := 0; i < zs.Len(); i++ {
		z := zs.Zone(i)
		b := z.Bounds()
		frame := "-"
		if z.Frame != "" {
			frame = z.Frame + " (at its configured pose)"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s %s %s\t%s %s %s\t%11s\t%10s\t%s\n",
			z.Name, z.Shape.Kind(),
			f3(b.Min.X), f3(b.Min.Y), f3(b.Min.Z), f3(b.Max.X), f3(b.Max.Y), f3(b.Max.Z),
			strconv.FormatFloat(z.Shape.Volume(), 'f', 4, 64), f3(z.Margin), frame)
	}
	return tw.Flush()
}

// f3 formats metres (or cubic metres) to the millimetre, right-aligned in
// 7 characters.
func f3(v float64) string {
	s := strconv.FormatFloat(v, 'f', 3, 64)
	if s == "-0.000" {
		s = "0.000"
	}
	return fmt.Sprintf("%7s", s)
}

func plural(n int, one, many string) string {
	if n == 1 {
		return one
	}
	return many
}

// parseViews reads a -views list.
func parseViewNames(s string) ([]string, error) {
	var out []string
	for _, v := range strings.Split(s, ",") {
		v = strings.TrimSpace(v)
		switch v {
		case "plan", "elevation":
			out = append(out, v)
		case "":
		default:
			return nil, fmt.Errorf("-views: unknown view %q (want plan, elevation)", v)
		}
	}
	if len(out) == 0 {
		return nil, errors.New("-views: no view given (want plan, elevation)")
	}
	return out, nil
}
