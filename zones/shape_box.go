package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Box is an axis-aligned box.
type Box struct {
	min, max r3.Vec
	c, h     r3.Vec // centre and half extents
}

// NewBox returns the axis-aligned box with corners min and max. Every
// coordinate must be finite and min must be below max on every axis.
func NewBox(min, max r3.Vec) (*Box, error) {
	if !finiteVec(min) {
		return nil, &ShapeError{Field: "min", Msg: "NaN/Inf"}
	}
	if !finiteVec(max) {
		return nil, &ShapeError{Field: "max", Msg: "NaN/Inf"}
	}
	if err := checkMinMax(min, max); err != nil {
		return nil, err
	}
	return &Box{
		min: min, max: max,
		c: r3.Scale(0.5, r3.Add(min, max)),
		h: r3.Scale(0.5, r3.Sub(max, min)),
	}, nil
}

func checkMinMax(min, max r3.Vec) error {
	mn := [3]float64{min.X, min.Y, min.Z}
	mx := [3]float64{max.X, max.Y, max.Z}
	for i, ax := range [3]string{"x", "y", "z"} {
		switch {
		case mn[i] > mx[i]:
			return &ShapeError{Field: "min", Msg: "min." + ax + " " + ftoa(mn[i]) + " is above max." + ax + " " + ftoa(mx[i])}
		case mn[i] == mx[i]:
			return &ShapeError{Field: "max", Msg: "zero volume: min." + ax + " = max." + ax + " = " + ftoa(mn[i])}
		}
	}
	return nil
}

// Min returns the lower corner.
func (b *Box) Min() r3.Vec { return b.min }

// Max returns the upper corner.
func (b *Box) Max() r3.Vec { return b.max }

// Kind returns "box".
func (b *Box) Kind() string { return "box" }

// SignedDistance returns the exact Euclidean signed distance to the box
// surface, negative inside.
func (b *Box) SignedDistance(p r3.Vec) float64 {
	return boxSD(r3.Sub(p, b.c), b.h)
}

func (b *Box) sdGrad(p r3.Vec) (float64, r3.Vec) { return boxSDGrad(r3.Sub(p, b.c), b.h) }
func (b *Box) convex() bool                      { return true }
func (b *Box) normal(p r3.Vec) r3.Vec            { return boxNormal(r3.Sub(p, b.c), b.h) }

// Closest returns the point of the box surface nearest to p.
func (b *Box) Closest(p r3.Vec) r3.Vec { return r3.Add(b.c, boxClosest(r3.Sub(p, b.c), b.h)) }

// Contains reports whether p is inside the box or on its surface.
func (b *Box) Contains(p r3.Vec) bool {
	return p.X >= b.min.X && p.X <= b.max.X &&
		p.Y >= b.min.Y && p.Y <= b.max.Y &&
		p.Z >= b.min.Z && p.Z <= b.max.Z
}

// Bounds returns the box itself.
func (b *Box) Bounds() AABB { return AABB{Min: b.min, Max: b.max} }

// Volume returns the product of the edge lengths.
func (b *Box) Volume() float64 { return 8 * b.h.X * b.h.Y * b.h.Z }

// inflatedVolume is the Steiner formula for a box with edges a, b, c:
// abc + 2(ab+bc+ca)·m + π(a+b+c)·m² + 4/3·π·m³.
func (b *Box) inflatedVolume(m float64) float64 { return boxInflatedVolume(b.h, m) }

func boxInflatedVolume(h r3.Vec, m float64) float64 {
	a, bb, c := 2*h.X, 2*h.Y, 2*h.Z
	return a*bb*c + 2*(a*bb+bb*c+c*a)*m + math.Pi*(a+bb+c)*m*m + 4.0/3*math.Pi*m*m*m
}

// boxSD is the signed distance from q (relative to the centre) to the box of
// half extents h centred at the origin.
func boxSD(q, h r3.Vec) float64 {
	dx, dy, dz := math.Abs(q.X)-h.X, math.Abs(q.Y)-h.Y, math.Abs(q.Z)-h.Z
	ox, oy, oz := max(dx, 0), max(dy, 0), max(dz, 0)
	out := math.Sqrt(ox*ox + oy*oy + oz*oz)
	return out + min(max(dx, max(dy, dz)), 0)
}

func sgn(v float64) float64 {
	if v < 0 {
		return -1
	}
	return 1
}

// boxSDGrad returns boxSD and a subgradient: the unit gradient outside, the
// normal of the nearest face inside and on the surface.
func boxSDGrad(q, h r3.Vec) (float64, r3.Vec) {
	dx, dy, dz := math.Abs(q.X)-h.X, math.Abs(q.Y)-h.Y, math.Abs(q.Z)-h.Z
	if dx > 0 || dy > 0 || dz > 0 {
		ox, oy, oz := max(dx, 0), max(dy, 0), max(dz, 0)
		out := math.Sqrt(ox*ox + oy*oy + oz*oz)
		inv := 1 / out
		return out, r3.Vec{X: sgn(q.X) * ox * inv, Y: sgn(q.Y) * oy * inv, Z: sgn(q.Z) * oz * inv}
	}
	switch {
	case dx >= dy && dx >= dz:
		return dx, r3.Vec{X: sgn(q.X)}
	case dy >= dz:
		return dy, r3.Vec{Y: sgn(q.Y)}
	default:
		return dz, r3.Vec{Z: sgn(q.Z)}
	}
}

// boxNormal is the outward unit normal at the surface point nearest to q.
func boxNormal(q, h r3.Vec) r3.Vec {
	_, g := boxSDGrad(q, h)
	return g
}

// boxClosest returns the surface point nearest to q (both relative to the
// centre).
func boxClosest(q, h r3.Vec) r3.Vec {
	dx, dy, dz := math.Abs(q.X)-h.X, math.Abs(q.Y)-h.Y, math.Abs(q.Z)-h.Z
	if dx > 0 || dy > 0 || dz > 0 {
		return r3.Vec{
			X: max(-h.X, min(h.X, q.X)),
			Y: max(-h.Y, min(h.Y, q.Y)),
			Z: max(-h.Z, min(h.Z, q.Z)),
		}
	}
	switch {
	case dx >= dy && dx >= dz:
		q.X = sgn(q.X) * h.X
	case dy >= dz:
		q.Y = sgn(q.Y) * h.Y
	default:
		q.Z = sgn(q.Z) * h.Z
	}
	return q
}

// OBox is an oriented box: a box of the given full size along its own axes,
// centred at Center and rotated by Rot.
type OBox struct {
	center, size r3.Vec
	rot          r3.Rotation // unit quaternion
	m            mat3        // rotation matrix of rot
	h            r3.Vec      // half extents
	bounds       AABB
}

// NewOBox returns the oriented box of full size `size` along its own axes,
// centred at center and rotated by rot (any non-zero quaternion; it is
// normalised). Every size component must be > 0.
func NewOBox(center, size r3.Vec, rot r3.Rotation) (*OBox, error) {
	if !finiteVec(center) {
		return nil, &ShapeError{Field: "center", Msg: "NaN/Inf"}
	}
	if !finiteVec(size) {
		return nil, &ShapeError{Field: "size", Msg: "NaN/Inf"}
	}
	for i, v := range [3]float64{size.X, size.Y, size.Z} {
		if v <= 0 {
			ax := [3]string{"x", "y", "z"}[i]
			return nil, &ShapeError{Field: "size", Msg: "must be > 0 (size." + ax + " = " + ftoa(v) + ")"}
		}
	}
	q, err := RotationQuat(rot.Real, rot.Imag, rot.Jmag, rot.Kmag)
	if err != nil {
		return nil, &ShapeError{Field: "rotation", Msg: err.(*ShapeError).Msg}
	}
	o := &OBox{center: center, size: size, rot: q, m: rotMat(q), h: r3.Scale(0.5, size)}
	e := o.m.absApply(o.h)
	o.bounds = AABB{Min: r3.Sub(center, e), Max: r3.Add(center, e)}
	return o, nil
}

// Center returns the centre of the box.
func (o *OBox) Center() r3.Vec { return o.center }

// Size returns the full edge lengths along the box's own axes.
func (o *OBox) Size() r3.Vec { return o.size }

// Rot returns the box's rotation (unit quaternion).
func (o *OBox) Rot() r3.Rotation { return o.rot }

// Corners returns the eight corners in the cell frame, for drawing: index
// bit 0 selects +x, bit 1 +y, bit 2 +z of the box's own axes.
func (o *OBox) Corners() [8]r3.Vec {
	var c [8]r3.Vec
	for i := range c {
		l := r3.Vec{X: -o.h.X, Y: -o.h.Y, Z: -o.h.Z}
		if i&1 != 0 {
			l.X = o.h.X
		}
		if i&2 != 0 {
			l.Y = o.h.Y
		}
		if i&4 != 0 {
			l.Z = o.h.Z
		}
		c[i] = r3.Add(o.center, o.m.apply(l))
	}
	return c
}

// Kind returns "obox".
func (o *OBox) Kind() string { return "obox" }

func (o *OBox) local(p r3.Vec) r3.Vec { return o.m.applyT(r3.Sub(p, o.center)) }

// SignedDistance returns the exact Euclidean signed distance to the box
// surface, negative inside.
func (o *OBox) SignedDistance(p r3.Vec) float64 { return boxSD(o.local(p), o.h) }

func (o *OBox) sdGrad(p r3.Vec) (float64, r3.Vec) {
	d, g := boxSDGrad(o.local(p), o.h)
	return d, o.m.apply(g)
}
func (o *OBox) convex() bool           { return true }
func (o *OBox) normal(p r3.Vec) r3.Vec { return o.m.apply(boxNormal(o.local(p), o.h)) }

// Closest returns the point of the box surface nearest to p.
func (o *OBox) Closest(p r3.Vec) r3.Vec {
	return r3.Add(o.center, o.m.apply(boxClosest(o.local(p), o.h)))
}

// Contains reports whether p is inside the box or on its surface (to within
// the rounding of the rotation, about 1e-15 m per metre of distance from the
// centre).
func (o *OBox) Contains(p r3.Vec) bool {
	q := o.local(p)
	return math.Abs(q.X) <= o.h.X && math.Abs(q.Y) <= o.h.Y && math.Abs(q.Z) <= o.h.Z
}

// Bounds returns the exact axis-aligned bounding box of the rotated box.
func (o *OBox) Bounds() AABB { return o.bounds }

// Volume returns the product of the edge lengths.
func (o *OBox) Volume() float64 { return o.size.X * o.size.Y * o.size.Z }

func (o *OBox) inflatedVolume(m float64) float64 { return boxInflatedVolume(o.h, m) }
