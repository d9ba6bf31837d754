package zones

import (
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"
)

// Zone is one hazard zone: a shape with an advisory margin around it, fixed
// in the cell or attached to a robot frame.
type Zone struct {
	Name   string
	Shape  Shape
	Margin float64 // metres, >= 0: the zone counts as reached within Margin of Shape
	// Frame names the robot frame the zone moves with; empty for a zone
	// fixed in the cell. For an attached zone Shape is given in the frame's
	// coordinates and Pose places the frame in the cell.
	Frame string
	Rules []string // advisory rules applying to this zone (empty: the defaults)
	// Pose is the current pose of Frame: a point p of the cell is at
	// Rot⁻¹·(p − Pos) in shape coordinates. Used only when Frame != "";
	// the zero Pose is the identity. In a ZoneSet, change it with
	// SetFramePose.
	Pose Pose
}

// local maps a cell point into shape coordinates.
func (z *Zone) local(p r3.Vec) r3.Vec {
	if z.Frame == "" {
		return p
	}
	m := rotMat(z.Pose.Rot)
	return m.applyT(r3.Sub(p, z.Pose.Pos))
}

// SignedDistance returns the signed distance from the cell point p to the
// zone's shape at its current pose (negative inside), without the margin.
func (z *Zone) SignedDistance(p r3.Vec) float64 { return z.Shape.SignedDistance(z.local(p)) }

// Contains reports whether p is within the margin of the shape
// (SignedDistance(p) <= Margin).
func (z *Zone) Contains(p r3.Vec) bool { return z.SignedDistance(p) <= z.Margin }

// ToCell maps a point from shape coordinates into the cell at the zone's
// current pose (the identity for a fixed zone), for drawing.
func (z *Zone) ToCell(p r3.Vec) r3.Vec {
	if z.Frame == "" {
		return p
	}
	return z.Pose.Apply(p)
}

// Bounds returns the axis-aligned bounds in the cell of the shape at its
// current pose, without the margin. For an attached zone it encloses the
// rotated shape bounds (not tight in general).
func (z *Zone) Bounds() AABB {
	b := z.Shape.Bounds()
	if z.Frame == "" {
		return b
	}
	m := rotMat(z.Pose.Rot)
	return placeBounds(b, &m, z.Pose.Pos)
}

// placeBounds returns the axis-aligned box enclosing box b rotated by m and
// moved by pos.
func placeBounds(b AABB, m *mat3, pos r3.Vec) AABB {
	c := r3.Scale(0.5, r3.Add(b.Min, b.Max))
	h := m.absApply(r3.Scale(0.5, r3.Sub(b.Max, b.Min)))
	c = r3.Add(m.apply(c), pos)
	return AABB{Min: r3.Sub(c, h), Max: r3.Add(c, h)}
}

// sweepStack is the number of path points Zone.Sweep handles without
// allocating.
const sweepStack = 64

// zoneGeom is what a path query needs of a zone at its current pose: the
// shape's evaluator, the rotation matrix and the placed bounds. A ZoneSet
// keeps one per zone, renewed when the pose changes.
type zoneGeom struct {
	ev     evaluator
	posed  bool
	pose   Pose
	m      mat3
	bounds AABB // bounds of the shape in the cell, without the margin
}

func (g *zoneGeom) set(z *Zone) {
	g.ev = asEvaluator(z.Shape)
	g.posed = z.Frame != ""
	g.pose = z.Pose
	g.m = identityMat
	g.bounds = z.Shape.Bounds()
	if g.posed {
		g.m = rotMat(z.Pose.Rot)
		g.bounds = placeBounds(g.bounds, &g.m, z.Pose.Pos)
	}
}

// localBounds returns a box in shape coordinates enclosing the cell box b.
func (g *zoneGeom) localBounds(b AABB) AABB {
	mt := mat3{
		{g.m[0][0], g.m[1][0], g.m[2][0]},
		{g.m[0][1], g.m[1][1], g.m[2][1]},
		{g.m[0][2], g.m[1][2], g.m[2][2]},
	}
	return placeBounds(b, &mt, g.m.applyT(r3.Scale(-1, g.pose.Pos)))
}

// local maps a cell point into shape coordinates.
func (g *zoneGeom) local(p r3.Vec) r3.Vec {
	if !g.posed {
		return p
	}
	return g.m.applyT(r3.Sub(p, g.pose.Pos))
}

// Sweep answers the path query for this zone: when the path's sphere of
// radius R(t) first comes within Margin of the shape, and the minimum
// separation SignedDistance(P(t)) − R(t) − Margin along the path. See
// SweepTol for the guarantees.
//
// cutoff makes far zones cheap: two bounding-volume pre-checks give lower
// bounds of the separation, the distance between the path's bounding box
// and the zone's (when they are apart) less the path's largest radius and
// the margin, and the signed distance at the centre of the path's box less
// the largest distance from there to a path point plus its radius, less
// the margin. When the larger of the two is at least cutoff and positive
// (so that no touch can be hidden), the result is Far with that value as
// MinSep (a lower bound of the true minimum), MinSepT zero, and no touch. Pass math.Inf(1) to always get the exact
// answer.
//
// An empty path gives Far with MinSep +Inf. A path holding a NaN or
// infinite time, coordinate or radius cannot be judged; it is reported as
// touching at its first time with MinSep −Inf, so that it never reads as
// clear. Slices of unequal length are used up to the shortest. Sweep
// allocates nothing for paths of up to 64 points.
func (z *Zone) Sweep(path PathView, cutoff float64) SweepResult {
	var sc sweepScratch
	var buf [sweepStack]pointEval
	var cum, up, down, downMax [sweepStack]float64
	n := min(len(path.T), len(path.P), len(path.R))
	if n <= sweepStack {
		sc.buf, sc.cum, sc.up, sc.down, sc.downMax = buf[:n], cum[:n], up[:n], down[:n], downMax[:n]
	} else {
		sc.grow(n)
	}
	pb := boxOfPath(path)
	var g zoneGeom
	g.set(z)
	return z.sweep(path, &pb, cutoff, &sc, &g)
}

func (z *Zone) sweep(path PathView, pb *pathBox, cutoff float64, sc *sweepScratch, g *zoneGeom) SweepResult {
	if pb.n == 0 {
		return SweepResult{MinSep: math.Inf(1), Far: true}
	}
	if !pb.ok {
		return SweepResult{Touch: true, TouchT: path.T[0], MinSep: math.Inf(-1), MinSepT: path.T[0]}
	}
	// Outside the zone's bounds the signed distance is at least the
	// distance to the bounds; inside them it may be negative, so the bound
	// holds only when the boxes are apart.
	lb := math.Inf(-1)
	if d := pb.box.Distance(g.bounds); d > 0 {
		lb = d - pb.maxR - z.Margin
	}
	if lb >= cutoff && lb > 0 {
		return SweepResult{MinSep: lb, Far: true}
	}
	// A non-convex shape that equals its convex minorant around the path
	// is swept as the minorant (see hullSubstitute).
	ev := g.ev
	var sdc float64
	if hs, ok := ev.(hullSubstitute); ok {
		b := pb.box
		if g.posed {
			b = g.localBounds(b)
		}
		if h, sd := hs.exactHull(b); h != nil {
			ev, sdc = h, sd
		}
	}
	if ev == g.ev {
		sdc = ev.SignedDistance(g.local(pb.c))
	}
	// The signed distance is 1-Lipschitz: at a path point P with radius
	// R, sd(P) − R >= sd(c) − |P − c| − R >= sd(c) − reach (and along a
	// segment |P − c| + R is convex, so largest at a point).
	lb = max(lb, sdc-pb.reach-z.Margin)
	if lb >= cutoff && lb > 0 {
		return SweepResult{MinSep: lb, Far: true}
	}
	if !sc.measured {
		sc.lengths(path, pb.n)
		sc.measured = true
	}
	res := sweepLocal(ev, path, pb.n, g.posed, &g.m, g.pose.Pos, z.Margin, sc)
	// Both are lower bounds of the true minimum; keep the tighter.
	res.MinSep = max(res.MinSep, lb)
	return res
}

// ZoneError reports what is wrong with one zone given to NewZoneSet. Index
// is the zone's position in the slice, Field "name", "shape", "margin" or
// "pose".
type ZoneError struct {
	Index int
	Name  string
	Field string
	Msg   string
}

func (e *ZoneError) Error() string {
	s := "zones[" + strconv.Itoa(e.Index) + "]"
	if e.Name != "" {
		s += " " + strconv.Quote(e.Name)
	}
	return s + ": " + e.Field + ": " + e.Msg
}

// ZoneSet is the set of zones of a cell, queried together for every
// forecast. The zones are kept in the order given.
//
// Sweep reuses a scratch buffer, so a ZoneSet must not be swept from
// several goroutines at once (the advisory engine of a cell is
// single-threaded); the other methods only read, except SetFramePose.
type ZoneSet struct {
	zones   []Zone
	geom    []zoneGeom // per zone, at its current pose
	index   map[string]int
	frames  []string
	scratch sweepScratch
}

// NewZoneSet checks the zones and returns them as a set (the slice is
// copied). Names must be non-empty and unique, shapes non-nil, margins
// finite and >= 0, and poses of attached zones finite. The first problem
// found is returned as a *ZoneError.
func NewZoneSet(zs []Zone) (*ZoneSet, error) {
	s := &ZoneSet{zones: append([]Zone(nil), zs...), index: make(map[string]int, len(zs))}
	seen := map[string]bool{}
	for i := range s.zones {
		z := &s.zones[i]
		switch {
		case z.Name == "":
			return nil, &ZoneError{Index: i, Field: "name", Msg: "empty"}
		case z.Shape == nil:
			return nil, &ZoneError{Index: i, Name: z.Name, Field: "shape", Msg: "missing"}
		case math.IsNaN(z.Margin) || math.IsInf(z.Margin, 0):
			return nil, &ZoneError{Index: i, Name: z.Name, Field: "margin", Msg: "NaN/Inf"}
		case z.Margin < 0:
			return nil, &ZoneError{Index: i, Name: z.Name, Field: "margin", Msg: "must be >= 0, got " + ftoa(z.Margin)}
		}
		if j, dup := s.index[z.Name]; dup {
			return nil, &ZoneError{Index: i, Name: z.Name, Field: "name",
				Msg: "duplicate name (also zones[" + strconv.Itoa(j) + "])"}
		}
		if z.Frame != "" {
			if err := z.Pose.Validate(); err != nil {
				return nil, &ZoneError{Index: i, Name: z.Name, Field: "pose", Msg: err.Error()}
			}
			if !seen[z.Frame] {
				seen[z.Frame] = true
				s.frames = append(s.frames, z.Frame)
			}
		}
		s.index[z.Name] = i
	}
	sort.Strings(s.frames)
	s.geom = make([]zoneGeom, len(s.zones))
	for i := range s.zones {
		s.geom[i].set(&s.zones[i])
	}
	return s, nil
}

// geometry returns zone i's geometry at its current pose.
func (s *ZoneSet) geometry(i int) *zoneGeom {
	g := &s.geom[i]
	if z := &s.zones[i]; z.Frame != "" && z.Pose != g.pose {
		// Moved without SetFramePose (through Zone): follow it.
		g.set(z)
	}
	return g
}

// Len returns the number of zones.
func (s *ZoneSet) Len() int { return len(s.zones) }

// Zone returns zone i (0 <= i < Len()). Treat it as read-only; move
// attached zones with SetFramePose.
func (s *ZoneSet) Zone(i int) *Zone { return &s.zones[i] }

// Index returns the position of the zone with the given name, or -1.
func (s *ZoneSet) Index(name string) int {
	if i, ok := s.index[name]; ok {
		return i
	}
	return -1
}

// Frames returns the sorted names of the frames zones are attached to.
func (s *ZoneSet) Frames() []string { return append([]string(nil), s.frames...) }

// SetFramePose sets the pose of every zone attached to frame and returns
// how many there are (0 for a frame no zone uses). A pose with a NaN or
// infinite component is refused: nothing moves and -1 is returned.
func (s *ZoneSet) SetFramePose(frame string, pose Pose) int {
	if frame == "" {
		return 0
	}
	if pose.Validate() != nil {
		return -1
	}
	n := 0
	for i := range s.zones {
		if s.zones[i].Frame == frame {
			s.zones[i].Pose = pose
			s.geom[i].set(&s.zones[i])
			n++
		}
	}
	return n
}

// Sweep answers the path query (see Zone.Sweep) for every zone and returns
// the results in zone order in out, reused when its capacity suffices
// (len(out) == Len()). It allocates nothing once out and the set's scratch
// buffer have grown to size.
func (s *ZoneSet) Sweep(path PathView, cutoff float64, out []SweepResult) []SweepResult {
	return s.SweepSelected(path, cutoff, out, nil)
}

// SweepSelected is Sweep for the zones i with skip[i] false (all zones when
// skip is shorter than that): out[i] of a skipped zone is left as it was.
// A caller that knows from earlier queries that a zone is far can so save
// its query (the advisory engine does, see policy).
func (s *ZoneSet) SweepSelected(path PathView, cutoff float64, out []SweepResult, skip []bool) []SweepResult {
	if cap(out) < len(s.zones) {
		out = make([]SweepResult, len(s.zones))
	}
	out = out[:len(s.zones)]
	n := min(len(path.T), len(path.P), len(path.R))
	s.scratch.grow(n)
	s.scratch.measured = false
	var pb pathBox
	boxed := false
	for i := range s.zones {
		if i < len(skip) && skip[i] {
			continue
		}
		if !boxed {
			pb, boxed = boxOfPath(path), true
		}
		out[i] = s.zones[i].sweep(path, &pb, cutoff, &s.scratch, s.geometry(i))
	}
	return out
}

// SignedDistances writes into out (reused when its capacity suffices) the
// signed distance from p to each zone's shape at its current pose, without
// margins, in zone order.
func (s *ZoneSet) SignedDistances(p r3.Vec, out []float64) []float64 {
	if cap(out) < len(s.zones) {
		out = make([]float64, len(s.zones))
	}
	out = out[:len(s.zones)]
	for i := range s.zones {
		g := s.geometry(i)
		out[i] = g.ev.SignedDistance(g.local(p))
	}
	return out
}
