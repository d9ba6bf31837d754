package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Cylinder is a solid right circular cylinder between two end points (any
// axis direction).
type Cylinder struct {
	a, b r3.Vec
	r    float64
	u    r3.Vec  // unit axis a→b
	l    float64 // |b − a|
}

// NewCylinder returns the cylinder of radius r > 0 whose axis runs from a
// to b (a ≠ b).
func NewCylinder(a, b r3.Vec, r float64) (*Cylinder, error) {
	if !finiteVec(a) {
		return nil, &ShapeError{Field: "a", Msg: "NaN/Inf"}
	}
	if !finiteVec(b) {
		return nil, &ShapeError{Field: "b", Msg: "NaN/Inf"}
	}
	if err := checkRadius(r); err != nil {
		return nil, err
	}
	d := r3.Sub(b, a)
	l := norm(d)
	if l == 0 {
		return nil, &ShapeError{Field: "b", Msg: "zero volume: a and b coincide"}
	}
	return &Cylinder{a: a, b: b, r: r, u: r3.Scale(1/l, d), l: l}, nil
}

// A returns the centre of the first end disc.
func (c *Cylinder) A() r3.Vec { return c.a }

// B returns the centre of the second end disc.
func (c *Cylinder) B() r3.Vec { return c.b }

// Radius returns the radius.
func (c *Cylinder) Radius() float64 { return c.r }

// Kind returns "cylinder".
func (c *Cylinder) Kind() string { return "cylinder" }

// parts returns, for p, the axial coordinate y from a, the radial vector v
// (perpendicular to the axis) and its length rho.
func (c *Cylinder) parts(p r3.Vec) (y float64, v r3.Vec, rho float64) {
	w := r3.Sub(p, c.a)
	y = r3.Dot(w, c.u)
	v = r3.Sub(w, r3.Scale(y, c.u))
	return y, v, norm(v)
}

// SignedDistance returns the exact Euclidean signed distance to the
// cylinder's surface (side, end discs and rims), negative inside.
func (c *Cylinder) SignedDistance(p r3.Vec) float64 {
	y, _, rho := c.parts(p)
	return sdCombine2(rho-c.r, math.Abs(y-0.5*c.l)-0.5*c.l)
}

func (c *Cylinder) sdGrad(p r3.Vec) (float64, r3.Vec) {
	y, v, rho := c.parts(p)
	var er r3.Vec // zero on the axis: a valid subgradient there
	if rho > 0 {
		er = r3.Scale(1/rho, v)
	}
	ez := r3.Scale(sgn(y-0.5*c.l), c.u)
	return combineGrad(rho-c.r, math.Abs(y-0.5*c.l)-0.5*c.l, er, ez)
}
func (c *Cylinder) convex() bool { return true }
func (c *Cylinder) normal(p r3.Vec) r3.Vec {
	y, v, rho := c.parts(p)
	er := anyPerp(c.u)
	if rho > 0 {
		er = r3.Scale(1/rho, v)
	}
	ez := r3.Scale(sgn(y-0.5*c.l), c.u)
	_, g := combineGrad(rho-c.r, math.Abs(y-0.5*c.l)-0.5*c.l, er, ez)
	return g
}

// Closest returns the surface point nearest to p. On the axis, where every
// radial direction is equally near, one is chosen.
func (c *Cylinder) Closest(p r3.Vec) r3.Vec {
	y, v, rho := c.parts(p)
	er := anyPerp(c.u)
	if rho > 0 {
		er = r3.Scale(1/rho, v)
	}
	dr, dz := rho-c.r, math.Abs(y-0.5*c.l)-0.5*c.l
	switch {
	case dr > 0 || dz > 0: // outside: clamp in the (radial, axial) plane
		rho = min(rho, c.r)
		y = max(0, min(c.l, y))
	case dr >= dz: // inside, nearer the side
		rho = c.r
	default: // inside, nearer an end disc
		if y < 0.5*c.l {
			y = 0
		} else {
			y = c.l
		}
	}
	return r3.Add(c.a, r3.Add(r3.Scale(y, c.u), r3.Scale(rho, er)))
}

// Contains reports whether p is inside the cylinder or on its surface.
func (c *Cylinder) Contains(p r3.Vec) bool {
	y, _, rho := c.parts(p)
	return rho <= c.r && y >= 0 && y <= c.l
}

// Bounds returns the exact bounding box: each end disc extends
// r·sqrt(1 − u_i²) along axis i, u the unit axis.
func (c *Cylinder) Bounds() AABB {
	e := r3.Vec{
		X: c.r * math.Sqrt(max(0, 1-c.u.X*c.u.X)),
		Y: c.r * math.Sqrt(max(0, 1-c.u.Y*c.u.Y)),
		Z: c.r * math.Sqrt(max(0, 1-c.u.Z*c.u.Z)),
	}
	return AABB{
		Min: r3.Sub(r3.Vec{X: min(c.a.X, c.b.X), Y: min(c.a.Y, c.b.Y), Z: min(c.a.Z, c.b.Z)}, e),
		Max: r3.Add(r3.Vec{X: max(c.a.X, c.b.X), Y: max(c.a.Y, c.b.Y), Z: max(c.a.Z, c.b.Z)}, e),
	}
}

// Volume returns π·r²·h.
func (c *Cylinder) Volume() float64 { return math.Pi * c.r * c.r * c.l }

// inflatedVolume is the Steiner formula for a cylinder of radius r and
// height h: πr²h + (2πrh + 2πr²)·m + (πh + π²r)·m² + 4/3·π·m³.
func (c *Cylinder) inflatedVolume(m float64) float64 {
	r, h := c.r, c.l
	return math.Pi*r*r*h + (2*math.Pi*r*h+2*math.Pi*r*r)*m + (math.Pi*h+math.Pi*math.Pi*r)*m*m + 4.0/3*math.Pi*m*m*m
}
