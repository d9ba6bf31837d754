package zones

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// randIn returns a uniform random point of b grown by pad.
func randIn(rng *rand.Rand, b AABB, pad float64) r3.Vec {
	b = b.Grow(pad)
	return r3.Vec{
		X: b.Min.X + rng.Float64()*(b.Max.X-b.Min.X),
		Y: b.Min.Y + rng.Float64()*(b.Max.Y-b.Min.Y),
		Z: b.Min.Z + rng.Float64()*(b.Max.Z-b.Min.Z),
	}
}

func randUnit(rng *rand.Rand) r3.Vec {
	for {
		v := r3.Vec{X: 2*rng.Float64() - 1, Y: 2*rng.Float64() - 1, Z: 2*rng.Float64() - 1}
		if n := r3.Norm(v); n > 0.1 && n <= 1 {
			return r3.Scale(1/n, v)
		}
	}
}

// exactAt reports whether the property "closest point at distance |sd|"
// is promised at p: everywhere for convex shapes and plain prisms; for an
// inflated non-convex prism only outside the inflated solid (see Inflated).
func exactAt(s Shape, p r3.Vec) bool {
	if f, ok := s.(*Inflated); ok && !f.convex() {
		return f.SignedDistance(p) >= 0
	}
	return true
}

// The signed distance is exact when it vanishes on the surface, is
// 1-Lipschitz (so |sd(p)| <= |p − b| for every surface point b) and some
// surface point lies at distance |sd(p)| (the closest point): these three
// properties are checked together on random points, with the sign against
// containment.
func TestShapeProperties(t *testing.T) {
	const tol = 1e-9 // rounding of the shapes' arithmetic at metre scale
	for _, ns := range testShapes() {
		rng := rand.New(rand.NewPCG(1, 2))
		s := ns.s
		b := s.Bounds()
		nIn, nOut := 0, 0
		for i := 0; i < 20000; i++ {
			p := randIn(rng, b, 0.4)
			d := s.SignedDistance(p)
			// sign agrees with containment
			if math.Abs(d) > 1e-12 && (d < 0) != s.Contains(p) {
				t.Fatalf("%s: sd(%v) = %g but Contains = %v", ns.name, p, d, s.Contains(p))
			}
			if d < 0 {
				nIn++
			} else {
				nOut++
			}
			// 1-Lipschitz, for a near and a far second point
			for _, q := range []r3.Vec{r3.Add(p, r3.Scale(0.01*rng.Float64(), randUnit(rng))), randIn(rng, b, 0.4)} {
				if diff, dist := math.Abs(s.SignedDistance(q)-d), r3.Norm(r3.Sub(p, q)); diff > dist*(1+1e-12)+1e-12 {
					t.Fatalf("%s: not 1-Lipschitz: |sd(p)−sd(q)| = %g > |p−q| = %g at p=%v q=%v", ns.name, diff, dist, p, q)
				}
			}
			if !exactAt(s, p) {
				continue
			}
			c := s.Closest(p)
			if sc := s.SignedDistance(c); math.Abs(sc) > tol {
				t.Fatalf("%s: closest point %v of %v is off the surface by %g", ns.name, c, p, sc)
			}
			if dist := r3.Norm(r3.Sub(p, c)); math.Abs(dist-math.Abs(d)) > tol {
				t.Fatalf("%s: |p − closest| = %.12g but |sd(p)| = %.12g at %v", ns.name, dist, math.Abs(d), p)
			}
			if !b.Grow(1e-12).Contains(c) {
				t.Fatalf("%s: closest point %v outside bounds %v", ns.name, c, b)
			}
		}
		if nIn < 100 || nOut < 100 {
			t.Fatalf("%s: sampling degenerate: %d inside, %d outside", ns.name, nIn, nOut)
		}
	}
}

// For convex shapes the path query relies on sdGrad returning a true
// subgradient: sd(x) >= sd(p) + g·(x − p) for all x. For every shape g must
// match the finite-difference gradient where the signed distance is smooth.
func TestSubgradient(t *testing.T) {
	for _, ns := range testShapes() {
		ev := asEvaluator(ns.s)
		rng := rand.New(rand.NewPCG(3, 4))
		b := ns.s.Bounds()
		for i := 0; i < 20000; i++ {
			p := randIn(rng, b, 0.4)
			d, g := ev.sdGrad(p)
			if d != ns.s.SignedDistance(p) {
				t.Fatalf("%s: sdGrad value %g differs from SignedDistance %g", ns.name, d, ns.s.SignedDistance(p))
			}
			if n := r3.Norm(g); n > 1+1e-12 {
				t.Fatalf("%s: |g| = %g > 1 at %v", ns.name, n, p)
			}
			if ev.convex() {
				x := randIn(rng, b, 0.4)
				if lhs, rhs := ns.s.SignedDistance(x), d+r3.Dot(g, r3.Sub(x, p)); lhs < rhs-1e-12 {
					t.Fatalf("%s: g at %v is not a subgradient: sd(%v) = %g < %g", ns.name, p, x, lhs, rhs)
				}
			}
			// central differences, h = 1e-6: where the function is smooth
			// over the stencil the error is O(h²·curvature) < 1e-5.
			const h = 1e-6
			var fd r3.Vec
			fd.X = (ns.s.SignedDistance(r3.Add(p, r3.Vec{X: h})) - ns.s.SignedDistance(r3.Sub(p, r3.Vec{X: h}))) / (2 * h)
			fd.Y = (ns.s.SignedDistance(r3.Add(p, r3.Vec{Y: h})) - ns.s.SignedDistance(r3.Sub(p, r3.Vec{Y: h}))) / (2 * h)
			fd.Z = (ns.s.SignedDistance(r3.Add(p, r3.Vec{Z: h})) - ns.s.SignedDistance(r3.Sub(p, r3.Vec{Z: h}))) / (2 * h)
			// Kinks (medial surfaces inside, edges) show as |fd| < 1; skip them.
			if math.Abs(r3.Norm(fd)-1) < 1e-6 && r3.Norm(r3.Sub(fd, g)) > 1e-4 {
				t.Fatalf("%s: gradient %v, finite differences %v at %v", ns.name, g, fd, p)
			}
		}
	}
}

func TestInflateProperties(t *testing.T) {
	for _, ns := range testShapes() {
		for _, m := range []float64{0.01, 0.3} {
			f := Inflate(ns.s, m)
			rng := rand.New(rand.NewPCG(5, 6))
			b := ns.s.Bounds()
			for i := 0; i < 5000; i++ {
				p := randIn(rng, b, 0.5)
				if got, want := f.SignedDistance(p), ns.s.SignedDistance(p)-m; !near(got, want, 1e-12) {
					t.Fatalf("%s+%g: inflated sd %g, want sd − m = %g", ns.name, m, got, want)
				}
				if f.Contains(p) != (ns.s.SignedDistance(p) <= m) {
					t.Fatalf("%s+%g: Contains disagrees with sd <= m at %v", ns.name, m, p)
				}
			}
			fb, want := f.Bounds(), b.Grow(m)
			if r3.Norm(r3.Sub(fb.Min, want.Min)) > 1e-12 || r3.Norm(r3.Sub(fb.Max, want.Max)) > 1e-12 {
				t.Errorf("%s+%g: bounds %v, want %v", ns.name, m, fb, want)
			}
		}
	}
	if Inflate(nil, 1) != nil || Inflate(testShapes()[0].s, -1) != nil || Inflate(testShapes()[0].s, math.NaN()) != nil {
		t.Error("Inflate accepts a nil shape or a bad margin")
	}
	s := testShapes()[0].s
	if Inflate(s, 0) != s {
		t.Error("Inflate(s, 0) is not s")
	}
	// Inflating twice adds the margins.
	m1, m2 := 0.1, 0.2
	twice := Inflate(Inflate(s, m1), m2).(*Inflated)
	if twice.Margin() != m1+m2 || twice.Base() != s {
		t.Errorf("double inflation: base %v margin %v", twice.Base(), twice.Margin())
	}
}

// Monte Carlo check of Volume and Contains together, for every shape and
// its inflation: the fraction of uniform points of the bounds that the
// shape contains, times the bounds' volume. With n points the standard
// error is V_b·sqrt(q(1−q)/n); the check allows 4.5 standard errors.
func TestVolumeMonteCarlo(t *testing.T) {
	const n = 200000
	for _, ns := range testShapes() {
		// 0.6: beyond the closing of the U footprint's notch (1 wide),
		// where the non-convex prism's inflated volume is numerical.
		for _, m := range []float64{0, 0.25, 0.6} {
			s := ns.s
			if m > 0 {
				s = Inflate(s, m)
			}
			b := s.Bounds()
			sz := r3.Sub(b.Max, b.Min)
			vb := sz.X * sz.Y * sz.Z
			rng := rand.New(rand.NewPCG(7, 8))
			hit := 0
			for i := 0; i < n; i++ {
				if s.Contains(randIn(rng, b, 0)) {
					hit++
				}
			}
			q := float64(hit) / n
			est, se := q*vb, vb*math.Sqrt(q*(1-q)/n)
			if v := s.Volume(); math.Abs(v-est) > 4.5*se {
				t.Errorf("%s+%g: Volume %.6g, Monte Carlo %.6g ± %.2g", ns.name, m, v, est, se)
			}
		}
	}
}
