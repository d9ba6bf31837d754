package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Inflated is a shape grown by a margin: the set of points within Margin of
// Base.
//
// Its signed distance is Base's minus the margin. For a convex base (box,
// oriented box, sphere, cylinder, capsule, convex prism) that is the exact
// Euclidean signed distance to the inflated solid everywhere. For a prism
// with a non-convex footprint it is exact outside the inflated solid and on
// its surface (so containment and every touch test are exact); inside the
// inflated solid, where the margin reaches round a reflex corner of the
// footprint (into a notch), the true depth can be larger than the reported
// one, and Closest then returns the point Margin beyond Base's nearest
// surface point, which may lie inside the inflated solid.
type Inflated struct {
	base   evaluator
	margin float64
	minor  *Inflated // base's convex minorant inflated alike, or nil
}

// Inflate returns the set of points within m of s (m >= 0, finite). A sphere
// or capsule inflates to a sphere or capsule of radius r + m; an inflated
// Inflated adds the margins; m = 0 returns s itself. Otherwise the result is
// an *Inflated. For a nil s, or m negative, NaN or infinite, Inflate returns
// nil: validate margins first (NewZoneSet does).
func Inflate(s Shape, m float64) Shape {
	if s == nil || !finite(m) || m < 0 {
		return nil
	}
	if m == 0 {
		return s
	}
	switch v := s.(type) {
	case *Sphere:
		return &Sphere{c: v.c, r: v.r + m}
	case *Capsule:
		c := *v
		c.r += m
		return &c
	case *Inflated:
		return newInflated(v.base, v.margin+m)
	}
	return newInflated(asEvaluator(s), m)
}

func newInflated(base evaluator, m float64) *Inflated {
	f := &Inflated{base: base, margin: m}
	if hb, ok := base.(hullBounder); ok && !base.convex() {
		if h := hb.hull(); h != nil {
			// The minorant grown by m holds the shape grown by m.
			f.minor = &Inflated{base: h, margin: m}
		}
	}
	return f
}

// exactHull is the base's (see Prism.exactHull), inflated by the margin:
// where the base equals its minorant, so do both inflated by the margin.
func (f *Inflated) exactHull(b AABB) (evaluator, float64) {
	hb, ok := f.base.(hullSubstitute)
	if !ok || f.minor == nil {
		return nil, 0
	}
	if h, sd := hb.exactHull(b); h != nil {
		return f.minor, sd - f.margin
	}
	return nil, 0
}

// hull returns the convex minorant: the base's, inflated by the margin
// (see hullBounder).
func (f *Inflated) hull() evaluator {
	if f.minor == nil {
		return nil
	}
	return f.minor
}

// Base returns the shape before inflation.
func (f *Inflated) Base() Shape {
	if fs, ok := f.base.(foreign); ok {
		return fs.Shape
	}
	return f.base
}

// Margin returns the inflation margin in metres.
func (f *Inflated) Margin() float64 { return f.margin }

// Kind returns "inflated"; Base().Kind() names the underlying shape.
func (f *Inflated) Kind() string { return "inflated" }

// SignedDistance returns Base's signed distance minus the margin.
func (f *Inflated) SignedDistance(p r3.Vec) float64 { return f.base.SignedDistance(p) - f.margin }

func (f *Inflated) sdGrad(p r3.Vec) (float64, r3.Vec) {
	d, g := f.base.sdGrad(p)
	return d - f.margin, g
}
func (f *Inflated) convex() bool { return f.base.convex() }

// refineBound delegates to the base shape with the margin added (see
// Prism.refineBound).
func (f *Inflated) refineBound(p0, dp r3.Vec, r0, dr, m, a, b, fa, fb float64) float64 {
	if r, ok := f.base.(boundRefiner); ok {
		return r.refineBound(p0, dp, r0, dr, m+f.margin, a, b, fa, fb)
	}
	return math.Inf(-1)
}
func (f *Inflated) normal(p r3.Vec) r3.Vec { return f.base.normal(p) }

// Closest returns the point of the inflated surface nearest to p: Base's
// nearest surface point moved outward by the margin along Base's normal.
func (f *Inflated) Closest(p r3.Vec) r3.Vec {
	return r3.Add(f.base.Closest(p), r3.Scale(f.margin, f.base.normal(p)))
}

// Contains reports whether p is within the margin of Base.
func (f *Inflated) Contains(p r3.Vec) bool { return f.base.SignedDistance(p) <= f.margin }

// Bounds returns Base's bounds grown by the margin (exact: the support of a
// Minkowski sum with a ball adds the margin in every direction).
func (f *Inflated) Bounds() AABB { return f.base.Bounds().Grow(f.margin) }

// Volume returns the volume of the inflated solid. For convex bases it is
// the Steiner formula V + S·m + M·m² + 4/3·π·m³ (S the surface area, M the
// integral of mean curvature), written out per shape. For a prism with a
// non-convex footprint, where Steiner's formula does not apply, the volume
// is sliced: h·A2(m) + 2∫₀^m A2(√(m²−δ²)) dδ with A2(ρ) the area of the
// footprint grown by ρ, which is the closed form A + Pρ + cρ² (corrected at
// reflex corners) for small margins and is integrated numerically beyond
// (relative error below 1e-6 in the tests). For a shape from outside this
// package the volume is unknown and NaN is returned.
func (f *Inflated) Volume() float64 {
	if v, ok := f.base.(interface{ inflatedVolume(float64) float64 }); ok {
		return v.inflatedVolume(f.margin)
	}
	return math.NaN()
}
