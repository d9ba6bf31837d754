package policy

import (
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// zoneSource is what the engine needs from the cell's zones. *zones.ZoneSet
// provides it through zoneSetSource; tests may use a double.
type zoneSource interface {
	// count is the number of zones; zones are indexed 0..count-1 in a fixed
	// order.
	count() int
	// info returns the zone's name, its robot frame ("" when fixed) and the
	// names of its rules (empty: all policy rules).
	info(i int) (name, frame string, rules []string)
	// sweep writes, for every zone i with skip[i] false, the result of
	// sweeping path (with its radii and the zone's margin) through it; out
	// and skip have count() elements; out[i] of a skipped zone is left.
	sweep(path zones.PathView, cutoff float64, out []zones.SweepResult, skip []bool)
	// distances writes the signed distance from p to every zone's shape
	// (margin not subtracted, negative inside); out has count() elements.
	distances(p r3.Vec, out []float64)
	// setFrame moves the zones attached to frame (none: no error).
	setFrame(frame string, pose zones.Pose) error
}
