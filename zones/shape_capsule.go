package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Capsule is the set of points within a radius of the segment AB (a
// cylinder with hemispherical ends). A and B may coincide (a ball).
type Capsule struct {
	a, b r3.Vec
	r    float64
	d    r3.Vec  // b − a
	dd   float64 // |d|²
}

// NewCapsule returns the capsule of radius r > 0 around segment ab.
func NewCapsule(a, b r3.Vec, r float64) (*Capsule, error) {
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
	return &Capsule{a: a, b: b, r: r, d: d, dd: r3.Norm2(d)}, nil
}

// A returns the first end point of the axis segment.
func (c *Capsule) A() r3.Vec { return c.a }

// B returns the second end point of the axis segment.
func (c *Capsule) B() r3.Vec { return c.b }

// Radius returns the radius.
func (c *Capsule) Radius() float64 { return c.r }

// Kind returns "capsule".
func (c *Capsule) Kind() string { return "capsule" }

// axisPoint returns the point of segment AB nearest to p.
func (c *Capsule) axisPoint(p r3.Vec) r3.Vec {
	if c.dd == 0 {
		return c.a
	}
	t := r3.Dot(r3.Sub(p, c.a), c.d) / c.dd
	t = max(0, min(1, t))
	return r3.Add(c.a, r3.Scale(t, c.d))
}

// SignedDistance returns dist(p, AB) − r.
func (c *Capsule) SignedDistance(p r3.Vec) float64 {
	return norm(r3.Sub(p, c.axisPoint(p))) - c.r
}

func (c *Capsule) sdGrad(p r3.Vec) (float64, r3.Vec) {
	v := r3.Sub(p, c.axisPoint(p))
	n := norm(v)
	if n == 0 {
		return -c.r, r3.Vec{} // 0 is a subgradient on the axis
	}
	return n - c.r, r3.Scale(1/n, v)
}
func (c *Capsule) convex() bool { return true }
func (c *Capsule) normal(p r3.Vec) r3.Vec {
	v := r3.Sub(p, c.axisPoint(p))
	if r3.Norm2(v) > 0 {
		return r3.Unit(v)
	}
	if c.dd == 0 {
		return r3.Vec{Z: 1}
	}
	return anyPerp(r3.Scale(1/math.Sqrt(c.dd), c.d))
}

// Closest returns the surface point nearest to p. For a point on the axis
// every direction perpendicular to it is equally near; one is chosen.
func (c *Capsule) Closest(p r3.Vec) r3.Vec {
	return r3.Add(c.axisPoint(p), r3.Scale(c.r, c.normal(p)))
}

// Contains reports whether dist(p, AB) <= r.
func (c *Capsule) Contains(p r3.Vec) bool {
	return r3.Norm2(r3.Sub(p, c.axisPoint(p))) <= c.r*c.r
}

// Bounds returns the exact bounding box: the end points' box grown by r.
func (c *Capsule) Bounds() AABB {
	e := r3.Vec{X: c.r, Y: c.r, Z: c.r}
	return AABB{
		Min: r3.Sub(r3.Vec{X: min(c.a.X, c.b.X), Y: min(c.a.Y, c.b.Y), Z: min(c.a.Z, c.b.Z)}, e),
		Max: r3.Add(r3.Vec{X: max(c.a.X, c.b.X), Y: max(c.a.Y, c.b.Y), Z: max(c.a.Z, c.b.Z)}, e),
	}
}

// Volume returns π·r²·|AB| + 4/3·π·r³.
func (c *Capsule) Volume() float64 { return c.inflatedVolume(0) }

func (c *Capsule) inflatedVolume(m float64) float64 {
	r := c.r + m
	return math.Pi*r*r*math.Sqrt(c.dd) + 4.0/3*math.Pi*r*r*r
}
