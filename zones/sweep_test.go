package zones

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// pathAt returns the position and radius of the path at time tt (linear
// between points; clamped to the ends).
func pathAt(path PathView, tt float64) (r3.Vec, float64) {
	n := len(path.T)
	if tt <= path.T[0] {
		return path.P[0], path.R[0]
	}
	for k := 0; k+1 < n; k++ {
		if tt <= path.T[k+1] {
			s := (tt - path.T[k]) / (path.T[k+1] - path.T[k])
			return r3.Add(path.P[k], r3.Scale(s, r3.Sub(path.P[k+1], path.P[k]))), path.R[k] + s*(path.R[k+1]-path.R[k])
		}
	}
	return path.P[n-1], path.R[n-1]
}

// sepAt is the separation f(t) = SignedDistance(P(t)) − R(t) − Margin,
// evaluated through the zone's public point query.
func sepAt(z *Zone, path PathView, tt float64) float64 {
	p, r := pathAt(path, tt)
	return z.SignedDistance(p) - r - z.Margin
}

// checkDense compares a path-query result with dense sampling of f:
// samplesPerSeg evenly spaced samples per segment. Between neighbouring
// samples f can dip at most L·h/2 below the smaller of the two (f is
// Lipschitz with L = |ΔP| + |ΔR| per segment), so the true minimum f* lies
// in [dmin − eps, dmin]. The guarantees checked are those of SweepTol.
func checkDense(t *testing.T, name string, z *Zone, path PathView, res SweepResult, samplesPerSeg int) {
	t.Helper()
	const fp = 1e-12 // rounding slack
	n := len(path.T)
	dmin, eps := math.Inf(1), 0.0
	firstTouch := math.NaN()
	for k := 0; k+1 < n; k++ {
		ls := r3.Norm(r3.Sub(path.P[k+1], path.P[k])) + math.Abs(path.R[k+1]-path.R[k])
		eps = math.Max(eps, ls/(2*float64(samplesPerSeg)))
		last := samplesPerSeg
		if k+2 < n {
			last-- // the next segment samples the shared point
		}
		for i := 0; i <= last; i++ {
			tt := path.T[k] + (path.T[k+1]-path.T[k])*float64(i)/float64(samplesPerSeg)
			f := sepAt(z, path, tt)
			dmin = math.Min(dmin, f)
			if f <= 0 && math.IsNaN(firstTouch) {
				firstTouch = tt
			}
			if res.Touch && f <= 0 && tt < res.TouchT-fp {
				t.Fatalf("%s: f(%.9g) = %.3g <= 0 before the reported touch at %.9g", name, tt, f, res.TouchT)
			}
		}
	}
	if n == 1 {
		dmin = sepAt(z, path, path.T[0])
		if dmin <= 0 {
			firstTouch = path.T[0]
		}
	}
	if res.Far {
		if res.MinSep > dmin+fp || res.Touch {
			t.Fatalf("%s: Far result MinSep %.6g is not a lower bound of the sampled minimum %.6g (touch %v)", name, res.MinSep, dmin, res.Touch)
		}
		return
	}
	if res.MinSep > dmin+fp {
		t.Fatalf("%s: MinSep %.9g above the sampled minimum %.9g", name, res.MinSep, dmin)
	}
	if res.MinSep < dmin-eps-SweepTol-fp {
		t.Fatalf("%s: MinSep %.9g more than SweepTol below the true minimum (>= %.9g)", name, res.MinSep, dmin-eps)
	}
	if f := sepAt(z, path, res.MinSepT); f > res.MinSep+SweepTol+fp {
		t.Fatalf("%s: f(MinSepT=%.9g) = %.9g, more than SweepTol above MinSep %.9g", name, res.MinSepT, f, res.MinSep)
	}
	if dmin <= 0 && !res.Touch {
		t.Fatalf("%s: sampled touch at %.9g (f = %.3g) not reported", name, firstTouch, dmin)
	}
	if res.Touch {
		if f := sepAt(z, path, res.TouchT); f > SweepTol+fp {
			t.Fatalf("%s: f(TouchT=%.9g) = %.9g > SweepTol", name, res.TouchT, f)
		}
		if !math.IsNaN(firstTouch) && res.TouchT > firstTouch+fp {
			t.Fatalf("%s: TouchT %.9g later than a sampled touch at %.9g", name, res.TouchT, firstTouch)
		}
	}
}

// randomPath returns a path of n points starting near b, moving at up to
// 2.5 m/s with random turns, sampled every 20–60 ms, with a radius growing
// linearly from 0–30 mm at 0–0.4 m/s (a forecast's uncertainty).
func randomPath(rng *rand.Rand, b AABB, n int) PathView {
	path := PathView{T: make([]float64, n), P: make([]r3.Vec, n), R: make([]float64, n)}
	p := randIn(rng, b, 0.3)
	aim := randIn(rng, b, 0)
	v := r3.Scale(2.5*rng.Float64(), r3.Unit(r3.Sub(aim, p)))
	tt, r, dr := 10*rng.Float64(), 0.03*rng.Float64(), 0.4*rng.Float64()
	for k := 0; k < n; k++ {
		path.T[k], path.P[k], path.R[k] = tt, p, r
		dt := 0.02 + 0.04*rng.Float64()
		v = r3.Add(v, r3.Scale(0.8, randUnit(rng)))
		p = r3.Add(p, r3.Scale(dt, v))
		tt += dt
		r += dr * dt
	}
	return path
}

// opaque hides a shape's internals, so that the query treats it as a shape
// from outside the package (Lipschitz bounds only).
type opaque struct{ Shape }

func TestSweepAgainstDenseSampling(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	shapes := testShapes()
	shapes = append(shapes, namedShape{"opaque-obox", opaque{shapes[1].s}}, namedShape{"opaque-capsule", opaque{shapes[4].s}})
	touches, misses := 0, 0
	cases := 16
	if testing.Short() {
		cases = 4
	}
	for _, ns := range shapes {
		for _, posed := range []bool{false, true} {
			for i := 0; i < cases; i++ {
				z := Zone{Name: ns.name, Shape: ns.s, Margin: 0.1 * rng.Float64()}
				b := ns.s.Bounds()
				if posed {
					z.Frame = "tool"
					z.Pose = Pose{Pos: r3.Vec{X: 2*rng.Float64() - 1, Y: 2*rng.Float64() - 1, Z: rng.Float64()},
						Rot: RotationRPY(360*rng.Float64(), 180*rng.Float64()-90, 360*rng.Float64())}
					b = z.Bounds()
				}
				path := randomPath(rng, b, 2+rng.IntN(7))
				res := z.Sweep(path, math.Inf(1))
				name := fmt.Sprintf("%s posed=%v case %d", ns.name, posed, i)
				checkDense(t, name, &z, path, res, 10000)
				if res.Touch {
					touches++
				} else {
					misses++
				}
			}
		}
	}
	// The random paths must exercise both outcomes.
	if touches < 5*cases || misses < 5*cases {
		t.Fatalf("degenerate test paths: %d touches, %d misses", touches, misses)
	}
}

// Grazing passes: a path parallel to a face at a constant separation just
// above, at and just below SweepTol, and just touching.
func TestSweepGrazing(t *testing.T) {
	box := must(NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1}))
	lpr := must(NewPrism(lShape, 0, 1))
	for _, s := range []Shape{box, lpr} {
		// Working inside along the wall y = 0 at depth 0.1: closed form
		// f = −0.1 − 0.02 − 0.05 = −0.17 all along.
		z := &Zone{Name: "g", Shape: s, Margin: 0.05}
		path := PathView{T: []float64{0, 0.25, 0.5}, P: []r3.Vec{{X: 0.1, Y: 0.1, Z: 0.5}, {X: 0.5, Y: 0.1, Z: 0.5}, {X: 0.9, Y: 0.1, Z: 0.5}}, R: []float64{0.02, 0.02, 0.02}}
		res := z.Sweep(path, math.Inf(1))
		checkDense(t, s.Kind()+" inside", z, path, res, 10000)
		if !res.Touch || res.TouchT != 0 || res.MinSep > -0.17+1e-12 || res.MinSep < -0.17-SweepTol {
			t.Errorf("%s inside along a wall: %+v, want touch at 0, MinSep −0.17", s.Kind(), res)
		}
		for _, gap := range []float64{2 * SweepTol, SweepTol, 0.5 * SweepTol, 0, -1e-6} {
			z := &Zone{Name: "g", Shape: s, Margin: 0.05}
			// y = −(margin + radius + gap): the sphere of radius 0.02 runs
			// along the face y = 0 at separation gap.
			y := -(0.05 + 0.02 + gap)
			path := PathView{T: []float64{0, 0.25, 0.5}, P: []r3.Vec{{X: 0.1, Y: y, Z: 0.5}, {X: 0.5, Y: y, Z: 0.5}, {X: 0.9, Y: y, Z: 0.5}}, R: []float64{0.02, 0.02, 0.02}}
			res := z.Sweep(path, math.Inf(1))
			checkDense(t, fmt.Sprintf("%s gap %g", s.Kind(), gap), z, path, res, 10000)
			// closed form: f is constant = gap along the whole path
			if !near(res.MinSep, gap, SweepTol) || res.MinSep > gap+1e-12 {
				t.Errorf("%s gap %g: MinSep %g", s.Kind(), gap, res.MinSep)
			}
			if gap > SweepTol && res.Touch {
				t.Errorf("%s gap %g: touch reported", s.Kind(), gap)
			}
			if gap <= 0 && (!res.Touch || res.TouchT != 0) {
				t.Errorf("%s gap %g: touch %v at %g, want at 0", s.Kind(), gap, res.Touch, res.TouchT)
			}
		}
	}
}

func TestSweepClosedForms(t *testing.T) {
	// Sphere of radius 0.3 at (0,0,1), margin 0.1; the hand runs along x
	// from −2 to 2 in 2 s (x = −2 + 2t) with R = 0.05 + 0.05t.
	// closed form: f(t) = |x(t)| − 0.3 − 0.1 − R(t). Approaching,
	// f = 2 − 2t − 0.45 − 0.05t = 1.55 − 2.05t: touch at t₀ = 1.55/2.05;
	// the minimum is at x = 0, t = 1: f = −0.4 − 0.1 = −0.5.
	sph := &Zone{Name: "s", Shape: must(NewSphere(r3.Vec{Z: 1}, 0.3)), Margin: 0.1}
	path := PathView{T: []float64{0, 0.7, 2}, P: []r3.Vec{{X: -2, Z: 1}, {X: -0.6, Z: 1}, {X: 2, Z: 1}}, R: []float64{0.05, 0.085, 0.15}}
	res := sph.Sweep(path, math.Inf(1))
	t0 := 1.55 / 2.05
	// the reported time is no later than t₀ and f there is at most SweepTol:
	// f falls at 2.05 m/s, so TouchT >= t₀ − SweepTol/2.05.
	if !res.Touch || res.TouchT > t0 || res.TouchT < t0-SweepTol/2.05-1e-12 {
		t.Errorf("sphere: touch %v at %.9g, want within [%.9g, %.9g]", res.Touch, res.TouchT, t0-SweepTol/2.05, t0)
	}
	if res.MinSep > -0.5+1e-12 || res.MinSep < -0.5-SweepTol || !near(res.MinSepT, 1, SweepTol/2) {
		t.Errorf("sphere: MinSep %.9g at %.9g, want −0.5 at 1", res.MinSep, res.MinSepT)
	}

	// Capsule along x from (0,0,0) to (1,0,0), radius 0.1, no margin; the
	// path runs parallel at y = 0.5 from x = −1 to 2 with R = 0.
	// closed form: over x ∈ [0,1] the distance to the axis is 0.5, so
	// min f = 0.5 − 0.1 = 0.4, and no touch.
	capz := &Zone{Name: "c", Shape: must(NewCapsule(r3.Vec{}, r3.Vec{X: 1}, 0.1))}
	path = PathView{T: []float64{0, 1}, P: []r3.Vec{{X: -1, Y: 0.5}, {X: 2, Y: 0.5}}, R: []float64{0, 0}}
	res = capz.Sweep(path, math.Inf(1))
	if res.Touch || res.MinSep > 0.4+1e-12 || res.MinSep < 0.4-SweepTol {
		t.Errorf("capsule: %+v, want no touch, MinSep 0.4", res)
	}

	// Box [0,1]³; the path passes the edge x = 1, y = 1 diagonally in the
	// plane z = 0.5: from (2, 0, 0.5) to (0, 2, 0.5). closed form: the
	// distance from the edge line (1,1,·) to the line x + y = 2 in that
	// plane is 0, and the path crosses the edge point: touch; the deepest
	// point is (1,1,0.5), on the edge: f = 0 − R − margin = −0.02.
	boxz := &Zone{Name: "b", Shape: must(NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1})), Margin: 0.01}
	path = PathView{T: []float64{0, 1}, P: []r3.Vec{{X: 2, Z: 0.5}, {Y: 2, Z: 0.5}}, R: []float64{0.01, 0.01}}
	res = boxz.Sweep(path, math.Inf(1))
	if !res.Touch || res.MinSep > -0.02+1e-12 || res.MinSep < -0.02-SweepTol || !near(res.MinSepT, 0.5, 1e-3) {
		t.Errorf("box edge: %+v, want touch, MinSep −0.02 at 0.5", res)
	}
	// Same path shifted to x + y = 2.2: it passes the edge at distance
	// 0.2/√2 (point-line distance in the plane), so min f = 0.1414 − 0.02.
	path.P[0], path.P[1] = r3.Vec{X: 2.2, Z: 0.5}, r3.Vec{Y: 2.2, Z: 0.5}
	res = boxz.Sweep(path, math.Inf(1))
	if want := 0.2/math.Sqrt2 - 0.02; res.Touch || res.MinSep > want+1e-12 || res.MinSep < want-SweepTol {
		t.Errorf("box edge miss: %+v, want MinSep %.9g", res, want)
	}

	// Attached capsule: in the tool frame along x from 0 to 0.4, radius
	// 0.05; the frame sits at (1, 1, 1) turned by yaw 90°, so in the cell
	// the capsule runs from (1,1,1) to (1,1.4,1). The hand comes down
	// vertically at (1, 1.2, z) from z = 2 to z = 1.5 in 0.5 s, R = 0:
	// closed form: min f = 1.5 − 1 − 0.05 = 0.45 at the end.
	tool := &Zone{Name: "gripper", Shape: must(NewCapsule(r3.Vec{}, r3.Vec{X: 0.4}, 0.05)), Frame: "tool",
		Pose: Pose{Pos: r3.Vec{X: 1, Y: 1, Z: 1}, Rot: RotationRPY(0, 0, 90)}}
	path = PathView{T: []float64{0, 0.5}, P: []r3.Vec{{X: 1, Y: 1.2, Z: 2}, {X: 1, Y: 1.2, Z: 1.5}}, R: []float64{0, 0}}
	res = tool.Sweep(path, math.Inf(1))
	if res.Touch || res.MinSep > 0.45+1e-12 || res.MinSep < 0.45-SweepTol || res.MinSepT != 0.5 {
		t.Errorf("attached capsule: %+v, want MinSep 0.45 at 0.5", res)
	}
	// Continuing down to z = 0.5 it goes through the capsule: it reaches
	// f = 0 at z = 1.05, t = (2 − 1.05)/1 = 0.95 (speed 1 m/s).
	path = PathView{T: []float64{0, 1.5}, P: []r3.Vec{{X: 1, Y: 1.2, Z: 2}, {X: 1, Y: 1.2, Z: 0.5}}, R: []float64{0, 0}}
	res = tool.Sweep(path, math.Inf(1))
	if !res.Touch || res.TouchT > 0.95 || res.TouchT < 0.95-SweepTol || !near(res.MinSep, -0.05, SweepTol) {
		t.Errorf("attached capsule, through: %+v, want touch at 0.95, MinSep −0.05", res)
	}
}

func TestSweepCutoff(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 32))
	for _, ns := range testShapes() {
		z := &Zone{Name: ns.name, Shape: ns.s, Margin: 0.05}
		for i := 0; i < 40; i++ {
			b := ns.s.Bounds()
			// paths 0–3 m away from the shape's box
			off := r3.Scale(3*rng.Float64()+0.5, randUnit(rng))
			path := randomPath(rng, AABB{Min: r3.Add(b.Min, off), Max: r3.Add(b.Max, off)}, 10)
			exact := z.Sweep(path, math.Inf(1))
			cut := 0.5
			res := z.Sweep(path, cut)
			if exact.Far {
				t.Fatal("Far with an infinite cutoff")
			}
			if res.Far {
				if res.MinSep < cut || res.MinSep > exact.MinSep+1e-12 || res.Touch {
					t.Fatalf("%s: Far result %+v, exact %+v", ns.name, res, exact)
				}
			} else if res != exact {
				t.Fatalf("%s: cutoff changed a non-Far result: %+v vs %+v", ns.name, res, exact)
			}
		}
		// A path inside the zone's bounds is never Far, whatever the cutoff:
		// the signed distance may be negative there.
		c := ns.s.Closest(r3.Vec{X: 10, Y: 10, Z: 10})
		in := PathView{T: []float64{0, 1}, P: []r3.Vec{c, c}, R: []float64{0, 0}}
		if res := z.Sweep(in, -100); res.Far || !res.Touch {
			t.Fatalf("%s: path on the surface with cutoff −100: %+v", ns.name, res)
		}
	}
}

func TestSweepOddInputs(t *testing.T) {
	z := &Zone{Name: "s", Shape: must(NewSphere(r3.Vec{}, 0.5))}
	if res := z.Sweep(PathView{}, 1); !res.Far || !math.IsInf(res.MinSep, 1) || res.Touch {
		t.Errorf("empty path: %+v", res)
	}
	// one point, 0.3 m from the surface: closed form f = 0.8 − 0.5 − 0 = 0.3
	one := PathView{T: []float64{3}, P: []r3.Vec{{X: 0.8}}, R: []float64{0}}
	if res := z.Sweep(one, math.Inf(1)); res.Touch || !near(res.MinSep, 0.3, 1e-12) || res.MinSepT != 3 {
		t.Errorf("one point: %+v", res)
	}
	in := PathView{T: []float64{3}, P: []r3.Vec{{X: 0.1}}, R: []float64{0.01}}
	if res := z.Sweep(in, math.Inf(1)); !res.Touch || res.TouchT != 3 || !near(res.MinSep, -0.41, 1e-12) {
		t.Errorf("one point inside: %+v", res)
	}
	// unequal lengths: the shortest counts
	odd := PathView{T: []float64{0, 1, 2}, P: []r3.Vec{{X: 2}, {X: 1}}, R: []float64{0, 0, 0}}
	if res := z.Sweep(odd, math.Inf(1)); res.Touch || !near(res.MinSep, 0.5, SweepTol) {
		t.Errorf("unequal lengths: %+v", res)
	}
	// non-finite input never reads as clear
	for _, bad := range []PathView{
		{T: []float64{0, 1}, P: []r3.Vec{{X: 2}, {X: math.NaN()}}, R: []float64{0, 0}},
		{T: []float64{0, 1}, P: []r3.Vec{{X: 2}, {X: 3}}, R: []float64{0, math.Inf(1)}},
		{T: []float64{0, math.NaN()}, P: []r3.Vec{{X: 2}, {X: 3}}, R: []float64{0, 0}},
	} {
		if res := z.Sweep(bad, 0.1); !res.Touch || !math.IsInf(res.MinSep, -1) || res.Far {
			t.Errorf("non-finite path %v: %+v", bad, res)
		}
	}
	// times not increasing: no panic, and the geometry is still judged
	back := PathView{T: []float64{1, 1, 0}, P: []r3.Vec{{X: 2}, {X: 0}, {X: -2}}, R: []float64{0, 0, 0}}
	if res := z.Sweep(back, math.Inf(1)); !res.Touch || !near(res.MinSep, -0.5, SweepTol) {
		t.Errorf("non-increasing times: %+v", res)
	}
	// a huge jump still terminates with a bound
	jump := PathView{T: []float64{0, 1e-9}, P: []r3.Vec{{X: -1e6, Y: 0.7}, {X: 1e6, Y: 0.7}}, R: []float64{0, 0}}
	if res := z.Sweep(jump, math.Inf(1)); res.Touch || res.MinSep > 0.2+1e-9 {
		t.Errorf("long segment: %+v", res)
	}
}

// The non-convex prism's refined lower bound must never exceed the true
// minimum of f over the piece of segment; compared with dense sampling
// (1000 samples; the sampled minimum is at or above the true one).
func TestRefineBoundValid(t *testing.T) {
	rng := rand.New(rand.NewPCG(61, 62))
	upr := must(NewPrism(uShape, 0.5, 1.2))
	for _, s := range []Shape{must(NewPrism(lShape, 0, 1)), upr, Inflate(upr, 0.15)} {
		ref := s.(boundRefiner)
		tight := 0
		for i := 0; i < 1000; i++ {
			p0 := randIn(rng, s.Bounds(), 0.3)
			dp := r3.Scale(0.4*rng.Float64(), randUnit(rng))
			if i%3 == 0 { // along an axis: parallel to walls and caps
				dp = [3]r3.Vec{{X: 0.4}, {Y: -0.4}, {Z: 0.2}}[rng.IntN(3)]
			}
			r0, dr, m := 0.03*rng.Float64(), 0.02*rng.Float64(), 0.1*rng.Float64()
			a := 0.5 * rng.Float64()
			b := a + (1-a)*rng.Float64()
			const n = 1000
			dmin := math.Inf(1)
			for k := 0; k <= n; k++ {
				u := a + (b-a)*float64(k)/n
				dmin = min(dmin, s.SignedDistance(r3.Add(p0, r3.Scale(u, dp)))-(r0+u*dr)-m)
			}
			fa := s.SignedDistance(r3.Add(p0, r3.Scale(a, dp))) - (r0 + a*dr) - m
			fb := s.SignedDistance(r3.Add(p0, r3.Scale(b, dp))) - (r0 + b*dr) - m
			lb := ref.refineBound(p0, dp, r0, dr, m, a, b, fa, fb)
			if lb > dmin+1e-12 {
				t.Fatalf("%s: bound %.9g above the sampled minimum %.9g (p0 %v dp %v [%g,%g])", s.Kind(), lb, dmin, p0, dp, a, b)
			}
			if lb > dmin-1e-3 {
				tight++
			}
		}
		// The bound is meant to be useful, not just valid.
		t.Logf("%s: bound within 1 mm of the minimum in %d of 1000 cases", s.Kind(), tight)
		if tight < 850 {
			t.Errorf("%s: bound within 1 mm of the minimum in only %d of 1000 cases", s.Kind(), tight)
		}
	}
}

// forecastPath returns an n-point path like the advisory engine's
// forecasts: 20 ms steps, a hand moving at up to 2 m/s with a gentle turn,
// and an uncertainty radius growing from a few millimetres to up to 1 m at
// the end (the fitted forecaster's radius grows that large during fast
// movements). With wavy, the radius also swells and shrinks by up to
// 0.3 m along the path (not a forecast's radius, but one the query takes).
func forecastPath(rng *rand.Rand, b AABB, n int, wavy bool) PathView {
	path := PathView{T: make([]float64, n), P: make([]r3.Vec, n), R: make([]float64, n)}
	p := randIn(rng, b, 0.6)
	v := r3.Scale(2*rng.Float64(), randUnit(rng))
	turn := r3.Scale(3*rng.Float64(), randUnit(rng))
	r0, rEnd := 0.01*rng.Float64(), rng.Float64()
	amp, freq := 0.0, 2+10*rng.Float64()
	if wavy {
		amp = 0.3 * rng.Float64()
	}
	for k := 0; k < n; k++ {
		s := float64(k) / float64(n-1)
		r := r0 + (rEnd-r0)*s*s + amp*(1+math.Sin(freq*s))
		path.T[k], path.P[k], path.R[k] = 50+0.02*float64(k), p, r
		v = r3.Add(v, r3.Scale(0.02, turn))
		p = r3.Add(p, r3.Scale(0.02, v))
	}
	return path
}

// TestSweepForecastPaths checks the guarantees on 26-point forecast-like
// paths, where the search over runs of segments skips most points, for
// every shape kind, fixed and posed, against dense sampling; one path in
// three has a radius that also shrinks.
func TestSweepForecastPaths(t *testing.T) {
	rng := rand.New(rand.NewPCG(71, 72))
	cases := 12
	if testing.Short() {
		cases = 3
	}
	touches, misses := 0, 0
	for _, ns := range testShapes() {
		for _, posed := range []bool{false, true} {
			for i := 0; i < cases; i++ {
				z := Zone{Name: ns.name, Shape: ns.s, Margin: 0.2 * rng.Float64()}
				b := ns.s.Bounds()
				if posed {
					z.Frame = "tool"
					z.Pose = Pose{Pos: r3.Vec{X: 2*rng.Float64() - 1, Y: 2*rng.Float64() - 1, Z: rng.Float64()},
						Rot: RotationRPY(360*rng.Float64(), 180*rng.Float64()-90, 360*rng.Float64())}
					b = z.Bounds()
				}
				path := forecastPath(rng, b, 26, i%3 == 2)
				res := z.Sweep(path, math.Inf(1))
				checkDense(t, fmt.Sprintf("%s posed=%v case %d", ns.name, posed, i), &z, path, res, 400)
				if res.Touch {
					touches++
				} else {
					misses++
				}
			}
		}
	}
	if touches < 3*cases || misses < 3*cases {
		t.Fatalf("degenerate test paths: %d touches, %d misses", touches, misses)
	}
}
