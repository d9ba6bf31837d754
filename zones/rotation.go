package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// RotationRPY returns the rotation given by roll, pitch and yaw angles in
// degrees, applied as Rz(yaw)·Ry(pitch)·Rx(roll): a point is first rotated
// about x by roll, then about y by pitch, then about z by yaw (all axes fixed
// in the parent frame). Non-finite angles give a non-finite rotation, which
// NewOBox and Pose.Validate reject.
func RotationRPY(rollDeg, pitchDeg, yawDeg float64) r3.Rotation {
	const deg = math.Pi / 180
	sr, cr := math.Sincos(0.5 * rollDeg * deg)
	sp, cp := math.Sincos(0.5 * pitchDeg * deg)
	sy, cy := math.Sincos(0.5 * yawDeg * deg)
	// Product qz·qy·qx of the three elementary quaternions, expanded.
	return r3.Rotation{
		Real: cy*cp*cr + sy*sp*sr,
		Imag: cy*cp*sr - sy*sp*cr,
		Jmag: cy*sp*cr + sy*cp*sr,
		Kmag: sy*cp*cr - cy*sp*sr,
	}
}

// RotationQuat returns the rotation of the quaternion w + xi + yj + zk,
// normalised to unit length. It returns a *ShapeError for field "quat" when
// a component is NaN or infinite or when the quaternion is zero (norm below
// 1e-12), since neither describes a rotation.
func RotationQuat(w, x, y, z float64) (r3.Rotation, error) {
	if !finite(w) || !finite(x) || !finite(y) || !finite(z) {
		return r3.Rotation{}, &ShapeError{Field: "quat", Msg: "NaN/Inf"}
	}
	n := math.Sqrt(w*w + x*x + y*y + z*z)
	if !(n >= 1e-12) || math.IsInf(n, 0) {
		return r3.Rotation{}, &ShapeError{Field: "quat", Msg: "zero quaternion is not a rotation"}
	}
	return r3.Rotation{Real: w / n, Imag: x / n, Jmag: y / n, Kmag: z / n}, nil
}

// mat3 is a 3×3 rotation matrix, row-major; columns are the rotated frame's
// axes expressed in the parent frame. It is the fast form of an r3.Rotation
// for the hot path (r3.Rotation.Mat allocates).
type mat3 [3][3]float64

// identityMat is the identity rotation matrix.
var identityMat = mat3{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}

// rotMat returns the rotation matrix of q. A quaternion that is not of unit
// length is normalised (the matrix uses 2/|q|²); the zero quaternion gives
// the identity, so that the zero Pose is the identity pose.
func rotMat(q r3.Rotation) mat3 {
	w, x, y, z := q.Real, q.Imag, q.Jmag, q.Kmag
	n2 := w*w + x*x + y*y + z*z
	if n2 == 0 {
		return identityMat
	}
	s := 2 / n2
	return mat3{
		{1 - s*(y*y+z*z), s * (x*y - w*z), s * (x*z + w*y)},
		{s * (x*y + w*z), 1 - s*(x*x+z*z), s * (y*z - w*x)},
		{s * (x*z - w*y), s * (y*z + w*x), 1 - s*(x*x+y*y)},
	}
}

// apply returns m·v.
func (m *mat3) apply(v r3.Vec) r3.Vec {
	return r3.Vec{
		X: m[0][0]*v.X + m[0][1]*v.Y + m[0][2]*v.Z,
		Y: m[1][0]*v.X + m[1][1]*v.Y + m[1][2]*v.Z,
		Z: m[2][0]*v.X + m[2][1]*v.Y + m[2][2]*v.Z,
	}
}

// applyT returns mᵀ·v, the inverse rotation of v.
func (m *mat3) applyT(v r3.Vec) r3.Vec {
	return r3.Vec{
		X: m[0][0]*v.X + m[1][0]*v.Y + m[2][0]*v.Z,
		Y: m[0][1]*v.X + m[1][1]*v.Y + m[2][1]*v.Z,
		Z: m[0][2]*v.X + m[1][2]*v.Y + m[2][2]*v.Z,
	}
}

// absApply returns |m|·v with |m| the element-wise absolute value: the half
// extents of the axis-aligned box enclosing a box of half extents v rotated
// by m.
func (m *mat3) absApply(v r3.Vec) r3.Vec {
	return r3.Vec{
		X: math.Abs(m[0][0])*v.X + math.Abs(m[0][1])*v.Y + math.Abs(m[0][2])*v.Z,
		Y: math.Abs(m[1][0])*v.X + math.Abs(m[1][1])*v.Y + math.Abs(m[1][2])*v.Z,
		Z: math.Abs(m[2][0])*v.X + math.Abs(m[2][1])*v.Y + math.Abs(m[2][2])*v.Z,
	}
}

// Validate reports whether the pose describes a rigid placement: every
// component finite. The rotation quaternion may have any length (it is
// normalised where used); the zero quaternion counts as the identity, so the
// zero Pose is the identity pose.
func (p Pose) Validate() error {
	if !finiteVec(p.Pos) {
		return &ShapeError{Field: "pos", Msg: "NaN/Inf"}
	}
	q := p.Rot
	if !finite(q.Real) || !finite(q.Imag) || !finite(q.Jmag) || !finite(q.Kmag) {
		return &ShapeError{Field: "rot", Msg: "NaN/Inf"}
	}
	return nil
}

// Apply maps a point from the posed frame into the parent frame: Rot·p + Pos.
// The zero Pose is the identity.
func (p Pose) Apply(v r3.Vec) r3.Vec {
	m := rotMat(p.Rot)
	return r3.Add(m.apply(v), p.Pos)
}

// Inverse maps a point from the parent frame into the posed frame:
// Rot⁻¹·(v − Pos).
func (p Pose) Inverse(v r3.Vec) r3.Vec {
	m := rotMat(p.Rot)
	return m.applyT(r3.Sub(v, p.Pos))
}
