package zones

import (
	"math"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"
)

// ShapeError is a constructor's complaint about one parameter of a shape.
// Field is the key relative to the shape's section as written in the cell
// file ("radius", "min", "max", "size", "center", "a", "b", "quat",
// "rotation", "footprint", "footprint[3]", "zmin", "zmax"), so that the
// config loader can attach the file position; Msg says what is wrong.
type ShapeError struct {
	Field string
	Msg   string
}

func (e *ShapeError) Error() string {
	if e.Field == "" {
		return e.Msg
	}
	return e.Field + ": " + e.Msg
}

// evaluator is implemented by every shape of this package: the signed
// distance together with a subgradient, which the path query needs.
type evaluator interface {
	Shape
	// sdGrad returns the signed distance at p and a subgradient g of the
	// signed distance there (|g| <= 1; the unit gradient wherever the
	// signed distance is differentiable). For a convex shape g satisfies
	// sd(x) >= sd(p) + g·(x − p) for every x.
	sdGrad(p r3.Vec) (float64, r3.Vec)
	// convex reports whether the shape is convex, in which case the signed
	// distance is a convex function and sdGrad's g is a true subgradient.
	convex() bool
	// normal returns the outward unit normal used to inflate the surface at
	// the surface point nearest to p; defined everywhere, also on edges and
	// on the medial axis.
	normal(p r3.Vec) r3.Vec
}

// foreign adapts a Shape from outside the package to the evaluator
// interface: no subgradient, treated as non-convex.
type foreign struct{ Shape }

func (f foreign) sdGrad(p r3.Vec) (float64, r3.Vec) { return f.SignedDistance(p), r3.Vec{} }
func (f foreign) convex() bool                      { return false }
func (f foreign) normal(p r3.Vec) r3.Vec {
	c := f.Closest(p)
	d := f.SignedDistance(p)
	if d == 0 {
		return r3.Vec{Z: 1}
	}
	return r3.Scale(1/d, r3.Sub(p, c))
}

// asEvaluator returns s as an evaluator.
func asEvaluator(s Shape) evaluator {
	if e, ok := s.(evaluator); ok {
		return e
	}
	return foreign{s}
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func finiteVec(v r3.Vec) bool { return finite(v.X) && finite(v.Y) && finite(v.Z) }

// ftoa formats a number for error messages, shortest exact form.
func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// unitOr returns v/|v|, or fallback when v is zero.
func unitOr(v, fallback r3.Vec) r3.Vec {
	n := norm(v)
	if n == 0 {
		return fallback
	}
	return r3.Scale(1/n, v)
}

// anyPerp returns a unit vector perpendicular to the unit vector u.
func anyPerp(u r3.Vec) r3.Vec {
	// Cross with the coordinate axis least aligned with u.
	ax := r3.Vec{X: 1}
	if math.Abs(u.Y) < math.Abs(u.X) && math.Abs(u.Y) <= math.Abs(u.Z) {
		ax = r3.Vec{Y: 1}
	} else if math.Abs(u.Z) < math.Abs(u.X) {
		ax = r3.Vec{Z: 1}
	}
	return r3.Unit(r3.Cross(u, ax))
}

// Grow returns the box grown by m on every side.
func (b AABB) Grow(m float64) AABB {
	d := r3.Vec{X: m, Y: m, Z: m}
	return AABB{Min: r3.Sub(b.Min, d), Max: r3.Add(b.Max, d)}
}

// Contains reports whether p lies in the box (boundary included).
func (b AABB) Contains(p r3.Vec) bool {
	return p.X >= b.Min.X && p.X <= b.Max.X &&
		p.Y >= b.Min.Y && p.Y <= b.Max.Y &&
		p.Z >= b.Min.Z && p.Z <= b.Max.Z
}

// Distance returns the Euclidean distance between the two boxes, zero when
// they overlap or touch (and when a coordinate is NaN, so that such a box
// never reads as far).
func (b AABB) Distance(c AABB) float64 {
	return math.Sqrt(gap2(b.Min.X, b.Max.X, c.Min.X, c.Max.X) + gap2(b.Min.Y, b.Max.Y, c.Min.Y, c.Max.Y) +
		gap2(b.Min.Z, b.Max.Z, c.Min.Z, c.Max.Z))
}

// gap2 is the squared gap between the intervals [a0, a1] and [b0, b1], 0
// when they overlap (plain comparisons: the built-in max orders NaNs and
// signed zeros, which costs on this path).
func gap2(a0, a1, b0, b1 float64) float64 {
	if d := a0 - b1; d > 0 {
		return d * d
	}
	if d := b0 - a1; d > 0 {
		return d * d
	}
	return 0
}

// sdCombine2 is the exact signed distance of the intersection of two
// orthogonal slabs-like conditions whose separate signed distances are u and
// v along perpendicular directions (an extrusion: a 2D profile times an
// interval). It is min(max(u,v),0) + |(max(u,0), max(v,0))|.
func sdCombine2(u, v float64) float64 {
	ou, ov := max(u, 0), max(v, 0)
	return min(max(u, v), 0) + math.Sqrt(ou*ou+ov*ov)
}

// combineGrad returns the signed distance and gradient of an extrusion from
// the two partial signed distances u, v and their unit gradient directions
// gu, gv (perpendicular to each other). When both partial distances are
// negative the subgradient of the active one is returned; on a rim where
// both are zero, gu.
func combineGrad(u, v float64, gu, gv r3.Vec) (float64, r3.Vec) {
	if u > 0 || v > 0 {
		ou, ov := max(u, 0), max(v, 0)
		h := math.Sqrt(ou*ou + ov*ov)
		return h, r3.Add(r3.Scale(ou/h, gu), r3.Scale(ov/h, gv))
	}
	if u >= v {
		return u, gu
	}
	return v, gv
}

// norm is |v| without r3.Norm's overflow guard (math.Hypot), which is
// several times slower; coordinates here are metres, far from overflow.
func norm(v r3.Vec) float64 { return math.Sqrt(v.X*v.X + v.Y*v.Y + v.Z*v.Z) }
