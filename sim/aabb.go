package sim

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// aabb is an axis-aligned box occluder.
type aabb struct{ lo, hi r3.Vec }

func (b *aabb) Kind() string { return "box" }
func (b *aabb) Contains(p r3.Vec) bool {
	return p.X >= b.lo.X && p.X <= b.hi.X && p.Y >= b.lo.Y && p.Y <= b.hi.Y && p.Z >= b.lo.Z && p.Z <= b.hi.Z
}
func (b *aabb) Closest(p r3.Vec) r3.Vec {
	c := r3.Vec{X: clamp(p.X, b.lo.X, b.hi.X), Y: clamp(p.Y, b.lo.Y, b.hi.Y), Z: clamp(p.Z, b.lo.Z, b.hi.Z)}
	if c != p {
		return c
	}
	// inside: the nearest face
	best, c := math.Inf(1), p
	for _, f := range [...]struct {
		d float64
		q r3.Vec
	}{
		{p.X - b.lo.X, r3.Vec{X: b.lo.X, Y: p.Y, Z: p.Z}}, {b.hi.X - p.X, r3.Vec{X: b.hi.X, Y: p.Y, Z: p.Z}},
		{p.Y - b.lo.Y, r3.Vec{X: p.X, Y: b.lo.Y, Z: p.Z}}, {b.hi.Y - p.Y, r3.Vec{X: p.X, Y: b.hi.Y, Z: p.Z}},
		{p.Z - b.lo.Z, r3.Vec{X: p.X, Y: p.Y, Z: b.lo.Z}}, {b.hi.Z - p.Z, r3.Vec{X: p.X, Y: p.Y, Z: b.hi.Z}},
	} {
		if f.d < best {
			best, c = f.d, f.q
		}
	}
	return c
}
func (b *aabb) SignedDistance(p r3.Vec) float64 {
	d := r3.Vec{X: math.Max(b.lo.X-p.X, p.X-b.hi.X), Y: math.Max(b.lo.Y-p.Y, p.Y-b.hi.Y), Z: math.Max(b.lo.Z-p.Z, p.Z-b.hi.Z)}
	out := r3.Vec{X: math.Max(d.X, 0), Y: math.Max(d.Y, 0), Z: math.Max(d.Z, 0)}
	return r3.Norm(out) + math.Min(math.Max(d.X, math.Max(d.Y, d.Z)), 0)
}
func (b *aabb) Bounds() zones.AABB { return zones.AABB{Min: b.lo, Max: b.hi} }
func (b *aabb) Volume() float64 {
	return (b.hi.X - b.lo.X) * (b.hi.Y - b.lo.Y) * (b.hi.Z - b.lo.Z)
}

func clamp(x, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, x)) }
