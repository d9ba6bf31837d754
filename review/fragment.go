package review

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"forereach/zones"
)

// WriteZonesYAML writes the zones section of the cell configuration with
// the margins given by zone name (metres; zones not named keep their own),
// in the configuration's own length unit, so that it can replace the
// zones section of the file as it stands. note, when not nil, gives a
// comment for a zone's margin line. The shapes, frames and rules are
// written as loaded.
func WriteZonesYAML(w io.Writer, cfg *zones.Config, margins map[string]float64, note func(zone string) string) error {
	scale := 1.0
	if cfg.Units == "mm" {
		scale = 0.001
	}
	bw := bufio.NewWriter(w)
	ln := func(indent int, format string, a ...any) {
		bw.WriteString(strings.Repeat(" ", indent))
		fmt.Fprintf(bw, format, a...)
		bw.WriteByte('\n')
	}
	length := func(v zones.Length) string { return num(float64(v) / scale) }
	point := func(p zones.Point) string {
		return "[" + length(p[0]) + ", " + length(p[1]) + ", " + length(p[2]) + "]"
	}
	ln(0, "zones:")
	for i := range cfg.Zones {
		z := &cfg.Zones[i]
		ln(2, "- name: %s", strconv.Quote(z.Name))
		m := float64(z.Margin)
		if v, ok := margins[z.Name]; ok {
			m = v
		}
		comment := ""
		if note != nil {
			if c := note(z.Name); c != "" {
				comment = "  # " + strings.ReplaceAll(c, "\n", " ")
			}
		}
		ln(4, "margin: %s%s", num(m/scale), comment)
		if z.Frame != "" {
			ln(4, "frame: %s", strconv.Quote(z.Frame))
		}
		if len(z.Rules) > 0 {
			q := make([]string, len(z.Rules))
			for j, r := range z.Rules {
				q[j] = strconv.Quote(r)
			}
			ln(4, "rules: [%s]", strings.Join(q, ", "))
		}
		switch {
		case z.Box != nil:
			ln(4, "box:")
			ln(6, "min: %s", point(z.Box.Min))
			ln(6, "max: %s", point(z.Box.Max))
		case z.OBox != nil:
			ln(4, "obox:")
			ln(6, "center: %s", point(z.OBox.Center))
			ln(6, "size: %s", point(z.OBox.Size))
			if r := z.OBox.RPY; r != nil {
				ln(6, "rpy: [%s, %s, %s]", num(r[0]), num(r[1]), num(r[2]))
			}
			if q := z.OBox.Quat; q != nil {
				ln(6, "quat: [%s, %s, %s, %s]", num(q[0]), num(q[1]), num(q[2]), num(q[3]))
			}
		case z.Sphere != nil:
			ln(4, "sphere:")
			ln(6, "center: %s", point(z.Sphere.Center))
			ln(6, "radius: %s", length(z.Sphere.Radius))
		case z.Cylinder != nil:
			ln(4, "cylinder:")
			ln(6, "a: %s", point(z.Cylinder.A))
			ln(6, "b: %s", point(z.Cylinder.B))
			ln(6, "radius: %s", length(z.Cylinder.Radius))
		case z.Capsule != nil:
			ln(4, "capsule:")
			ln(6, "a: %s", point(z.Capsule.A))
			ln(6, "b: %s", point(z.Capsule.B))
			ln(6, "radius: %s", length(z.Capsule.Radius))
		case z.Prism != nil:
			ln(4, "prism:")
			ln(6, "footprint:")
			for _, p := range z.Prism.Footprint {
				ln(8, "- [%s, %s]", length(p[0]), length(p[1]))
			}
			ln(6, "zmin: %s", length(z.Prism.ZMin))
			ln(6, "zmax: %s", length(z.Prism.ZMax))
		default:
			return fmt.Errorf("zones[%d] %q: no shape", i, z.Name)
		}
	}
	return bw.Flush()
}

// num writes a number in its shortest form after rounding away the noise
// of unit conversions (to 1e-9 of a unit).
func num(v float64) string {
	r := math.Round(v*1e9) / 1e9
	if r == 0 {
		r = 0 // no "-0"
	}
	return strconv.FormatFloat(r, 'f', -1, 64)
}
