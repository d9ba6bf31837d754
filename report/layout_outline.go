package report

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// View is a projection of the cell onto a drawing plane.
type View int

const (
	// Plan is the view from above: x to the right, y up the page.
	Plan View = iota
	// Elevation is the side view from −y (looking towards +y): x to the
	// right, z up the page.
	Elevation
)

func (v View) String() string {
	if v == Elevation {
		return "side elevation (x–z)"
	}
	return "plan (x–y)"
}

// project drops the coordinate the view looks along.
func (v View) project(p r3.Vec) r2.Vec {
	if v == Elevation {
		return r2.Vec{X: p.X, Y: p.Z}
	}
	return r2.Vec{X: p.X, Y: p.Y}
}

// Outline accuracy. Round parts (spheres, capsule ends, cylinder rims and
// the rounded corners a margin adds) are drawn as polygons with arcSteps
// vertices per full turn, inscribed: at most r·(1 − cos(π/arcSteps)) inside
// the true curve (7.5e-5·r, under 0.1 mm for r = 1 m). Outlines of
// non-convex regions come from marching squares on the exact 2D distance
// field on a grid of at most gridCells cells along the longer side; their
// vertices lie within one grid step of the true outline, and simplifying
// the rings moves them by at most a tenth of a step more.
const (
	arcSteps  = 256
	gridCells = 600
)

// outline is the drawing of one zone in one view: the projection of its
// shape and of the shape grown by its margin, as closed rings (no repeated
// closing point).
type outline struct {
	shape  [][]r2.Vec
	margin [][]r2.Vec // nil when the margin is zero
}

// zoneOutline projects zone z, placed by pose (the identity for a fixed
// zone), onto view v.
//
// The projection of a solid grown by a margin m is the projection of the
// solid grown by a disc of radius m (projection is linear, and projects a
// ball to a disc). Every convex zone is the convex hull of a point set
// grown by a ball of radius ρ (box, oriented box and convex prism: their
// corners, ρ = 0; sphere: its centre, ρ = r; capsule: its end points,
// ρ = r; cylinder: its two rim circles, ρ = 0), so its projection is the
// 2D hull of the projected points grown by a disc of ρ, and the margin
// outline the same with ρ + m: exact up to arc sampling. A prism with a
// non-convex footprint is drawn as the union of its projected faces; when
// it stands upright its plan is the footprint polygon itself.
func zoneOutline(z *zones.ZoneConfig, pose zones.Pose, v View) (outline, error) {
	s, err := z.Shape()
	if err != nil {
		return outline{}, fmt.Errorf("zone %q: %w", z.Name, err)
	}
	m := float64(z.Margin)
	place := func(p r3.Vec) r2.Vec { return v.project(pose.Apply(p)) }

	var pts []r2.Vec
	rho := 0.0
	switch s := s.(type) {
	case *zones.Box:
		lo, hi := s.Min(), s.Max()
		for i := 0; i < 8; i++ {
			c := lo
			if i&1 != 0 {
				c.X = hi.X
			}
			if i&2 != 0 {
				c.Y = hi.Y
			}
			if i&4 != 0 {
				c.Z = hi.Z
			}
			pts = append(pts, place(c))
		}
	case *zones.OBox:
		for _, c := range s.Corners() {
			pts = append(pts, place(c))
		}
	case *zones.Sphere:
		pts, rho = []r2.Vec{place(s.Center())}, s.Radius()
	case *zones.Capsule:
		pts, rho = []r2.Vec{place(s.A()), place(s.B())}, s.Radius()
	case *zones.Cylinder:
		a, b := s.A(), s.B()
		u := r3.Unit(r3.Sub(b, a))
		e1 := perpendicular(u)
		e2 := r3.Cross(u, e1)
		for k := 0; k < arcSteps; k++ {
			sn, cs := math.Sincos(2 * math.Pi * float64(k) / arcSteps)
			off := r3.Add(r3.Scale(s.Radius()*cs, e1), r3.Scale(s.Radius()*sn, e2))
			pts = append(pts, place(r3.Add(a, off)), place(r3.Add(b, off)))
		}
	case *zones.Prism:
		fp := s.Footprint()
		if !s.Convex() {
			return prismOutline(fp, s.ZMin(), s.ZMax(), m, pose, v), nil
		}
		for _, p := range fp {
			pts = append(pts, place(r3.Vec{X: p.X, Y: p.Y, Z: s.ZMin()}), place(r3.Vec{X: p.X, Y: p.Y, Z: s.ZMax()}))
		}
	default:
		return outline{}, fmt.Errorf("zone %q: cannot draw a %s", z.Name, s.Kind())
	}
	hull := convexHull(pts)
	o := outline{shape: [][]r2.Vec{offsetConvex(hull, rho)}}
	if m > 0 {
		o.margin = [][]r2.Vec{offsetConvex(hull, rho+m)}
	}
	return o, nil
}

// perpendicular returns a unit vector perpendicular to the unit vector u.
func perpendicular(u r3.Vec) r3.Vec {
	ax := r3.Vec{X: 1}
	if math.Abs(u.X) > 0.6 {
		ax = r3.Vec{Y: 1}
	}
	return r3.Unit(r3.Cross(u, ax))
}

// prismOutline draws a prism with a non-convex footprint fp (x, y in its
// frame) between heights zmin and zmax, placed by pose.
func prismOutline(fp []r2.Vec, zmin, zmax, margin float64, pose zones.Pose, v View) outline {
	at := func(p r2.Vec, z float64) r2.Vec { return v.project(pose.Apply(r3.Vec{X: p.X, Y: p.Y, Z: z})) }
	up := r3.Sub(pose.Apply(r3.Vec{Z: 1}), pose.Apply(r3.Vec{}))
	upright := math.Abs(up.X) < 1e-12 && math.Abs(up.Y) < 1e-12

	var pieces [][]r2.Vec
	switch {
	case upright && v == Plan:
		// Seen from above an upright prism is its footprint.
		ring := make([]r2.Vec, len(fp))
		for i, p := range fp {
			ring[i] = at(p, zmin)
		}
		pieces = [][]r2.Vec{ring}
	case upright:
		// Seen from the side it is the rectangle spanned by its x extent
		// and its heights: convex.
		var pts []r2.Vec
		for _, p := range fp {
			pts = append(pts, at(p, zmin), at(p, zmax))
		}
		hull := convexHull(pts)
		o := outline{shape: [][]r2.Vec{hull}}
		if margin > 0 {
			o.margin = [][]r2.Vec{offsetConvex(hull, margin)}
		}
		return o
	default:
		// A tilted prism projects to the union of its projected faces:
		// bottom, top and the side quadrilaterals.
		bottom := make([]r2.Vec, len(fp))
		top := make([]r2.Vec, len(fp))
		for i, p := range fp {
			bottom[i], top[i] = at(p, zmin), at(p, zmax)
		}
		pieces = append(pieces, bottom, top)
		for i := range fp {
			j := (i + 1) % len(fp)
			pieces = append(pieces, []r2.Vec{bottom[i], bottom[j], top[j], top[i]})
		}
	}
	var o outline
	if len(pieces) == 1 {
		o.shape = pieces
	} else {
		o.shape = contour(pieces, 0)
	}
	if margin > 0 {
		o.margin = contour(pieces, margin)
	}
	return o
}

// convexHull returns the convex hull of pts, counter-clockwise, without
// collinear points (Andrew's monotone chain). One point, or two, come back
// as they are (deduplicated).
func convexHull(pts []r2.Vec) []r2.Vec {
	p := append([]r2.Vec(nil), pts...)
	sort.Slice(p, func(i, j int) bool {
		if p[i].X != p[j].X {
			return p[i].X < p[j].X
		}
		return p[i].Y < p[j].Y
	})
	u := p[:0]
	for i, q := range p {
		if i == 0 || q != p[i-1] {
			u = append(u, q)
		}
	}
	p = u
	if len(p) < 3 {
		return p
	}
	cross := func(o, a, b r2.Vec) float64 { return (a.X-o.X)*(b.Y-o.Y) - (a.Y-o.Y)*(b.X-o.X) }
	h := make([]r2.Vec, 0, 2*len(p))
	for _, q := range p {
		for len(h) >= 2 && cross(h[len(h)-2], h[len(h)-1], q) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, q)
	}
	lower := len(h) + 1
	for i := len(p) - 2; i >= 0; i-- {
		q := p[i]
		for len(h) >= lower && cross(h[len(h)-2], h[len(h)-1], q) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, q)
	}
	return h[:len(h)-1]
}

// offsetConvex returns the convex polygon hull (counter-clockwise, from
// convexHull) grown by a disc of radius r: each edge moved out by r, joined
// by arcs of radius r around the vertices. A single point gives a circle,
// two points a stadium.
func offsetConvex(hull []r2.Vec, r float64) []r2.Vec {
	if r <= 0 || len(hull) == 0 {
		return append([]r2.Vec(nil), hull...)
	}
	n := len(hull)
	if n == 1 {
		out := make([]r2.Vec, arcSteps)
		for k := range out {
			s, c := math.Sincos(2 * math.Pi * float64(k) / arcSteps)
			out[k] = r2.Vec{X: hull[0].X + r*c, Y: hull[0].Y + r*s}
		}
		return out
	}
	// Outward normal angle of edge i (from vertex i to i+1): the edge
	// direction turned clockwise.
	normal := func(i int) float64 {
		d := r2.Sub(hull[(i+1)%n], hull[i])
		return math.Atan2(-d.X, d.Y)
	}
	var out []r2.Vec
	step := 2 * math.Pi / arcSteps
	for i := 0; i < n; i++ {
		from := normal((i - 1 + n) % n)
		to := normal(i)
		for to < from {
			to += 2 * math.Pi
		}
		if n == 2 {
			// Edges 0→1 and 1→0 are antiparallel: half a turn at each end.
			from, to = normal((i+1)%2), normal((i+1)%2)+math.Pi
		}
		k := int(math.Ceil((to - from) / step))
		for j := 0; j <= k; j++ {
			a := from + (to-from)*float64(j)/float64(max(k, 1))
			s, c := math.Sincos(a)
			out = append(out, r2.Vec{X: hull[i].X + r*c, Y: hull[i].Y + r*s})
		}
	}
	return out
}

// polygonSD is the signed distance from p to the polygon (simple or not;
// inside by the even-odd rule), negative inside.
func polygonSD(poly []r2.Vec, p r2.Vec) float64 {
	d2 := math.Inf(1)
	inside := false
	for i, a := range poly {
		b := poly[(i+1)%len(poly)]
		e := r2.Sub(b, a)
		w := r2.Sub(p, a)
		t := 0.0
		if ee := r2.Dot(e, e); ee > 0 {
			t = math.Max(0, math.Min(1, r2.Dot(w, e)/ee))
		}
		q := r2.Sub(w, r2.Scale(t, e))
		d2 = math.Min(d2, r2.Dot(q, q))
		if (a.Y > p.Y) != (b.Y > p.Y) && p.X < a.X+(p.Y-a.Y)*(b.X-a.X)/(b.Y-a.Y) {
			inside = !inside
		}
	}
	d := math.Sqrt(d2)
	if inside {
		return -d
	}
	return d
}

// unionSD is the signed distance to the union of the pieces: exact outside,
// negative (not necessarily the exact depth) inside.
func unionSD(pieces [][]r2.Vec, p r2.Vec) float64 {
	d := math.Inf(1)
	for _, pc := range pieces {
		d = math.Min(d, polygonSD(pc, p))
	}
	return d
}

// contour returns the outline {p : unionSD(p) = level} of the union of the
// pieces grown by level, as closed rings, by marching squares on a grid of
// at most gridCells cells along its longer side.
func contour(pieces [][]r2.Vec, level float64) [][]r2.Vec {
	lo := r2.Vec{X: math.Inf(1), Y: math.Inf(1)}
	hi := r2.Vec{X: math.Inf(-1), Y: math.Inf(-1)}
	for _, pc := range pieces {
		for _, p := range pc {
			lo = r2.Vec{X: math.Min(lo.X, p.X), Y: math.Min(lo.Y, p.Y)}
			hi = r2.Vec{X: math.Max(hi.X, p.X), Y: math.Max(hi.Y, p.Y)}
		}
	}
	h := math.Max(hi.X-lo.X, hi.Y-lo.Y) / gridCells
	if !(h > 0) {
		return nil
	}
	pad := level + 2*h
	lo = r2.Sub(lo, r2.Vec{X: pad, Y: pad})
	hi = r2.Add(hi, r2.Vec{X: pad, Y: pad})
	nx := int(math.Ceil((hi.X-lo.X)/h)) + 1
	ny := int(math.Ceil((hi.Y-lo.Y)/h)) + 1
	f := make([]float64, nx*ny)
	at := func(i, j int) r2.Vec { return r2.Vec{X: lo.X + float64(i)*h, Y: lo.Y + float64(j)*h} }
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			f[j*nx+i] = unionSD(pieces, at(i, j)) - level
		}
	}
	rings := marchingSquares(f, nx, ny, at)
	for i, r := range rings {
		rings[i] = simplifyRing(r, h/10)
	}
	return rings
}

// simplifyRing drops vertices of a closed ring while keeping every dropped
// vertex within tol of the simplified outline (Douglas–Peucker on the two
// halves of the ring).
func simplifyRing(ring []r2.Vec, tol float64) []r2.Vec {
	n := len(ring)
	if n < 8 {
		return ring
	}
	keep := make([]bool, n+1)
	closed := append(append([]r2.Vec(nil), ring...), ring[0])
	keep[0], keep[n/2], keep[n] = true, true, true
	var dp func(a, b int)
	dp = func(a, b int) {
		if b-a < 2 {
			return
		}
		pa, e := closed[a], r2.Sub(closed[b], closed[a])
		l := r2.Norm(e)
		worst, wi := -1.0, -1
		for i := a + 1; i < b; i++ {
			w := r2.Sub(closed[i], pa)
			d := r2.Norm(w)
			if l > 0 {
				t := math.Max(0, math.Min(1, r2.Dot(w, e)/(l*l)))
				d = r2.Norm(r2.Sub(w, r2.Scale(t, e)))
			}
			if d > worst {
				worst, wi = d, i
			}
		}
		if worst > tol {
			keep[wi] = true
			dp(a, wi)
			dp(wi, b)
		}
	}
	dp(0, n/2)
	dp(n/2, n)
	out := make([]r2.Vec, 0, n/4)
	for i := 0; i < n; i++ {
		if keep[i] {
			out = append(out, ring[i])
		}
	}
	return out
}

// marchingSquares extracts the closed rings where the grid field f (nx×ny,
// row-major, values at the points at(i, j)) changes sign. Nodes with f <= 0
// count as inside. The grid must be padded so that no ring touches its
// border. Ambiguous cells are resolved with the mean of their corners.
func marchingSquares(f []float64, nx, ny int, at func(i, j int) r2.Vec) [][]r2.Vec {
	in := func(i, j int) bool { return f[j*nx+i] <= 0 }
	// Crossing points on grid edges, keyed by edge: horizontal edge from
	// (i, j) to (i+1, j) is 2*(j*nx+i), vertical from (i, j) to (i, j+1)
	// is 2*(j*nx+i)+1.
	point := func(key int) r2.Vec {
		n := key / 2
		i, j := n%nx, n/nx
		i2, j2 := i+1, j
		if key%2 == 1 {
			i2, j2 = i, j+1
		}
		a, b := f[j*nx+i], f[j2*nx+i2]
		t := a / (a - b)
		if math.IsNaN(t) || t < 0 || t > 1 {
			t = 0.5
		}
		pa, pb := at(i, j), at(i2, j2)
		return r2.Add(pa, r2.Scale(t, r2.Sub(pb, pa)))
	}
	next := map[int]int{} // directed segment: from edge key -> to edge key
	for j := 0; j+1 < ny; j++ {
		for i := 0; i+1 < nx; i++ {
			bottom := 2 * (j*nx + i)
			top := 2 * ((j+1)*nx + i)
			left := 2*(j*nx+i) + 1
			right := 2*(j*nx+i+1) + 1
			c := 0
			if in(i, j) {
				c |= 1
			}
			if in(i+1, j) {
				c |= 2
			}
			if in(i+1, j+1) {
				c |= 4
			}
			if in(i, j+1) {
				c |= 8
			}
			// Segments oriented with the inside on their right (rings
			// come out clockwise around inside regions).
			switch c {
			case 1:
				next[left] = bottom
			case 2:
				next[bottom] = right
			case 3:
				next[left] = right
			case 4:
				next[right] = top
			case 6:
				next[bottom] = top
			case 7:
				next[left] = top
			case 8:
				next[top] = left
			case 9:
				next[top] = bottom
			case 11:
				next[top] = right
			case 12:
				next[right] = left
			case 13:
				next[right] = bottom
			case 14:
				next[bottom] = left
			case 5, 10:
				mean := (f[j*nx+i] + f[j*nx+i+1] + f[(j+1)*nx+i+1] + f[(j+1)*nx+i]) / 4
				if c == 5 {
					if mean <= 0 { // centre inside: corners 0 and 2 joined
						next[left] = top
						next[right] = bottom
					} else {
						next[left] = bottom
						next[right] = top
					}
				} else {
					if mean <= 0 { // centre inside: corners 1 and 3 joined
						next[bottom] = left
						next[top] = right
					} else {
						next[bottom] = right
						next[top] = left
					}
				}
			}
		}
	}
	var rings [][]r2.Vec
	keys := make([]int, 0, len(next))
	for k := range next {
		keys = append(keys, k)
	}
	sort.Ints(keys) // deterministic output
	for _, start := range keys {
		if _, ok := next[start]; !ok {
			continue
		}
		var ring []r2.Vec
		k := start
		for {
			to, ok := next[k]
			if !ok {
				break
			}
			delete(next, k)
			ring = append(ring, point(k))
			k = to
			if k == start {
				break
			}
		}
		if len(ring) >= 3 {
			rings = append(rings, ring)
		}
	}
	return rings
}

// area is the signed area of a ring (positive counter-clockwise).
func area(ring []r2.Vec) float64 {
	a := 0.0
	for i, p := range ring {
		q := ring[(i+1)%len(ring)]
		a += p.X*q.Y - q.X*p.Y
	}
	return a / 2
}

// labelPoint returns a point well inside the rings (even-odd): the grid
// point farthest from their boundary, on a 41×41 grid over their bounds,
// refined once around the best point. Falls back to the bounds' centre.
func labelPoint(rings [][]r2.Vec) r2.Vec {
	lo := r2.Vec{X: math.Inf(1), Y: math.Inf(1)}
	hi := r2.Vec{X: math.Inf(-1), Y: math.Inf(-1)}
	for _, r := range rings {
		for _, p := range r {
			lo = r2.Vec{X: math.Min(lo.X, p.X), Y: math.Min(lo.Y, p.Y)}
			hi = r2.Vec{X: math.Max(hi.X, p.X), Y: math.Max(hi.Y, p.Y)}
		}
	}
	best := r2.Scale(0.5, r2.Add(lo, hi))
	if len(rings) == 0 {
		return best
	}
	depth := func(p r2.Vec) float64 {
		d := math.Inf(1)
		inside := false
		for _, r := range rings {
			s := polygonSD(r, p)
			if s < 0 {
				inside = !inside
			}
			d = math.Min(d, math.Abs(s))
		}
		if !inside {
			return -d
		}
		return d
	}
	bestD := depth(best)
	span := r2.Sub(hi, lo)
	for pass := 0; pass < 2; pass++ {
		c := best
		for a := 0; a <= 40; a++ {
			for b := 0; b <= 40; b++ {
				p := r2.Vec{X: lo.X + span.X*float64(a)/40, Y: lo.Y + span.Y*float64(b)/40}
				if pass == 1 {
					p = r2.Vec{X: c.X + span.X*(float64(a)-20)/400, Y: c.Y + span.Y*(float64(b)-20)/400}
				}
				if d := depth(p); d > bestD+1e-12 {
					best, bestD = p, d
				}
			}
		}
	}
	return best
}
