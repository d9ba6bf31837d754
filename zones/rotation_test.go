package zones

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/num/quat"
	"gonum.org/v1/gonum/spatial/r3"
)

// sameRotation reports whether two rotations move the three axes to within
// tol of each other (q and −q are the same rotation).
func sameRotation(a, b r3.Rotation, tol float64) bool {
	for _, v := range []r3.Vec{{X: 1}, {Y: 1}, {Z: 1}} {
		if r3.Norm(r3.Sub(a.Rotate(v), b.Rotate(v))) > tol {
			return false
		}
	}
	return true
}

// RPY against gonum's own axis-angle rotations, composed one after the
// other: first roll about x, then pitch about y, then yaw about z.
func TestRotationRPYComposition(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	const deg = math.Pi / 180
	for i := 0; i < 2000; i++ {
		r, p, y := 360*rng.Float64()-180, 180*rng.Float64()-90, 360*rng.Float64()-180
		q := RotationRPY(r, p, y)
		rx := r3.NewRotation(r*deg, r3.Vec{X: 1})
		ry := r3.NewRotation(p*deg, r3.Vec{Y: 1})
		rz := r3.NewRotation(y*deg, r3.Vec{Z: 1})
		v := randUnit(rng)
		want := rz.Rotate(ry.Rotate(rx.Rotate(v)))
		if got := q.Rotate(v); r3.Norm(r3.Sub(got, want)) > 1e-12 {
			t.Fatalf("RPY(%g,%g,%g) rotates %v to %v, composition gives %v", r, p, y, v, got, want)
		}
		if n := quat.Abs(quat.Number(q)); math.Abs(n-1) > 1e-12 {
			t.Fatalf("RPY quaternion not unit: %g", n)
		}
		// The matrix used on the hot path agrees with gonum's.
		m, gm := rotMat(q), q.Mat()
		for a := 0; a < 3; a++ {
			for b := 0; b < 3; b++ {
				if math.Abs(m[a][b]-gm.At(a, b)) > 1e-12 {
					t.Fatalf("rotMat differs from r3.Rotation.Mat at (%d,%d): %g vs %g", a, b, m[a][b], gm.At(a, b))
				}
			}
		}
	}
}

// RPY and quaternion forms of the same rotation agree. Reference
// quaternions are closed forms: a rotation by θ about unit axis u is
// (cos θ/2, sin θ/2·u).
func TestRotationRPYvsQuat(t *testing.T) {
	s, c := math.Sin(math.Pi/4), math.Cos(math.Pi/4) // half of 90°
	cases := []struct {
		name          string
		r, p, y       float64
		w, qx, qy, qz float64
	}{
		{"yaw 90", 0, 0, 90, c, 0, 0, s},
		{"pitch 90", 0, 90, 0, c, 0, s, 0},
		{"roll 90", 90, 0, 0, c, s, 0, 0},
		{"identity", 0, 0, 0, 1, 0, 0, 0},
		// roll 180 then yaw 180 = rotation by 180° about y: (0, 0, 1, 0)
		{"roll 180 yaw 180", 180, 0, 180, 0, 0, 1, 0},
		// 120° about (1,1,1)/√3 maps x→y→z→x; as RPY it is roll 90, pitch 0,
		// yaw 90 (x→y: Rz(90)x = y; z→x: Rx(90)z = −y, Rz(90)(−y) = x).
		{"cycle", 90, 0, 90, 0.5, 0.5, 0.5, 0.5},
	}
	for _, cs := range cases {
		q, err := RotationQuat(cs.w, cs.qx, cs.qy, cs.qz)
		if err != nil {
			t.Fatalf("%s: %v", cs.name, err)
		}
		if !sameRotation(RotationRPY(cs.r, cs.p, cs.y), q, 1e-12) {
			t.Errorf("%s: RPY %v and quaternion %v differ", cs.name, RotationRPY(cs.r, cs.p, cs.y), q)
		}
	}
	// Random: the quaternion built from the RPY closed form by gonum's
	// quaternion product of the three elementary rotations.
	rng := rand.New(rand.NewPCG(13, 14))
	for i := 0; i < 1000; i++ {
		r, p, y := 360*rng.Float64()-180, 180*rng.Float64()-90, 360*rng.Float64()-180
		h := func(a float64) (float64, float64) { return math.Sincos(a * math.Pi / 360) }
		sr, cr := h(r)
		sp, cp := h(p)
		sy, cy := h(y)
		prod := quat.Mul(quat.Number{Real: cy, Kmag: sy}, quat.Mul(quat.Number{Real: cp, Jmag: sp}, quat.Number{Real: cr, Imag: sr}))
		// scale arbitrarily: RotationQuat normalises
		k := 0.1 + 5*rng.Float64()
		q, err := RotationQuat(k*prod.Real, k*prod.Imag, k*prod.Jmag, k*prod.Kmag)
		if err != nil {
			t.Fatal(err)
		}
		if !sameRotation(RotationRPY(r, p, y), q, 1e-12) {
			t.Fatalf("RPY(%g,%g,%g) and its quaternion differ", r, p, y)
		}
	}
}

func TestPose(t *testing.T) {
	pose := Pose{Pos: r3.Vec{X: 1, Y: -2, Z: 0.5}, Rot: RotationRPY(10, 20, 30)}
	rng := rand.New(rand.NewPCG(15, 16))
	for i := 0; i < 100; i++ {
		v := randIn(rng, AABB{Max: r3.Vec{X: 1, Y: 1, Z: 1}}, 1)
		w := pose.Apply(v)
		if want := r3.Add(pose.Rot.Rotate(v), pose.Pos); r3.Norm(r3.Sub(w, want)) > 1e-12 {
			t.Fatalf("Apply(%v) = %v, want Rot·v + Pos = %v", v, w, want)
		}
		if back := pose.Inverse(w); r3.Norm(r3.Sub(back, v)) > 1e-12 {
			t.Fatalf("Inverse(Apply(%v)) = %v", v, back)
		}
	}
	var zero Pose
	if v := (r3.Vec{X: 1, Y: 2, Z: 3}); zero.Apply(v) != v || zero.Inverse(v) != v {
		t.Error("the zero Pose is not the identity")
	}
	if (Pose{Pos: r3.Vec{X: math.NaN()}}).Validate() == nil || (Pose{Rot: r3.Rotation{Real: math.Inf(1)}}).Validate() == nil {
		t.Error("Validate accepts a non-finite pose")
	}
}
