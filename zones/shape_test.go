package zones

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
)

// must unwraps a constructor result in tests.
func must[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

// lShape is an L-shaped footprint (three unit squares), counter-clockwise.
// Shoelace by hand: Σ(x_i·y_{i+1} − x_{i+1}·y_i) = 0 + 4 + 2 − 1 + 1 + 0 = 6,
// area 3, perimeter 2+2+1+1+1+1 = 8; reflex corner at (1,1).
var lShape = []r2.Vec{{X: 0, Y: 0}, {X: 2, Y: 0}, {X: 2, Y: 2}, {X: 1, Y: 2}, {X: 1, Y: 1}, {X: 0, Y: 1}}

// uShape is a U-shaped footprint given clockwise: a 3×2 rectangle with a
// 1×1 notch cut from the middle of its top edge. Area 6 − 1 = 5.
var uShape = []r2.Vec{{X: 0, Y: 0}, {X: 0, Y: 2}, {X: 1, Y: 2}, {X: 1, Y: 1}, {X: 2, Y: 1}, {X: 2, Y: 2}, {X: 3, Y: 2}, {X: 3, Y: 0}}

// namedShape is a test shape with a label.
type namedShape struct {
	name string
	s    Shape
}

// testShapes returns one or more shapes of every kind, in general position,
// sized like workcell zones (tenths of metres to metres).
func testShapes() []namedShape {
	box := must(NewBox(r3.Vec{X: -0.3, Y: -0.2, Z: 0.1}, r3.Vec{X: 0.4, Y: 0.5, Z: 0.9}))
	obox := must(NewOBox(r3.Vec{X: 0.2, Y: -0.1, Z: 0.6}, r3.Vec{X: 0.8, Y: 0.3, Z: 0.5}, RotationRPY(20, -35, 110)))
	sph := must(NewSphere(r3.Vec{X: 0.1, Y: 0.2, Z: 0.7}, 0.35))
	cyl := must(NewCylinder(r3.Vec{X: -0.3, Y: 0.1, Z: 0.2}, r3.Vec{X: 0.4, Y: -0.2, Z: 1.0}, 0.25))
	cap := must(NewCapsule(r3.Vec{X: -0.2, Y: -0.3, Z: 0.5}, r3.Vec{X: 0.5, Y: 0.4, Z: 0.8}, 0.15))
	pent := must(NewPrism([]r2.Vec{{X: 0, Y: 0}, {X: 0.6, Y: -0.1}, {X: 0.8, Y: 0.4}, {X: 0.3, Y: 0.8}, {X: -0.2, Y: 0.4}}, 0.2, 1.1))
	lpr := must(NewPrism(lShape, 0, 1))
	upr := must(NewPrism(uShape, 0.5, 1.2))
	return []namedShape{
		{"box", box}, {"obox", obox}, {"sphere", sph}, {"cylinder", cyl}, {"capsule", cap},
		{"prism-convex", pent}, {"prism-L", lpr}, {"prism-U", upr},
		{"inflated-box", Inflate(box, 0.05)}, {"inflated-obox", Inflate(obox, 0.07)},
		{"inflated-cylinder", Inflate(cyl, 0.1)}, {"inflated-prism-convex", Inflate(pent, 0.05)},
		{"inflated-prism-U", Inflate(upr, 0.2)},
	}
}

func TestVolumesClosedForm(t *testing.T) {
	cases := []struct {
		name string
		got  float64
		want float64 // closed form, computed by hand beside each case
	}{
		// closed form: sphere 4/3·π·r³, r = 0.5 → π/6
		{"sphere", must(NewSphere(r3.Vec{X: 1}, 0.5)).Volume(), math.Pi / 6},
		// closed form: cylinder π·r²·h, r = 0.3, h = |(1,2,2)| = 3 → 0.27π
		{"cylinder", must(NewCylinder(r3.Vec{}, r3.Vec{X: 1, Y: 2, Z: 2}, 0.3)).Volume(), 0.27 * math.Pi},
		// closed form: capsule π·r²·h + 4/3·π·r³, r = 0.5, h = 2 → π/2 + π/6 = 2π/3
		{"capsule", must(NewCapsule(r3.Vec{Z: 1}, r3.Vec{Z: 3}, 0.5)).Volume(), 2 * math.Pi / 3},
		// closed form: a capsule of zero length is a ball, 4/3·π·0.5³ = π/6
		{"capsule-ball", must(NewCapsule(r3.Vec{Z: 1}, r3.Vec{Z: 1}, 0.5)).Volume(), math.Pi / 6},
		// closed form: box 2 × 0.5 × 3 = 3
		{"box", must(NewBox(r3.Vec{X: -1, Y: 0, Z: 1}, r3.Vec{X: 1, Y: 0.5, Z: 4})).Volume(), 3},
		// closed form: oriented box, product of its sizes 0.4·0.5·0.6 = 0.12 whatever the rotation
		{"obox", must(NewOBox(r3.Vec{X: 1, Y: 2, Z: 3}, r3.Vec{X: 0.4, Y: 0.5, Z: 0.6}, RotationRPY(33, 12, -71))).Volume(), 0.12},
		// closed form: footprint area by the shoelace formula (3, see lShape) × height 1.5
		{"prism-L", must(NewPrism(lShape, -0.5, 1)).Volume(), 4.5},
		// shoelace for uShape (clockwise): Σ(x_i·y_{i+1} − x_{i+1}·y_i) =
		// 0 + (0·2−1·2) + (1·1−2·1) + (2·2−2·1) + (2·2−3·1)... by rectangles:
		// 3·2 − 1·1 = 5; × height 0.7 = 3.5
		{"prism-U", must(NewPrism(uShape, 0.5, 1.2)).Volume(), 3.5},
		// closed form: triangle (0,0),(4,0),(0,3) has area 6; × height 2 = 12
		{"prism-triangle", must(NewPrism([]r2.Vec{{}, {X: 4}, {Y: 3}}, 0, 2)).Volume(), 12},
	}
	for _, c := range cases {
		if !near(c.got, c.want, 1e-12*math.Max(1, c.want)) {
			t.Errorf("%s: volume %.15g, want %.15g", c.name, c.got, c.want)
		}
	}
}

func TestDistancesByHand(t *testing.T) {
	box := must(NewBox(r3.Vec{}, r3.Vec{X: 2, Y: 1, Z: 1}))
	obox := must(NewOBox(r3.Vec{X: 1, Y: 2, Z: 0.5}, r3.Vec{X: 2, Y: 1, Z: 1}, RotationRPY(0, 0, 90)))
	obox45 := must(NewOBox(r3.Vec{}, r3.Vec{X: 2, Y: 2, Z: 2}, RotationRPY(0, 0, 45)))
	sph := must(NewSphere(r3.Vec{X: 1, Y: 1, Z: 1}, 0.5))
	cyl := must(NewCylinder(r3.Vec{}, r3.Vec{Z: 2}, 1))
	tilt := must(NewCylinder(r3.Vec{}, r3.Vec{X: 2, Y: 2}, 0.5))
	cap := must(NewCapsule(r3.Vec{}, r3.Vec{X: 1}, 0.25))
	lpr := must(NewPrism(lShape, 0, 1))
	cases := []struct {
		name string
		s    Shape
		p    r3.Vec
		want float64
	}{
		// box [0,2]×[0,1]×[0,1]
		{"box face", box, r3.Vec{X: 3, Y: 0.5, Z: 0.5}, 1},                    // 3 − 2
		{"box corner", box, r3.Vec{X: 3, Y: 2, Z: 2}, math.Sqrt(3)},           // to (2,1,1): √(1+1+1)
		{"box edge", box, r3.Vec{X: 1, Y: 4, Z: -4}, 5},                       // to (1,1,0): √(3²+4²)
		{"box centre", box, r3.Vec{X: 1, Y: 0.5, Z: 0.5}, -0.5},               // nearest faces y,z at 0.5
		{"box near face", box, r3.Vec{X: 0.2, Y: 0.5, Z: 0.5}, -0.2},          // face x = 0
		{"box on face", box, r3.Vec{X: 2, Y: 0.3, Z: 0.3}, 0},                 // on x = 2
		{"obox along y", obox, r3.Vec{X: 1, Y: 4, Z: 0.5}, 1},                 // yaw 90: half 1 along cell y; 2 − 1
		{"obox along x", obox, r3.Vec{X: 2.5, Y: 2, Z: 0.5}, 1},               // half 0.5 along cell x; 1.5 − 0.5
		{"obox corner", obox, r3.Vec{X: 2, Y: 4, Z: 1.5}, math.Sqrt(1.5)},     // excess (0.5, 1, 0.5)
		{"obox 45 vertex", obox45, r3.Vec{X: 2}, 2 - math.Sqrt2},              // square's vertex at (√2, 0)
		{"obox 45 inside", obox45, r3.Vec{}, -1},                              // half size 1
		{"sphere out", sph, r3.Vec{X: 1, Y: 1, Z: 3}, 1.5},                    // 2 − 0.5
		{"sphere in", sph, r3.Vec{X: 1, Y: 1, Z: 1.2}, -0.3},                  // 0.2 − 0.5
		{"sphere centre", sph, r3.Vec{X: 1, Y: 1, Z: 1}, -0.5},                // −r
		{"cyl side", cyl, r3.Vec{X: 3, Z: 1}, 2},                              // radial 3 − 1
		{"cyl top", cyl, r3.Vec{Z: 3}, 1},                                     // 3 − 2
		{"cyl rim", cyl, r3.Vec{X: 3, Y: 4, Z: 3}, math.Sqrt(17)},             // radial 5−1 = 4, axial 1: √(16+1)
		{"cyl inside", cyl, r3.Vec{X: 0.5, Z: 1}, -0.5},                       // side 0.5 nearer than caps (1)
		{"cyl inside cap", cyl, r3.Vec{Z: 1.9}, -0.1},                         // top cap 0.1 away
		{"cyl tilted", tilt, r3.Vec{Y: 2}, math.Sqrt2 - 0.5},                  // foot (1,1,0), radial |(−1,1,0)| = √2
		{"capsule side", cap, r3.Vec{X: 0.5, Y: 1}, 0.75},                     // 1 − 0.25
		{"capsule end", cap, r3.Vec{X: 2}, 0.75},                              // to b: 1 − 0.25
		{"capsule end a", cap, r3.Vec{X: -0.3, Y: 0.4}, 0.25},                 // to a: √(0.09+0.16) = 0.5; − 0.25
		{"capsule inside", cap, r3.Vec{X: 0.5, Y: 0.1}, -0.15},                // 0.1 − 0.25
		{"L notch", lpr, r3.Vec{X: 0.5, Y: 1.5, Z: 0.5}, 0.5},                 // walls x = 1 and y = 1 both 0.5 away
		{"L notch above", lpr, r3.Vec{X: 0.5, Y: 1.5, Z: 2}, math.Sqrt(1.25)}, // planar 0.5, 1 above top: √(0.25+1)
		{"L reflex corner", lpr, r3.Vec{X: 0.7, Y: 1.4, Z: 0.5}, 0.3},         // wall x=1: 0.3, wall y=1: 0.4
		{"L inside", lpr, r3.Vec{X: 1.5, Y: 0.5, Z: 0.5}, -0.5},               // walls x=2, y=0, top, bottom all 0.5; corner (1,1) √0.5
		{"L inside wall", lpr, r3.Vec{X: 1.8, Y: 1.5, Z: 0.5}, -0.2},          // wall x = 2
		{"L outside corner", lpr, r3.Vec{X: 3, Y: 3, Z: 0.5}, math.Sqrt2},     // to corner (2,2)
		{"L below", lpr, r3.Vec{X: 0.5, Y: 0.5, Z: -0.25}, 0.25},              // under the bottom
	}
	for _, c := range cases {
		if got := c.s.SignedDistance(c.p); !near(got, c.want, 1e-12) {
			t.Errorf("%s: SignedDistance(%v) = %.15g, want %.15g", c.name, c.p, got, c.want)
		}
	}
	// Closest points worked by hand.
	closest := []struct {
		name string
		s    Shape
		p, c r3.Vec
	}{
		{"box corner", box, r3.Vec{X: 3, Y: 2, Z: 2}, r3.Vec{X: 2, Y: 1, Z: 1}},
		{"box inside", box, r3.Vec{X: 0.2, Y: 0.5, Z: 0.5}, r3.Vec{X: 0, Y: 0.5, Z: 0.5}},
		{"obox 45 vertex", obox45, r3.Vec{X: 2}, r3.Vec{X: math.Sqrt2}},
		{"sphere", sph, r3.Vec{X: 1, Y: 1, Z: 3}, r3.Vec{X: 1, Y: 1, Z: 1.5}},
		{"cyl rim", cyl, r3.Vec{X: 3, Y: 4, Z: 3}, r3.Vec{X: 0.6, Y: 0.8, Z: 2}},
		{"capsule", cap, r3.Vec{X: 0.5, Y: 1}, r3.Vec{X: 0.5, Y: 0.25}},
		{"L notch above", lpr, r3.Vec{X: 0.5, Y: 1.2, Z: 2}, r3.Vec{X: 0.5, Y: 1, Z: 1}},
	}
	for _, c := range closest {
		if got := c.s.Closest(c.p); r3.Norm(r3.Sub(got, c.c)) > 1e-12 {
			t.Errorf("%s: Closest(%v) = %v, want %v", c.name, c.p, got, c.c)
		}
	}
}

func TestBoundsExact(t *testing.T) {
	// Every shape's bounds must contain the shape and be touched by it on
	// every side: compare with the extremes of the closest points of far
	// points in the six axis directions, which are the support points.
	for _, ns := range testShapes() {
		b := ns.s.Bounds()
		c := r3.Scale(0.5, r3.Add(b.Min, b.Max))
		for i, dir := range []r3.Vec{{X: 1}, {X: -1}, {Y: 1}, {Y: -1}, {Z: 1}, {Z: -1}} {
			// The support point in direction dir maximises dir·x over the
			// shape; scan a hemisphere of far points for the best one.
			best := math.Inf(-1)
			for k := 0; k < 4000; k++ {
				u := fibonacciDir(k, 4000)
				if r3.Dot(u, dir) < 0.5 {
					continue
				}
				q := ns.s.Closest(r3.Add(c, r3.Scale(1000, u)))
				best = math.Max(best, r3.Dot(q, dir))
			}
			lim := []float64{b.Max.X, -b.Min.X, b.Max.Y, -b.Min.Y, b.Max.Z, -b.Min.Z}[i]
			// The shape must not pass the bound, and must reach it to within
			// the angular resolution of the scan (a few mm on these sizes).
			if best > lim+1e-9 || best < lim-5e-3 {
				t.Errorf("%s: bound %d is %.6f, support scan reaches %.6f", ns.name, i, lim, best)
			}
		}
	}
}

// fibonacciDir returns the k-th of n nearly uniform unit vectors (a
// Fibonacci lattice on the sphere).
func fibonacciDir(k, n int) r3.Vec {
	z := 1 - (2*float64(k)+1)/float64(n)
	r := math.Sqrt(1 - z*z)
	phi := float64(k) * math.Pi * (3 - math.Sqrt(5))
	return r3.Vec{X: r * math.Cos(phi), Y: r * math.Sin(phi), Z: z}
}

func TestConstructorErrors(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name  string
		err   error
		field string
		msg   string
	}{
		{"sphere r=0", second(NewSphere(r3.Vec{}, 0)), "radius", "must be > 0"},
		{"sphere r<0", second(NewSphere(r3.Vec{}, -1)), "radius", "must be > 0"},
		{"sphere r NaN", second(NewSphere(r3.Vec{}, nan)), "radius", "NaN/Inf"},
		{"sphere centre Inf", second(NewSphere(r3.Vec{X: math.Inf(1)}, 1)), "center", "NaN/Inf"},
		{"box inverted", second(NewBox(r3.Vec{Z: 2}, r3.Vec{X: 1, Y: 1, Z: 1.5})), "min", "min.z 2 is above max.z 1.5"},
		{"box flat", second(NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 0, Z: 1})), "max", "zero volume"},
		{"box NaN", second(NewBox(r3.Vec{}, r3.Vec{X: nan, Y: 1, Z: 1})), "max", "NaN/Inf"},
		{"obox size", second(NewOBox(r3.Vec{}, r3.Vec{X: 1, Y: 0, Z: 1}, RotationRPY(0, 0, 0))), "size", "must be > 0"},
		{"obox zero rot", second(NewOBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1}, r3.Rotation{})), "rotation", "zero quaternion"},
		{"obox NaN rot", second(NewOBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1}, RotationRPY(nan, 0, 0))), "rotation", "NaN/Inf"},
		{"quat zero", second(RotationQuat(0, 0, 0, 0)), "quat", "zero quaternion"},
		{"quat NaN", second(RotationQuat(1, nan, 0, 0)), "quat", "NaN/Inf"},
		{"cylinder a=b", second(NewCylinder(r3.Vec{X: 1}, r3.Vec{X: 1}, 1)), "b", "zero volume"},
		{"cylinder r", second(NewCylinder(r3.Vec{}, r3.Vec{X: 1}, -0.1)), "radius", "must be > 0"},
		{"cylinder a NaN", second(NewCylinder(r3.Vec{Y: nan}, r3.Vec{X: 1}, 1)), "a", "NaN/Inf"},
		{"capsule r", second(NewCapsule(r3.Vec{}, r3.Vec{X: 1}, 0)), "radius", "must be > 0"},
		{"capsule b Inf", second(NewCapsule(r3.Vec{}, r3.Vec{X: math.Inf(-1)}, 1)), "b", "NaN/Inf"},
		{"prism 2 points", second(NewPrism([]r2.Vec{{}, {X: 1}}, 0, 1)), "footprint", "at least 3 points, got 2"},
		{"prism z order", second(NewPrism(lShape, 2, 1.5)), "zmin", "zmin 2 is above zmax 1.5"},
		{"prism z equal", second(NewPrism(lShape, 1, 1)), "zmax", "zero volume"},
		{"prism zmax NaN", second(NewPrism(lShape, 0, nan)), "zmax", "NaN/Inf"},
		{"prism point NaN", second(NewPrism([]r2.Vec{{}, {X: 1}, {X: nan, Y: 1}}, 0, 1)), "footprint[2]", "NaN/Inf"},
		{"prism collinear", second(NewPrism([]r2.Vec{{}, {X: 1}, {X: 2}}, 0, 1)), "footprint", "overlap"},
		{"prism collinear fwd", second(NewPrism([]r2.Vec{{}, {X: 1, Y: 1}, {X: 3, Y: 3}, {X: 2, Y: 2}}, 0, 1)), "footprint", "not a simple polygon"},
		{"prism repeat", second(NewPrism([]r2.Vec{{}, {X: 1}, {X: 1}, {Y: 1}}, 0, 1)), "footprint[2]", "repeats footprint[1]"},
		// bow tie: edge 0 (0,0)→(1,1) crosses edge 2 (1,0)→(0,1)
		{"prism bow tie", second(NewPrism([]r2.Vec{{}, {X: 1, Y: 1}, {X: 1}, {Y: 1}}, 0, 1)), "footprint", "edges 0 and 2 cross: footprint is not a simple polygon"},
		// edge 3 (3,1)→(1,0) touches corner 1 (1,0) of edges 0 and 1
		{"prism touching", second(NewPrism([]r2.Vec{{}, {X: 1}, {X: 2, Y: 2}, {X: 3, Y: 1}, {X: 1}, {Y: 2}}, 0, 1)), "footprint", "not a simple polygon"},
		{"prism zero area", second(NewPrism([]r2.Vec{{}, {X: 1}, {X: 1, Y: 1}, {X: 1}}, 0, 1)), "footprint", "not a simple polygon"},
	}
	for _, c := range cases {
		var se *ShapeError
		if !errors.As(c.err, &se) {
			t.Errorf("%s: error %v, want a *ShapeError", c.name, c.err)
			continue
		}
		if se.Field != c.field || !strings.Contains(se.Msg, c.msg) {
			t.Errorf("%s: got field %q msg %q, want field %q msg containing %q", c.name, se.Field, se.Msg, c.field, c.msg)
		}
	}
	// A repeated closing point is accepted, and either winding gives the
	// same solid.
	closed := append(append([]r2.Vec(nil), lShape...), lShape[0])
	pc, err := NewPrism(closed, 0, 1)
	if err != nil {
		t.Fatalf("closed ring: %v", err)
	}
	rev := make([]r2.Vec, len(lShape))
	for i, v := range lShape {
		rev[len(lShape)-1-i] = v
	}
	pr := must(NewPrism(rev, 0, 1))
	for _, p := range []r3.Vec{{X: 0.5, Y: 1.5, Z: 0.5}, {X: 1.5, Y: 0.5, Z: 0.5}, {X: 3, Y: -1, Z: 2}} {
		a, b := pc.SignedDistance(p), pr.SignedDistance(p)
		if a != must(NewPrism(lShape, 0, 1)).SignedDistance(p) || a != b {
			t.Errorf("winding/closing changes the distance at %v: %v vs %v", p, a, b)
		}
	}
	if len(pc.Footprint()) != len(lShape) {
		t.Errorf("closing point kept: %d points", len(pc.Footprint()))
	}
}

func second[T any](_ T, err error) error { return err }

func TestInflatedVolume(t *testing.T) {
	const m = 0.2
	box := must(NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 2, Z: 3}))
	cyl := must(NewCylinder(r3.Vec{}, r3.Vec{Z: 2}, 0.5))
	sph := must(NewSphere(r3.Vec{}, 0.5))
	cap := must(NewCapsule(r3.Vec{}, r3.Vec{X: 1}, 0.3))
	sq := must(NewPrism([]r2.Vec{{}, {X: 1}, {X: 1, Y: 2}, {Y: 2}}, 0, 3))
	lpr := must(NewPrism(lShape, 0, 1))
	cases := []struct {
		name string
		got  float64
		want float64
	}{
		// closed form, by decomposition of the box grown by m: the box, six
		// face slabs 2(ab+bc+ca)m, twelve quarter cylinders (four along each
		// edge length) (a+b+c)·πm², eight eighth balls 4/3·πm³.
		{"box", Inflate(box, m).Volume(), 6 + 2*(2+6+3)*m + (1+2+3)*math.Pi*m*m + 4.0/3*math.Pi*m*m*m},
		// the same box as a prism with a rectangular (convex) footprint
		{"prism-rect", Inflate(sq, m).Volume(), 6 + 2*(2+6+3)*m + (1+2+3)*math.Pi*m*m + 4.0/3*math.Pi*m*m*m},
		// closed form: a ball of radius r+m, 4/3·π·0.7³
		{"sphere", Inflate(sph, m).Volume(), 4.0 / 3 * math.Pi * 0.343},
		// closed form: a capsule of radius 0.5, length 1: π·0.25 + 4/3·π·0.125
		{"capsule", Inflate(cap, m).Volume(), math.Pi*0.25 + 4.0/3*math.Pi*0.125},
		// closed form, by decomposition of the cylinder (r, h) grown by m:
		// the cylinder πr²h, the side shell π((r+m)²−r²)h, two cap slabs
		// 2πr²m, and two rims, each a quarter disc of radius m revolved at
		// distance r: by Pappus' theorem (πm²/4)·2π·(r + 4m/(3π)).
		{"cylinder", Inflate(cyl, m).Volume(),
			math.Pi*0.25*2 + math.Pi*(0.7*0.7-0.25)*2 + 2*math.Pi*0.25*m + 2*(math.Pi*m*m/4)*2*math.Pi*(0.5+4*m/(3*math.Pi))},
		// L prism, by slices: the footprint offset by ρ has area
		// A + Pρ + (5π/4 − 1)ρ² (five quarter discs at the convex corners, the
		// ρ×ρ square counted twice at the reflex corner), which holds while
		// that square stays within the two unit edges at the reflex corner,
		// ρ <= 1. V = h·A2(m) + 2∫₀^m A2(√(m²−δ²))dδ
		// = h·A2(m) + 2(Am + Pπm²/4 + (2/3)c·m³).
		{"prism-L m=0.2", Inflate(lpr, m).Volume(), lVolume(0.2)},
		// m = 0.9 is beyond the radius this implementation vouches for the
		// closed form (0.5, half the gap between the parallel edges y=0 and
		// y=1), so the numerical integration is used; the value is still
		// the closed form above.
		{"prism-L m=0.9", Inflate(lpr, 0.9).Volume(), lVolume(0.9)},
	}
	for _, c := range cases {
		if !near(c.got, c.want, 1e-6*c.want) {
			t.Errorf("%s: inflated volume %.12g, want %.12g (rel err %.2g)", c.name, c.got, c.want, (c.got-c.want)/c.want)
		}
	}
	if _, valid := lpr.offsetCoeff(); valid != 0.5 {
		t.Errorf("L footprint validity radius %v, want 0.5 (half the gap between parallel edges)", valid)
	}
	// The numerical offset area of a convex polygon against the closed form
	// A + Pρ + πρ² (Steiner formula in the plane).
	sqA := sq.offsetAreaNumeric(0.7)
	if want := 2 + 6*0.7 + math.Pi*0.49; !near(sqA, want, 1e-7*want) {
		t.Errorf("numeric offset area of the rectangle %.12g, want %.12g", sqA, want)
	}
}

// lVolume is the exact volume of the L prism (height 1) inflated by m.
func lVolume(m float64) float64 {
	A, P, h, c := 3.0, 8.0, 1.0, 5*math.Pi/4-1
	return h*(A+P*m+c*m*m) + 2*(A*m+P*math.Pi*m*m/4+2.0/3*c*m*m*m)
}

// The triangulation behind the non-convex prism's path bounds covers the
// footprint: areas add up (closed form: shoelace areas 3 and 5, see lShape
// and uShape), n − 2 triangles, every piece inside the prism.
func TestPrismTriangulation(t *testing.T) {
	for _, c := range []struct {
		fp   []r2.Vec
		area float64
	}{{lShape, 3}, {uShape, 5}} {
		p := must(NewPrism(c.fp, 0, 1))
		if len(p.pieces) != len(c.fp)-2 {
			t.Fatalf("%d pieces for %d points", len(p.pieces), len(c.fp))
		}
		var sum float64
		for _, q := range p.pieces {
			sum += q.area
			for _, v := range q.pts {
				if p.SignedDistance(r3.Vec{X: v.X, Y: v.Y, Z: 0.5}) > 1e-12 {
					t.Errorf("piece corner %v outside the prism", v)
				}
			}
		}
		if !near(sum, c.area, 1e-12) {
			t.Errorf("triangles cover %g, footprint area %g", sum, c.area)
		}
	}
	// A footprint with a corner on a straight run still triangulates.
	withCollinear := []r2.Vec{{X: 0, Y: 0}, {X: 1, Y: 0}, {X: 2, Y: 0}, {X: 2, Y: 2}, {X: 1, Y: 2}, {X: 1, Y: 1}, {X: 0, Y: 1}}
	if p := must(NewPrism(withCollinear, 0, 1)); p.pieces == nil {
		t.Error("no triangulation for a footprint with a collinear corner")
	}
}

// FuzzNewPrism: any footprint either gets a *ShapeError or builds a prism
// whose triangulation covers it (which fails for a polygon that is not
// simple) and whose signed distance agrees with containment; nothing
// panics.
func FuzzNewPrism(f *testing.F) {
	f.Add(uint8(6), 0.0, 0.0, 2.0, 0.0, 2.0, 2.0, 1.0, 2.0, 1.0, 1.0, 0.0, 1.0, 0.0, 0.0)
	f.Add(uint8(4), 0.0, 0.0, 1.0, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0)
	f.Add(uint8(7), 0.0, 0.0, 3.0, 0.0, 3.0, 2.0, 2.0, 2.0, 2.0, 1.0, 1.0, 1.0, 1.0, 2.0)
	f.Fuzz(func(t *testing.T, n uint8, x0, y0, x1, y1, x2, y2, x3, y3, x4, y4, x5, y5, x6, y6 float64) {
		all := []r2.Vec{{X: x0, Y: y0}, {X: x1, Y: y1}, {X: x2, Y: y2}, {X: x3, Y: y3}, {X: x4, Y: y4}, {X: x5, Y: y5}, {X: x6, Y: y6}}
		fp := all[:int(n)%(len(all)+1)]
		p, err := NewPrism(fp, 0, 1)
		if err != nil {
			var se *ShapeError
			if !errors.As(err, &se) || se.Msg == "" || !strings.HasPrefix(se.Field, "footprint") {
				t.Fatalf("error %v is not a footprint *ShapeError", err)
			}
			return
		}
		if p.area <= 0 || (!p.isConvex && p.pieces == nil) {
			t.Fatalf("accepted footprint %v: area %g, convex %v, %d pieces", fp, p.area, p.isConvex, len(p.pieces))
		}
		b := p.Bounds()
		for i := 0; i < 50; i++ {
			u := fibonacciDir(i, 50)
			q := r3.Vec{X: b.Min.X + (b.Max.X-b.Min.X)*(u.X+1)/2, Y: b.Min.Y + (b.Max.Y-b.Min.Y)*(u.Y+1)/2, Z: (u.Z + 1) / 2}
			if d := p.SignedDistance(q); math.IsNaN(d) || (math.Abs(d) > 1e-9 && (d < 0) != p.Contains(q)) {
				t.Fatalf("sd %g at %v, contains %v", d, q, p.Contains(q))
			}
		}
	})
}

// The convex minorant of a non-convex prism is the prism over the
// footprint's convex hull. By hand: the hull of the L footprint drops the
// reflex corner (1,1); the hull of the U footprint is its 3×2 rectangle
// (the notch corners are inside, the top corners collinear with none).
func TestPrismHull(t *testing.T) {
	for _, c := range []struct {
		name string
		fp   []r2.Vec
		want []r2.Vec // counter-clockwise from the lowest-leftmost corner
	}{
		{"L", lShape, []r2.Vec{{X: 0, Y: 0}, {X: 2, Y: 0}, {X: 2, Y: 2}, {X: 1, Y: 2}, {X: 0, Y: 1}}},
		{"U", uShape, []r2.Vec{{X: 0, Y: 0}, {X: 3, Y: 0}, {X: 3, Y: 2}, {X: 0, Y: 2}}},
	} {
		p := must(NewPrism(c.fp, 0, 1))
		h := p.hull()
		if h == nil || !h.convex() {
			t.Fatalf("%s: no convex minorant", c.name)
		}
		got := h.(*Prism).Footprint()
		if len(got) != len(c.want) {
			t.Fatalf("%s: hull %v, want %v", c.name, got, c.want)
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Fatalf("%s: hull %v, want %v", c.name, got, c.want)
			}
		}
	}
	if h := must(NewPrism([]r2.Vec{{X: 0, Y: 0}, {X: 1, Y: 0}, {X: 1, Y: 1}, {X: 0, Y: 1}}, 0, 1)).hull(); h != nil {
		t.Errorf("convex prism has a minorant %v", h)
	}
	if h := Inflate(must(NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1})), 0.1).(hullBounder).hull(); h != nil {
		t.Errorf("inflated box has a minorant %v", h)
	}

	// The minorant's signed distance is nowhere above the shape's, and
	// equal where the nearest surface point is on both (south of the L:
	// closed form, the distance to the face y = 0, 0.5).
	rng := rand.New(rand.NewPCG(81, 82))
	upr := must(NewPrism(uShape, 0.5, 1.2))
	lpr := must(NewPrism(lShape, 0, 1))
	for _, s := range []Shape{lpr, upr, Inflate(upr, 0.15), Inflate(lpr, 0.3)} {
		h := s.(hullBounder).hull()
		equal := 0
		for i := 0; i < 20000; i++ {
			q := randIn(rng, s.Bounds(), 0.5)
			sd, hd := s.SignedDistance(q), h.SignedDistance(q)
			if hd > sd+1e-12 {
				t.Fatalf("%s: minorant %.12g above the signed distance %.12g at %v", s.Kind(), hd, sd, q)
			}
			if hd == sd {
				equal++
			}
		}
		if equal < 10000 {
			t.Errorf("%s: minorant equal to the signed distance at only %d of 20000 points", s.Kind(), equal)
		}
	}
	if sd, hd := lpr.SignedDistance(r3.Vec{X: 1, Y: -0.5, Z: 0.5}), lpr.hull().SignedDistance(r3.Vec{X: 1, Y: -0.5, Z: 0.5}); sd != 0.5 || hd != 0.5 {
		t.Errorf("south of the L: %v and %v, want 0.5 and 0.5", sd, hd)
	}
}

// Where exactHull vouches for it, the prism's signed distance equals its
// hull's: checked at random points of random boxes around the L and U
// prisms (also inflated). By hand: the L's hull (see TestPrismHull) has one
// edge that is not a footprint edge, (1,2)–(0,1), bridging the reflex
// corner (1,1): its pocket box is [0,1] × [1,2] × [0,1]. The box
// [0.2,1.8] × [−0.4,−0.2] × [0.3,0.6] south of the L is 1.2 m from it; the
// hull's signed distance at its centre (1, −0.3, 0.45) is 0.3 (the face
// y = 0) and its half diagonal 0.5·|(1.6, 0.2, 0.3)| = 0.82 m, 1.12 < 1.2:
// the hull stands in. A box inside the pocket is refused.
func TestPrismExactHull(t *testing.T) {
	lpr := must(NewPrism(lShape, 0, 1))
	if h, sd := lpr.exactHull(AABB{Min: r3.Vec{X: 0.2, Y: -0.4, Z: 0.3}, Max: r3.Vec{X: 1.8, Y: -0.2, Z: 0.6}}); h == nil || !near(sd, 0.3, 1e-12) {
		t.Errorf("box south of the L: minorant %v, sd at the centre %v; want the hull and 0.3", h, sd)
	}
	if h, _ := lpr.exactHull(AABB{Min: r3.Vec{X: 0.4, Y: 1.4, Z: 0.3}, Max: r3.Vec{X: 0.6, Y: 1.6, Z: 0.6}}); h != nil {
		t.Errorf("box in the pocket: minorant %v, want none", h)
	}
	rng := rand.New(rand.NewPCG(83, 84))
	upr := must(NewPrism(uShape, 0.5, 1.2))
	for _, s := range []Shape{lpr, upr, Inflate(upr, 0.15), Inflate(lpr, 0.3)} {
		hs := s.(hullSubstitute)
		yes, no := 0, 0
		for i := 0; i < 4000; i++ {
			c := randIn(rng, s.Bounds(), 1.0)
			h := r3.Vec{X: 0.3 * rng.Float64(), Y: 0.3 * rng.Float64(), Z: 0.3 * rng.Float64()}
			b := AABB{Min: r3.Sub(c, h), Max: r3.Add(c, h)}
			ev, sdc := hs.exactHull(b)
			if ev == nil {
				no++
				continue
			}
			yes++
			if !ev.convex() || !near(sdc, ev.SignedDistance(c), 1e-12) {
				t.Fatalf("%s: minorant %v at the centre %v of %v: %v, want %v", s.Kind(), ev, c, b, sdc, ev.SignedDistance(c))
			}
			for j := 0; j < 20; j++ {
				q := randIn(rng, b, 0)
				if a, m := s.SignedDistance(q), ev.SignedDistance(q); !near(a, m, 1e-12) {
					t.Fatalf("%s: in %v at %v the signed distance is %.12g, the minorant's %.12g", s.Kind(), b, q, a, m)
				}
			}
		}
		t.Logf("%s: the hull stands in for the shape in %d of %d boxes", s.Kind(), yes, yes+no)
		if yes < 1000 || no < 200 {
			t.Errorf("%s: the hull stands in for the shape in %d of %d boxes", s.Kind(), yes, yes+no)
		}
	}
}
