package zones

import (
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/gonum/integrate/quad"
	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
)

// Prism is a vertical prism: a simple polygon footprint in the x,y plane
// (convex or not) extruded from ZMin to ZMax.
type Prism struct {
	pts        []r2.Vec // footprint, counter-clockwise, no repeated closing point
	zmin, zmax float64
	area, per  float64 // footprint area and perimeter
	isConvex   bool
	bounds     AABB
	// per edge i (from pts[i] to pts[i+1]): direction and 1/|d|²
	ex, ey, inv []float64
	// edges holds the same per edge, together, for the distance loop.
	edges []prismEdge
	// pieces is a triangulation of a non-convex footprint into convex
	// prisms, used by the path query's lower bounds (nil when convex).
	pieces []*Prism
	// hullP is the prism over the footprint's convex hull (nil when
	// convex): it holds the prism, so its signed distance is nowhere above
	// the prism's (see hullBounder).
	hullP *Prism
	// pockets bound the hull's parts outside the prism: per edge of the
	// hull that is not an edge of the footprint, the box of the footprint
	// corners it bridges, times [zmin, zmax].
	pockets []AABB
}

// NewPrism returns the vertical prism with the given footprint (x, y in
// metres, at least 3 points, either winding; a last point equal to the first
// is taken as closing the ring and dropped) between heights zmin < zmax.
// The footprint must be a simple polygon: no repeated consecutive points,
// no two edges crossing or touching except neighbours at their shared
// corner, and a non-zero area. Edge i runs from footprint[i] to
// footprint[i+1] (the last edge back to footprint[0]).
func NewPrism(footprint []r2.Vec, zmin, zmax float64) (*Prism, error) {
	if !finite(zmin) {
		return nil, &ShapeError{Field: "zmin", Msg: "NaN/Inf"}
	}
	if !finite(zmax) {
		return nil, &ShapeError{Field: "zmax", Msg: "NaN/Inf"}
	}
	if zmin > zmax {
		return nil, &ShapeError{Field: "zmin", Msg: "zmin " + ftoa(zmin) + " is above zmax " + ftoa(zmax)}
	}
	if zmin == zmax {
		return nil, &ShapeError{Field: "zmax", Msg: "zero volume: zmin = zmax = " + ftoa(zmin)}
	}
	for i, p := range footprint {
		if !finite(p.X) || !finite(p.Y) {
			return nil, &ShapeError{Field: "footprint[" + strconv.Itoa(i) + "]", Msg: "NaN/Inf"}
		}
	}
	pts := footprint
	if n := len(pts); n > 1 && pts[n-1] == pts[0] {
		pts = pts[:n-1]
	}
	if err := checkSimplePolygon(pts); err != nil {
		return nil, err
	}
	pts = append([]r2.Vec(nil), pts...)
	a := shoelace(pts)
	if a < 0 {
		for i, j := 0, len(pts)-1; i < j; i, j = i+1, j-1 {
			pts[i], pts[j] = pts[j], pts[i]
		}
		a = -a
	}
	if a == 0 {
		return nil, &ShapeError{Field: "footprint", Msg: "zero area"}
	}
	p := buildPrism(pts, zmin, zmax, a)
	if !p.isConvex {
		p.pieces = triangulatePrism(pts, zmin, zmax, a)
		if h := convexHull2(pts); len(h) >= 3 {
			p.hullP = buildPrism(h, zmin, zmax, shoelace(h))
			p.hullP.isConvex = true
			p.pockets = hullPockets(pts, h, zmin, zmax)
		}
	}
	return p, nil
}

// convexHull2 returns the convex hull of the points, counter-clockwise,
// without collinear points (Andrew's monotone chain; configuration time).
// Its corners are points of pts, so it holds their polygon exactly.
func convexHull2(pts []r2.Vec) []r2.Vec {
	ps := append([]r2.Vec(nil), pts...)
	sort.Slice(ps, func(i, j int) bool {
		if ps[i].X != ps[j].X {
			return ps[i].X < ps[j].X
		}
		return ps[i].Y < ps[j].Y
	})
	var h []r2.Vec
	for pass := 0; pass < 2; pass++ {
		start := len(h)
		for _, q := range ps {
			for len(h) >= start+2 && orient(h[len(h)-2], h[len(h)-1], q) <= 0 {
				h = h[:len(h)-1]
			}
			h = append(h, q)
		}
		h = h[:len(h)-1] // the last point starts the other chain
		for i, j := 0, len(ps)-1; i < j; i, j = i+1, j-1 {
			ps[i], ps[j] = ps[j], ps[i]
		}
	}
	return h
}

// hullPockets returns, for each edge of the hull h (counter-clockwise
// corners of the counter-clockwise footprint pts) that skips footprint
// corners, the box of the corners from its start to its end along the
// footprint, times [zmin, zmax]: the pocket between the edge and the
// footprint lies in it.
func hullPockets(pts, h []r2.Vec, zmin, zmax float64) []AABB {
	index := make(map[r2.Vec]int, len(pts))
	for i, v := range pts {
		index[v] = i
	}
	n := len(pts)
	var out []AABB
	for k := range h {
		ia, ib := index[h[k]], index[h[(k+1)%len(h)]]
		if (ia+1)%n == ib {
			continue // a footprint edge
		}
		lo, hi := pts[ia], pts[ia]
		for i := ia; i != ib; i = (i + 1) % n {
			v := pts[(i+1)%n]
			lo.X, lo.Y = min(lo.X, v.X), min(lo.Y, v.Y)
			hi.X, hi.Y = max(hi.X, v.X), max(hi.Y, v.Y)
		}
		out = append(out, AABB{Min: r3.Vec{X: lo.X, Y: lo.Y, Z: zmin}, Max: r3.Vec{X: hi.X, Y: hi.Y, Z: zmax}})
	}
	return out
}

// exactHull returns the convex minorant and its signed distance at the
// centre of b when the minorant's signed distance equals the prism's at
// every point of the box b (prism frame); nil otherwise.
//
// Write H for the prism over the hull, P for the prism and N for the
// closure of H \ P (the pockets × [zmin, zmax]). At a point x with
// d(x, N) > |sd_H(x)|: outside H, the point of H nearest to x is not in N,
// so it is a point of P's surface and sd_P(x) <= sd_H(x); inside P, the
// surface of P lies in that of H and in N, so its depth is at least that
// in H. With sd_P >= sd_H everywhere (P ⊂ H), sd_P(x) = sd_H(x). Over the
// box, d(x, N) is at least the distance from b to the pockets' boxes and
// |sd_H(x)| at most |sd_H(c)| plus the half diagonal (sd_H is
// 1-Lipschitz).
func (p *Prism) exactHull(b AABB) (evaluator, float64) {
	if p.hullP == nil {
		return nil, 0
	}
	dn := math.Inf(1)
	for i := range p.pockets {
		dn = min(dn, b.Distance(p.pockets[i]))
	}
	if dn == 0 {
		return nil, 0
	}
	c := r3.Scale(0.5, r3.Add(b.Min, b.Max))
	sd := p.hullP.SignedDistance(c)
	if math.Abs(sd)+0.5*norm(r3.Sub(b.Max, b.Min)) < dn {
		return p.hullP, sd
	}
	return nil, 0
}

// hull returns the convex minorant of a non-convex prism (see hullBounder).
func (p *Prism) hull() evaluator {
	if p.hullP == nil {
		return nil
	}
	return p.hullP
}

// buildPrism makes a prism of a checked counter-clockwise footprint of area
// a > 0.
func buildPrism(pts []r2.Vec, zmin, zmax, a float64) *Prism {
	n := len(pts)
	p := &Prism{pts: pts, zmin: zmin, zmax: zmax, area: a, isConvex: true,
		ex: make([]float64, n), ey: make([]float64, n), inv: make([]float64, n)}
	lo, hi := pts[0], pts[0]
	for i, v := range pts {
		w := pts[(i+1)%n]
		p.ex[i], p.ey[i] = w.X-v.X, w.Y-v.Y
		l2 := p.ex[i]*p.ex[i] + p.ey[i]*p.ey[i]
		p.inv[i] = 1 / l2
		p.per += math.Sqrt(l2)
		lo.X, lo.Y = math.Min(lo.X, v.X), math.Min(lo.Y, v.Y)
		hi.X, hi.Y = math.Max(hi.X, v.X), math.Max(hi.Y, v.Y)
		u := pts[(i+2)%n]
		if r2.Cross(r2.Sub(w, v), r2.Sub(u, w)) < 0 {
			p.isConvex = false
		}
	}
	p.bounds = AABB{Min: r3.Vec{X: lo.X, Y: lo.Y, Z: zmin}, Max: r3.Vec{X: hi.X, Y: hi.Y, Z: zmax}}
	p.edges = make([]prismEdge, n)
	for i, v := range pts {
		e := prismEdge{vx: v.X, vy: v.Y, wy: pts[(i+1)%n].Y, ex: p.ex[i], ey: p.ey[i], inv: p.inv[i]}
		if e.ey != 0 {
			e.slope = e.ex / e.ey
		}
		p.edges[i] = e
	}
	return p
}

// prismEdge is one footprint edge from (vx, vy) to (vx + ex, wy = vy + ey)
// with inv = 1/|e|² and slope = ex/ey (0 for a horizontal edge, which the
// crossing test never uses).
type prismEdge struct {
	vx, vy, wy, ex, ey, inv, slope float64
}

// shoelace returns the signed area of the polygon (positive when
// counter-clockwise).
func shoelace(pts []r2.Vec) float64 {
	var s float64
	n := len(pts)
	for i, v := range pts {
		s += r2.Cross(v, pts[(i+1)%n])
	}
	return 0.5 * s
}

// orient is the sign of the turn a→b→c: +1 left, −1 right, 0 collinear.
func orient(a, b, c r2.Vec) int {
	v := r2.Cross(r2.Sub(b, a), r2.Sub(c, a))
	switch {
	case v > 0:
		return 1
	case v < 0:
		return -1
	}
	return 0
}

// onSegment reports whether c, collinear with a and b, lies on segment ab.
func onSegment(a, b, c r2.Vec) bool {
	return math.Min(a.X, b.X) <= c.X && c.X <= math.Max(a.X, b.X) &&
		math.Min(a.Y, b.Y) <= c.Y && c.Y <= math.Max(a.Y, b.Y)
}

// segmentsMeet reports whether closed segments ab and cd share a point.
func segmentsMeet(a, b, c, d r2.Vec) bool {
	o1, o2, o3, o4 := orient(a, b, c), orient(a, b, d), orient(c, d, a), orient(c, d, b)
	if o1 != o2 && o3 != o4 {
		return true
	}
	return (o1 == 0 && onSegment(a, b, c)) || (o2 == 0 && onSegment(a, b, d)) ||
		(o3 == 0 && onSegment(c, d, a)) || (o4 == 0 && onSegment(c, d, b))
}

// checkSimplePolygon reports why pts is not a simple polygon, if it is not.
// O(n²), meant for configuration time.
func checkSimplePolygon(pts []r2.Vec) error {
	n := len(pts)
	if n < 3 {
		return &ShapeError{Field: "footprint", Msg: "needs at least 3 points, got " + strconv.Itoa(n)}
	}
	for i := range pts {
		j := (i + 1) % n
		if pts[i] == pts[j] {
			return &ShapeError{Field: "footprint[" + strconv.Itoa(j) + "]",
				Msg: "repeats footprint[" + strconv.Itoa(i) + "]: zero-length edge"}
		}
	}
	edge := func(i int) (r2.Vec, r2.Vec) { return pts[i], pts[(i+1)%n] }
	for i := 0; i < n; i++ {
		a, b := edge(i)
		// Neighbour i+1 shares b: they overlap only when folding back.
		j := (i + 1) % n
		_, d := edge(j)
		if orient(a, b, d) == 0 && r2.Dot(r2.Sub(b, a), r2.Sub(d, b)) < 0 {
			lo, hi := i, j
			if lo > hi {
				lo, hi = hi, lo
			}
			return &ShapeError{Field: "footprint", Msg: "edges " + strconv.Itoa(lo) + " and " + strconv.Itoa(hi) +
				" overlap: footprint is not a simple polygon"}
		}
		for j := i + 2; j < n; j++ {
			if i == 0 && j == n-1 {
				continue // neighbours through the closing corner
			}
			c, d := edge(j)
			if segmentsMeet(a, b, c, d) {
				return &ShapeError{Field: "footprint", Msg: "edges " + strconv.Itoa(i) + " and " + strconv.Itoa(j) +
					" cross: footprint is not a simple polygon"}
			}
		}
	}
	return nil
}

// Footprint returns a copy of the footprint, counter-clockwise, without a
// repeated closing point.
func (p *Prism) Footprint() []r2.Vec { return append([]r2.Vec(nil), p.pts...) }

// ZMin returns the bottom height.
func (p *Prism) ZMin() float64 { return p.zmin }

// ZMax returns the top height.
func (p *Prism) ZMax() float64 { return p.zmax }

// Convex reports whether the footprint is convex.
func (p *Prism) Convex() bool { return p.isConvex }

// Kind returns "prism".
func (p *Prism) Kind() string { return "prism" }

// sd2 returns the signed distance in the plane from (x, y) to the footprint
// boundary (negative inside), the nearest boundary point and the index of
// its edge.
func (p *Prism) sd2(x, y float64) (d float64, cx, cy float64, edge int) {
	best := math.Inf(1)
	inside := false
	var bdx, bdy float64
	for i := range p.edges {
		e := &p.edges[i]
		wx, wy := x-e.vx, y-e.vy
		t := (wx*e.ex + wy*e.ey) * e.inv
		if t < 0 {
			t = 0
		} else if t > 1 {
			t = 1
		}
		dx, dy := wx-t*e.ex, wy-t*e.ey
		if d2 := dx*dx + dy*dy; d2 < best {
			best, bdx, bdy, edge = d2, dx, dy, i
		}
		// Crossing number with the ray to +x, half-open in y.
		if (e.vy > y) != (e.wy > y) && wx < wy*e.slope {
			inside = !inside
		}
	}
	d = math.Sqrt(best)
	if inside {
		d = -d
	}
	return d, x - bdx, y - bdy, edge
}

// grad2 returns the outward unit direction in the plane at (x, y) given its
// sd2 results.
func (p *Prism) grad2(x, y, d, cx, cy float64, edge int) r3.Vec {
	if d != 0 {
		inv := 1 / d
		return r3.Vec{X: (x - cx) * inv, Y: (y - cy) * inv}
	}
	// On the boundary: the edge's outward normal (right of a CCW edge).
	s := math.Sqrt(p.inv[edge])
	return r3.Vec{X: p.ey[edge] * s, Y: -p.ex[edge] * s}
}

func (p *Prism) dz(z float64) float64 {
	return math.Abs(z-0.5*(p.zmin+p.zmax)) - 0.5*(p.zmax-p.zmin)
}

// SignedDistance returns the exact Euclidean signed distance to the prism's
// surface (walls, top, bottom, rims), negative inside. Cost O(n) in the
// number of footprint points.
func (p *Prism) SignedDistance(q r3.Vec) float64 {
	d, _, _, _ := p.sd2(q.X, q.Y)
	return sdCombine2(d, p.dz(q.Z))
}

func (p *Prism) sdGrad(q r3.Vec) (float64, r3.Vec) {
	d, cx, cy, e := p.sd2(q.X, q.Y)
	g2 := p.grad2(q.X, q.Y, d, cx, cy, e)
	return combineGrad(d, p.dz(q.Z), g2, r3.Vec{Z: sgn(q.Z - 0.5*(p.zmin+p.zmax))})
}

func (p *Prism) convex() bool { return p.isConvex }

func (p *Prism) normal(q r3.Vec) r3.Vec {
	_, g := p.sdGrad(q)
	return g
}

// Closest returns the surface point nearest to p.
func (p *Prism) Closest(q r3.Vec) r3.Vec {
	d, cx, cy, _ := p.sd2(q.X, q.Y)
	dz := p.dz(q.Z)
	zc := math.Max(p.zmin, math.Min(p.zmax, q.Z))
	switch {
	case d > 0 || dz > 0:
		if d > 0 {
			return r3.Vec{X: cx, Y: cy, Z: zc}
		}
		return r3.Vec{X: q.X, Y: q.Y, Z: zc}
	case d >= dz:
		return r3.Vec{X: cx, Y: cy, Z: q.Z}
	case q.Z < 0.5*(p.zmin+p.zmax):
		return r3.Vec{X: q.X, Y: q.Y, Z: p.zmin}
	default:
		return r3.Vec{X: q.X, Y: q.Y, Z: p.zmax}
	}
}

// Contains reports whether q is inside the prism or on its surface.
func (p *Prism) Contains(q r3.Vec) bool { return p.SignedDistance(q) <= 0 }

// Bounds returns the footprint's bounding rectangle times [ZMin, ZMax].
func (p *Prism) Bounds() AABB { return p.bounds }

// Volume returns the footprint area (shoelace formula) times the height.
func (p *Prism) Volume() float64 { return p.area * (p.zmax - p.zmin) }

// inflatedVolume returns the volume of {q : sd(q) <= m}. Slicing at height
// z gives the footprint offset by m within [ZMin, ZMax] and by
// sqrt(m² − δ²) at δ above the top or below the bottom, so with A2(ρ) the
// area of the footprint offset by ρ,
//
//	V = h·A2(m) + 2∫₀^m A2(sqrt(m² − δ²)) dδ.
//
// For a convex footprint A2(ρ) = A + Pρ + πρ² and V is the Steiner formula
// Ah + (2A + Ph)m + (πh + πP/2)m² + 4/3·πm³. For a non-convex footprint
// A2(ρ) = A + Pρ + cρ² with c = Σ_convex φᵢ/2 − Σ_reflex tan(|φᵢ|/2) over
// the turning angles φᵢ at the corners, as long as ρ is at most the
// validity radius of offsetCoeff; V then has the same form with π replaced
// by c in the m² and m³ terms. For larger margins A2 is integrated
// numerically (offsetAreaNumeric) and the cap integral by composite
// Gauss–Legendre; the tests hold the result to a relative 1e-6 of exact
// values.
func (p *Prism) inflatedVolume(m float64) float64 {
	h := p.zmax - p.zmin
	A, P := p.area, p.per
	if m == 0 {
		return A * h
	}
	if p.isConvex {
		return A*h + (2*A+P*h)*m + (math.Pi*h+math.Pi*P/2)*m*m + 4.0/3*math.Pi*m*m*m
	}
	c, valid := p.offsetCoeff()
	if m <= valid {
		return A*h + (2*A+P*h)*m + (c*h+math.Pi*P/2)*m*m + 4.0/3*c*m*m*m
	}
	area := func(rho float64) float64 {
		if rho <= valid {
			return A + P*rho + c*rho*rho
		}
		return p.offsetAreaNumeric(rho)
	}
	// δ = m·sin θ: ∫₀^m A2(sqrt(m²−δ²)) dδ = ∫₀^{π/2} A2(m cos θ) m cos θ dθ.
	// Below θv = acos(valid/m) the area is numerical and may have kinks
	// where offset pieces first meet: many panels there; above, one panel.
	f := func(th float64) float64 {
		ct := math.Cos(th)
		return area(m*ct) * m * ct
	}
	thv := math.Acos(valid / m)
	const panels = 24
	var caps float64
	for k := 0; k < panels; k++ {
		caps += quad.Fixed(f, thv*float64(k)/panels, thv*float64(k+1)/panels, 8, quad.Legendre{}, 0)
	}
	caps += quad.Fixed(f, thv, math.Pi/2, 16, quad.Legendre{}, 0)
	return h*area(m) + 2*caps
}

// offsetCoeff returns c of the offset-area formula A + Pρ + cρ² and the
// largest ρ for which this implementation vouches for it: half the smallest
// distance between non-neighbouring edges, and for each edge its length over
// the sum of the tangents of the reflex half-turns at its two ends (so that
// the overlaps of neighbouring edge strips at reflex corners stay apart).
func (p *Prism) offsetCoeff() (c, valid float64) {
	n := len(p.pts)
	tans := make([]float64, n) // tan(|φ|/2) at reflex corner i, else 0
	for i := range p.pts {
		prev := (i + n - 1) % n
		a := r2.Vec{X: p.ex[prev], Y: p.ey[prev]}
		b := r2.Vec{X: p.ex[i], Y: p.ey[i]}
		phi := math.Atan2(r2.Cross(a, b), r2.Dot(a, b)) // turning angle at corner i
		if phi >= 0 {
			c += phi / 2
		} else {
			tans[i] = math.Tan(-phi / 2)
			c -= tans[i]
		}
	}
	valid = math.Inf(1)
	for i := 0; i < n; i++ {
		l := 1 / math.Sqrt(p.inv[i])
		if t := tans[i] + tans[(i+1)%n]; t > 0 {
			valid = math.Min(valid, l/t)
		}
		a, b := p.pts[i], p.pts[(i+1)%n]
		for j := i + 2; j < n; j++ {
			if i == 0 && j == n-1 {
				continue
			}
			valid = math.Min(valid, 0.5*segSegDist2D(a, b, p.pts[j], p.pts[(j+1)%n]))
		}
	}
	return c, valid
}

// segSegDist2D is the distance between two non-crossing plane segments.
func segSegDist2D(a, b, c, d r2.Vec) float64 {
	return math.Min(math.Min(pointSegDist2D(a, c, d), pointSegDist2D(b, c, d)),
		math.Min(pointSegDist2D(c, a, b), pointSegDist2D(d, a, b)))
}

func pointSegDist2D(p, a, b r2.Vec) float64 {
	ab := r2.Sub(b, a)
	t := r2.Dot(r2.Sub(p, a), ab) / r2.Norm2(ab)
	t = math.Max(0, math.Min(1, t))
	return r2.Norm(r2.Sub(p, r2.Add(a, r2.Scale(t, ab))))
}

// offsetAreaNumeric returns the area of {x : sd2(x) <= rho} by integrating
// over y the exact length of each horizontal chord: the union of the
// footprint's own chord intervals and of the chords of every edge's
// ρ-neighbourhood (a stadium, whose chord is one interval).
//
// The chord length is analytic between the heights where two of the
// boundary curves involved (footprint edges, the straight sides of the
// stadiums, the circles of radius ρ around the corners) meet or end, so the
// y range is cut at all of those (O(n²) cuts) and each piece is integrated
// by 12-point Gauss–Legendre after the substitution y = a + (b−a)(1−cos θ)/2,
// which absorbs the square-root behaviour of circle chords at the ends.
func (p *Prism) offsetAreaNumeric(rho float64) float64 {
	if rho <= 0 {
		return p.area
	}
	n := len(p.pts)
	type seg struct{ a, b r2.Vec }
	var segs []seg
	for i, v := range p.pts {
		w := p.pts[(i+1)%n]
		d := r2.Sub(w, v)
		nrm := r2.Scale(rho/r2.Norm(d), r2.Vec{X: d.Y, Y: -d.X})
		segs = append(segs, seg{v, w}, seg{r2.Add(v, nrm), r2.Add(w, nrm)}, seg{r2.Sub(v, nrm), r2.Sub(w, nrm)})
	}
	var cuts []float64
	for _, v := range p.pts {
		cuts = append(cuts, v.Y-rho, v.Y+rho)
	}
	for i, s := range segs {
		cuts = append(cuts, s.a.Y, s.b.Y)
		for _, t := range segs[i+1:] {
			if y, ok := segSegY(s.a, s.b, t.a, t.b); ok {
				cuts = append(cuts, y)
			}
		}
		for _, c := range p.pts {
			cuts = circleSegY(cuts, c, rho, s.a, s.b)
		}
	}
	for i, c := range p.pts {
		for _, d := range p.pts[i+1:] {
			cuts = circleCircleY(cuts, c, d, rho)
		}
	}
	sort.Float64s(cuts)
	var iv [][2]float64
	var xs []float64
	chord := func(y float64) float64 {
		iv, xs = iv[:0], xs[:0]
		for i, v := range p.pts {
			w := p.pts[(i+1)%n]
			if (v.Y > y) != (w.Y > y) {
				xs = append(xs, v.X+(y-v.Y)*(w.X-v.X)/(w.Y-v.Y))
			}
			if lo, hi, ok := stadiumChord(v, w, rho, y); ok {
				iv = append(iv, [2]float64{lo, hi})
			}
		}
		sort.Float64s(xs)
		for k := 0; k+1 < len(xs); k += 2 {
			iv = append(iv, [2]float64{xs[k], xs[k+1]})
		}
		sort.Slice(iv, func(a, b int) bool { return iv[a][0] < iv[b][0] })
		var total float64
		curLo, curHi := math.Inf(-1), math.Inf(-1)
		for _, s := range iv {
			if s[0] > curHi {
				if curHi > curLo {
					total += curHi - curLo
				}
				curLo, curHi = s[0], s[1]
			} else if s[1] > curHi {
				curHi = s[1]
			}
		}
		if curHi > curLo {
			total += curHi - curLo
		}
		return total
	}
	var area float64
	for k := 0; k+1 < len(cuts); k++ {
		a, b := cuts[k], cuts[k+1]
		if b-a <= 1e-14*(1+math.Abs(a)) {
			continue
		}
		area += quad.Fixed(func(th float64) float64 {
			return chord(a+0.5*(b-a)*(1-math.Cos(th))) * 0.5 * (b - a) * math.Sin(th)
		}, 0, math.Pi, 12, quad.Legendre{}, 0)
	}
	return area
}

// segSegY returns the height at which segments ab and cd cross, if they do
// at a single point.
func segSegY(a, b, c, d r2.Vec) (float64, bool) {
	r, s := r2.Sub(b, a), r2.Sub(d, c)
	den := r2.Cross(r, s)
	if den == 0 {
		return 0, false
	}
	ca := r2.Sub(c, a)
	t, u := r2.Cross(ca, s)/den, r2.Cross(ca, r)/den
	if t < 0 || t > 1 || u < 0 || u > 1 {
		return 0, false
	}
	return a.Y + t*r.Y, true
}

// circleSegY appends the heights at which the circle (c, rho) meets segment
// ab.
func circleSegY(ys []float64, c r2.Vec, rho float64, a, b r2.Vec) []float64 {
	d, f := r2.Sub(b, a), r2.Sub(a, c)
	A, B, C := r2.Dot(d, d), 2*r2.Dot(f, d), r2.Dot(f, f)-rho*rho
	disc := B*B - 4*A*C
	if disc < 0 {
		return ys
	}
	sq := math.Sqrt(disc)
	for _, t := range [2]float64{(-B - sq) / (2 * A), (-B + sq) / (2 * A)} {
		if t >= 0 && t <= 1 {
			ys = append(ys, a.Y+t*d.Y)
		}
	}
	return ys
}

// circleCircleY appends the heights at which the circles of radius rho
// around c and d meet.
func circleCircleY(ys []float64, c, d r2.Vec, rho float64) []float64 {
	v := r2.Sub(d, c)
	l := r2.Norm(v)
	if l == 0 || l > 2*rho {
		return ys
	}
	h := math.Sqrt(math.Max(0, rho*rho-l*l/4))
	mid := r2.Add(c, r2.Scale(0.5, v))
	off := h * v.X / l // perpendicular (−v.Y, v.X)/l scaled by h, y component
	return append(ys, mid.Y+off, mid.Y-off)
}

// stadiumChord returns the chord at height y of the set of points within
// rho of segment vw.
func stadiumChord(v, w r2.Vec, rho, y float64) (lo, hi float64, ok bool) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, c := range [2]r2.Vec{v, w} {
		if dy := y - c.Y; math.Abs(dy) <= rho {
			h := math.Sqrt(rho*rho - dy*dy)
			lo, hi = math.Min(lo, c.X-h), math.Max(hi, c.X+h)
		}
	}
	// The band {x : 0 <= (x−v)·d <= |d|², |(x−v)×d| <= rho|d|} on the line y.
	d := r2.Sub(w, v)
	l := r2.Norm(d)
	dy := y - v.Y
	a0, a1 := math.Inf(-1), math.Inf(1) // range of x − v.X
	// clip keeps the X with c0 <= coef·X <= c1.
	clip := func(coef, c0, c1 float64) {
		if coef == 0 {
			if c0 > 0 || c1 < 0 {
				a0, a1 = 1, 0
			}
			return
		}
		x0, x1 := c0/coef, c1/coef
		if x0 > x1 {
			x0, x1 = x1, x0
		}
		a0, a1 = math.Max(a0, x0), math.Min(a1, x1)
	}
	// along: X·d.x + dy·d.y in [0, l²]
	clip(d.X, -dy*d.Y, l*l-dy*d.Y)
	// across: X·d.y − dy·d.x in [−rho·l, rho·l]
	clip(d.Y, -rho*l+dy*d.X, rho*l+dy*d.X)
	if a0 <= a1 {
		lo, hi = math.Min(lo, v.X+a0), math.Max(hi, v.X+a1)
	}
	return lo, hi, lo <= hi
}

// triangulatePrism cuts a prism with a non-convex footprint into triangular
// prisms whose union is the prism. It returns nil (the path query then uses
// Lipschitz bounds only) unless the triangles' areas add up to the
// footprint's area to 1e-9 relative: the pieces' distances are only a valid
// bound when they cover the footprint exactly.
func triangulatePrism(pts []r2.Vec, zmin, zmax, area float64) []*Prism {
	var pieces []*Prism
	var sum float64
	for _, tri := range earClip(pts) {
		// earClip only returns counter-clockwise triangles of distinct
		// corners; a sliver is still a valid (convex) piece.
		piece := buildPrism(tri[:], zmin, zmax, shoelace(tri[:]))
		piece.isConvex = true
		pieces = append(pieces, piece)
		sum += piece.area
	}
	if math.Abs(sum-area) > 1e-9*area {
		return nil
	}
	return pieces
}

// earClip triangulates a simple counter-clockwise polygon by ear clipping
// (O(n³), for configuration time; footprints have tens of points).
// Collinear corners are never clipped as ears; it returns nil when it
// cannot finish (possible only through rounding).
func earClip(pts []r2.Vec) [][3]r2.Vec {
	idx := make([]int, len(pts))
	for i := range idx {
		idx[i] = i
	}
	var tris [][3]r2.Vec
	for len(idx) > 3 {
		n := len(idx)
		clipped := false
		for i := 0; i < n && !clipped; i++ {
			a, b, c := pts[idx[(i+n-1)%n]], pts[idx[i]], pts[idx[(i+1)%n]]
			if orient(a, b, c) <= 0 {
				continue
			}
			ear := true
			for _, j := range idx {
				q := pts[j]
				if q == a || q == b || q == c {
					continue
				}
				if orient(a, b, q) >= 0 && orient(b, c, q) >= 0 && orient(c, a, q) >= 0 {
					ear = false
					break
				}
			}
			if ear {
				tris = append(tris, [3]r2.Vec{a, b, c})
				idx = append(idx[:i], idx[i+1:]...)
				clipped = true
			}
		}
		if !clipped {
			return nil
		}
	}
	if orient(pts[idx[0]], pts[idx[1]], pts[idx[2]]) > 0 {
		tris = append(tris, [3]r2.Vec{pts[idx[0]], pts[idx[1]], pts[idx[2]]})
	}
	return tris
}

// refineBound returns a lower bound of f(s) = sd(p0 + s·dp) − (r0 + s·dr) − m
// over s ∈ [a, b], given fa = f(a) and fb = f(b), for a non-convex prism,
// where the Lipschitz bound alone would need many subdivisions (a hand
// moving along a wall, inside or outside). It returns −Inf when it has
// nothing to offer.
//
// Inside, sd = −min_k c_k with c_k the distances to the wall of edge k (the
// plane distance to the edge) and to the two caps, all convex; so at inside
// points f >= −c_k − R − m for every k, a concave function of s whose
// minimum over [a, b] is at an end: the largest of these end minima, lbIn,
// bounds f at every inside point. Outside, sd is the minimum of the
// triangular pieces' signed distances (the distance to a union is the
// minimum of the distances), each convex, so the smallest of the pieces'
// tangent bounds, lbOut, bounds f at every outside point. When those
// bounds also show every piece's signed distance positive on the interval,
// no point of it is inside and lbOut is the answer; otherwise it is
// min(lbOut, lbIn). When an end is inside, the pieces are not consulted:
// outside points have f >= −R − m there, which is used instead of lbOut.
func (p *Prism) refineBound(p0, dp r3.Vec, r0, dr, m, a, b, fa, fb float64) float64 {
	if len(p.pieces) == 0 {
		return math.Inf(-1)
	}
	pa, pb := r3.Add(p0, r3.Scale(a, dp)), r3.Add(p0, r3.Scale(b, dp))
	ra, rb := r0+a*dr, r0+b*dr
	var lbOut float64
	if fa+ra+m < 0 || fb+rb+m < 0 {
		lbOut = -max(ra, rb) - m // an end is inside
	} else {
		ls := norm(dp) + math.Abs(dr)
		segBox := AABB{
			Min: r3.Vec{X: min(pa.X, pb.X), Y: min(pa.Y, pb.Y), Z: min(pa.Z, pb.Z)},
			Max: r3.Vec{X: max(pa.X, pb.X), Y: max(pa.Y, pb.Y), Z: max(pa.Z, pb.Z)},
		}
		outside := true
		lbOut = math.Inf(1)
		for _, q := range p.pieces {
			// A piece whose bounds are farther than the best bound so far
			// can neither lower it nor hold an inside point.
			if d := segBox.Distance(q.bounds); d > 0 && d-max(ra, rb)-m >= lbOut {
				continue
			}
			sa, ga := q.sdGrad(pa)
			sb, gb := q.sdGrad(pb)
			da, db := r3.Dot(ga, dp), r3.Dot(gb, dp)
			it := interval{a: a, b: b, ga: sa, gb: sb, da: da, db: db}
			if it.lowerBound(norm(dp), true, false) <= 0 {
				outside = false
			}
			it = interval{a: a, b: b, ga: sa - ra - m, gb: sb - rb - m, da: da - dr, db: db - dr}
			lbOut = min(lbOut, it.lowerBound(ls, true, false))
		}
		if outside {
			return lbOut
		}
	}
	lbIn := math.Inf(-1)
	for i := range p.pts {
		ca := p.edgeDist(i, pa.X, pa.Y)
		cb := p.edgeDist(i, pb.X, pb.Y)
		lbIn = max(lbIn, min(-ca-ra, -cb-rb))
	}
	lbIn = max(lbIn, min(-math.Abs(pa.Z-p.zmax)-ra, -math.Abs(pb.Z-p.zmax)-rb))
	lbIn = max(lbIn, min(-math.Abs(pa.Z-p.zmin)-ra, -math.Abs(pb.Z-p.zmin)-rb))
	return min(lbOut, lbIn-m)
}

// edgeDist is the plane distance from (x, y) to edge i.
func (p *Prism) edgeDist(i int, x, y float64) float64 {
	vx, vy := p.pts[i].X, p.pts[i].Y
	wx, wy := x-vx, y-vy
	t := (wx*p.ex[i] + wy*p.ey[i]) * p.inv[i]
	t = max(0, min(1, t))
	dx, dy := wx-t*p.ex[i], wy-t*p.ey[i]
	return math.Sqrt(dx*dx + dy*dy)
}
