package forecast

// The solvers of this file are cholesky, cholSolve and cholInvDiag unrolled
// for the sizes of the local polynomial fits (divisions by a pivot become
// multiplications by its reciprocal): at these sizes the loops of the
// general versions cost more than their arithmetic.

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// solveHankel solves a·c = b for the m×m Hankel matrix a[i][j] = pw[i+j] of
// a polynomial fit's normal equations (m = 2, 3 or 4) by Cholesky
// factorisation, and when wantVar writes the diagonal of a⁻¹ into id. It
// reports false when a is not numerically positive definite (the test of
// cholesky).
func solveHankel(m int, pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	switch m {
	case 2:
		return solveHankel2(pw, b, c, id, wantVar)
	case 3:
		return solveHankel3(pw, b, c, id, wantVar)
	case 4:
		return solveHankel4(pw, b, c, id, wantVar)
	}
	var a, l [MaxDegree + 1][MaxDegree + 1]float64
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			a[i][j] = pw[i+j]
		}
	}
	if !cholesky(&a, m, &l) {
		return false
	}
	cholSolve(&l, m, b, c)
	if wantVar {
		*id = cholInvDiag(&l, m)
	}
	return true
}

// solveHankel2 is solveHankel for m = 2, unrolled.
func solveHankel2(pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	d0 := pw[0]
	if !(d0 > 1e-13*pw[0]) {
		return false
	}
	l00 := math.Sqrt(d0)
	r0 := 1 / l00
	l10 := (pw[1]) * r0
	d1 := pw[2] - l10*l10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	l11 := math.Sqrt(d1)
	r1 := 1 / l11
	y0X := r0 * (b[0].X)
	y1X := r1 * (b[1].X - l10*y0X)
	c[1].X = r1 * (y1X)
	c[0].X = r0 * (y0X - l10*c[1].X)
	y0Y := r0 * (b[0].Y)
	y1Y := r1 * (b[1].Y - l10*y0Y)
	c[1].Y = r1 * (y1Y)
	c[0].Y = r0 * (y0Y - l10*c[1].Y)
	y0Z := r0 * (b[0].Z)
	y1Z := r1 * (b[1].Z - l10*y0Z)
	c[1].Z = r1 * (y1Z)
	c[0].Z = r0 * (y0Z - l10*c[1].Z)
	if wantVar {
		v00 := r0
		v10 := -(l10 * v00) * r1
		v11 := r1
		id[0] = v00*v00 + v10*v10
		id[1] = v11 * v11
	}
	return true
}

// solveHankel3 is solveHankel for m = 3, unrolled.
func solveHankel3(pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	d0 := pw[0]
	if !(d0 > 1e-13*pw[0]) {
		return false
	}
	l00 := math.Sqrt(d0)
	r0 := 1 / l00
	l10 := (pw[1]) * r0
	l20 := (pw[2]) * r0
	d1 := pw[2] - l10*l10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	l11 := math.Sqrt(d1)
	r1 := 1 / l11
	l21 := (pw[3] - l20*l10) * r1
	d2 := pw[4] - l20*l20 - l21*l21
	if !(d2 > 1e-13*pw[4]) {
		return false
	}
	l22 := math.Sqrt(d2)
	r2 := 1 / l22
	y0X := r0 * (b[0].X)
	y1X := r1 * (b[1].X - l10*y0X)
	y2X := r2 * (b[2].X - l20*y0X - l21*y1X)
	c[2].X = r2 * (y2X)
	c[1].X = r1 * (y1X - l21*c[2].X)
	c[0].X = r0 * (y0X - l10*c[1].X - l20*c[2].X)
	y0Y := r0 * (b[0].Y)
	y1Y := r1 * (b[1].Y - l10*y0Y)
	y2Y := r2 * (b[2].Y - l20*y0Y - l21*y1Y)
	c[2].Y = r2 * (y2Y)
	c[1].Y = r1 * (y1Y - l21*c[2].Y)
	c[0].Y = r0 * (y0Y - l10*c[1].Y - l20*c[2].Y)
	y0Z := r0 * (b[0].Z)
	y1Z := r1 * (b[1].Z - l10*y0Z)
	y2Z := r2 * (b[2].Z - l20*y0Z - l21*y1Z)
	c[2].Z = r2 * (y2Z)
	c[1].Z = r1 * (y1Z - l21*c[2].Z)
	c[0].Z = r0 * (y0Z - l10*c[1].Z - l20*c[2].Z)
	if wantVar {
		v00 := r0
		v10 := -(l10 * v00) * r1
		v20 := -(l20*v00 + l21*v10) * r2
		v11 := r1
		v21 := -(l21 * v11) * r2
		v22 := r2
		id[0] = v00*v00 + v10*v10 + v20*v20
		id[1] = v11*v11 + v21*v21
		id[2] = v22 * v22
	}
	return true
}

// solveHankel4 is solveHankel for m = 4, unrolled.
func solveHankel4(pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	d0 := pw[0]
	if !(d0 > 1e-13*pw[0]) {
		return false
	}
	l00 := math.Sqrt(d0)
	r0 := 1 / l00
	l10 := (pw[1]) * r0
	l20 := (pw[2]) * r0
	l30 := (pw[3]) * r0
	d1 := pw[2] - l10*l10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	l11 := math.Sqrt(d1)
	r1 := 1 / l11
	l21 := (pw[3] - l20*l10) * r1
	l31 := (pw[4] - l30*l10) * r1
	d2 := pw[4] - l20*l20 - l21*l21
	if !(d2 > 1e-13*pw[4]) {
		return false
	}
	l22 := math.Sqrt(d2)
	r2 := 1 / l22
	l32 := (pw[5] - l30*l20 - l31*l21) * r2
	d3 := pw[6] - l30*l30 - l31*l31 - l32*l32
	if !(d3 > 1e-13*pw[6]) {
		return false
	}
	l33 := math.Sqrt(d3)
	r3 := 1 / l33
	y0X := r0 * (b[0].X)
	y1X := r1 * (b[1].X - l10*y0X)
	y2X := r2 * (b[2].X - l20*y0X - l21*y1X)
	y3X := r3 * (b[3].X - l30*y0X - l31*y1X - l32*y2X)
	c[3].X = r3 * (y3X)
	c[2].X = r2 * (y2X - l32*c[3].X)
	c[1].X = r1 * (y1X - l21*c[2].X - l31*c[3].X)
	c[0].X = r0 * (y0X - l10*c[1].X - l20*c[2].X - l30*c[3].X)
	y0Y := r0 * (b[0].Y)
	y1Y := r1 * (b[1].Y - l10*y0Y)
	y2Y := r2 * (b[2].Y - l20*y0Y - l21*y1Y)
	y3Y := r3 * (b[3].Y - l30*y0Y - l31*y1Y - l32*y2Y)
	c[3].Y = r3 * (y3Y)
	c[2].Y = r2 * (y2Y - l32*c[3].Y)
	c[1].Y = r1 * (y1Y - l21*c[2].Y - l31*c[3].Y)
	c[0].Y = r0 * (y0Y - l10*c[1].Y - l20*c[2].Y - l30*c[3].Y)
	y0Z := r0 * (b[0].Z)
	y1Z := r1 * (b[1].Z - l10*y0Z)
	y2Z := r2 * (b[2].Z - l20*y0Z - l21*y1Z)
	y3Z := r3 * (b[3].Z - l30*y0Z - l31*y1Z - l32*y2Z)
	c[3].Z = r3 * (y3Z)
	c[2].Z = r2 * (y2Z - l32*c[3].Z)
	c[1].Z = r1 * (y1Z - l21*c[2].Z - l31*c[3].Z)
	c[0].Z = r0 * (y0Z - l10*c[1].Z - l20*c[2].Z - l30*c[3].Z)
	if wantVar {
		v00 := r0
		v10 := -(l10 * v00) * r1
		v20 := -(l20*v00 + l21*v10) * r2
		v30 := -(l30*v00 + l31*v10 + l32*v20) * r3
		v11 := r1
		v21 := -(l21 * v11) * r2
		v31 := -(l31*v11 + l32*v21) * r3
		v22 := r2
		v32 := -(l32 * v22) * r3
		v33 := r3
		id[0] = v00*v00 + v10*v10 + v20*v20 + v30*v30
		id[1] = v11*v11 + v21*v21 + v31*v31
		id[2] = v22*v22 + v32*v32
		id[3] = v33 * v33
	}
	return true
}
