package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Sphere is a solid ball.
type Sphere struct {
	c r3.Vec
	r float64
}

// NewSphere returns the ball of radius r > 0 centred at c.
func NewSphere(c r3.Vec, r float64) (*Sphere, error) {
	if !finiteVec(c) {
		return nil, &ShapeError{Field: "center", Msg: "NaN/Inf"}
	}
	if err := checkRadius(r); err != nil {
		return nil, err
	}
	return &Sphere{c: c, r: r}, nil
}

func checkRadius(r float64) error {
	if !finite(r) {
		return &ShapeError{Field: "radius", Msg: "NaN/Inf"}
	}
	if r <= 0 {
		return &ShapeError{Field: "radius", Msg: "must be > 0, got " + ftoa(r)}
	}
	return nil
}

// Center returns the centre.
func (s *Sphere) Center() r3.Vec { return s.c }

// Radius returns the radius.
func (s *Sphere) Radius() float64 { return s.r }

// Kind returns "sphere".
func (s *Sphere) Kind() string { return "sphere" }

// SignedDistance returns |p − c| − r.
func (s *Sphere) SignedDistance(p r3.Vec) float64 { return norm(r3.Sub(p, s.c)) - s.r }

func (s *Sphere) sdGrad(p r3.Vec) (float64, r3.Vec) {
	d := r3.Sub(p, s.c)
	n := norm(d)
	if n == 0 {
		return -s.r, r3.Vec{} // 0 is a subgradient at the centre
	}
	return n - s.r, r3.Scale(1/n, d)
}
func (s *Sphere) convex() bool { return true }
func (s *Sphere) normal(p r3.Vec) r3.Vec {
	return unitOr(r3.Sub(p, s.c), r3.Vec{Z: 1})
}

// Closest returns the surface point nearest to p; for the centre itself,
// the top of the sphere.
func (s *Sphere) Closest(p r3.Vec) r3.Vec { return r3.Add(s.c, r3.Scale(s.r, s.normal(p))) }

// Contains reports whether |p − c| <= r.
func (s *Sphere) Contains(p r3.Vec) bool { return r3.Norm2(r3.Sub(p, s.c)) <= s.r*s.r }

// Bounds returns the cube of side 2r around the centre.
func (s *Sphere) Bounds() AABB {
	e := r3.Vec{X: s.r, Y: s.r, Z: s.r}
	return AABB{Min: r3.Sub(s.c, e), Max: r3.Add(s.c, e)}
}

// Volume returns 4/3·π·r³.
func (s *Sphere) Volume() float64 { return 4.0 / 3 * math.Pi * s.r * s.r * s.r }

func (s *Sphere) inflatedVolume(m float64) float64 {
	r := s.r + m
	return 4.0 / 3 * math.Pi * r * r * r
}
