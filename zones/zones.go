// Package zones holds the geometry of a cell's hazard zones and the cell
// configuration file. Everything is in metres, in a right-handed frame with z
// up. Shapes answer point queries (signed distance, closest surface point,
// containment, bounds, volume); zones answer path queries (the earliest time a
// forecast path swept by a growing sphere touches a zone, and the minimum
// separation along the path). The package is pure: no I/O beyond readers.
package zones

import "gonum.org/v1/gonum/spatial/r3"

// AABB is an axis-aligned bounding box.
type AABB struct{ Min, Max r3.Vec }

// Shape is a closed solid in its own frame.
type Shape interface {
	// Kind names the shape as written in the cell configuration
	// ("box", "obox", "sphere", "cylinder", "capsule", "prism").
	Kind() string
	// SignedDistance is the Euclidean distance from p to the surface,
	// negative inside.
	SignedDistance(p r3.Vec) float64
	// Closest is the point of the surface nearest to p.
	Closest(p r3.Vec) r3.Vec
	// Contains reports whether p is inside or on the surface.
	Contains(p r3.Vec) bool
	// Bounds is the shape's axis-aligned bounding box.
	Bounds() AABB
	// Volume in cubic metres.
	Volume() float64
}

// Pose places a frame in the cell: a point maps as Rot·p + Pos.
type Pose struct {
	Pos r3.Vec
	Rot r3.Rotation
}

// PathView is a timed piecewise-linear path swept by a sphere whose radius
// varies linearly between points (a forecast). T is strictly increasing
// (seconds), P positions (metres), R radii (metres, >= 0); equal lengths.
// forecast.Path converts to it without copying.
type PathView struct {
	T []float64
	P []r3.Vec
	R []float64
}

// SweepResult is the answer of a path query against one zone. A zone counts
// as touched at time t when the sphere of radius R(t) + the zone's margin
// reaches the zone's shape: SignedDistance(P(t)) <= R(t) + Margin.
type SweepResult struct {
	// Touch reports whether the swept sphere touches the zone within the path.
	Touch bool
	// TouchT is the earliest touching time (absolute, seconds) when Touch:
	// never later than the true earliest touch, and within SweepTol of
	// touching (see SweepTol for the exact guarantees).
	TouchT float64
	// MinSep is the minimum over the path of SignedDistance(P(t)) - R(t) -
	// Margin (metres; negative when touching), never above the true minimum
	// and at most SweepTol below it. Values at or above the cutoff passed to
	// the query are only a lower bound (Far is then true).
	MinSep float64
	// MinSepT is the time at which MinSep is reached, to within SweepTol of
	// separation (results that are not Far only; zero when Far).
	MinSepT float64
	// Far is true when the bounding-volume pre-check showed the path stays
	// farther than the cutoff, so MinSep is a lower bound.
	Far bool
}
