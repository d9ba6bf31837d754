package forecast

// The solvers of this file do what cholesky, cholSolve and cholInvDiag do,
// unrolled for the sizes of the local polynomial fits, as a square-root-free
// LDLᵀ factorisation (a = L·D·Lᵀ, L unit lower triangular; D holds the
// squares of the Cholesky pivots, so the test for a positive definite
// matrix is the same): at these sizes the loops of the general versions and
// their square roots cost more than the rest of the arithmetic.

import (
	"gonum.org/v1/gonum/spatial/r3"
)

// solveHankel solves a·c = b for the m×m Hankel matrix a[i][j] = pw[i+j] of
// a polynomial fit's normal equations (m = 2, 3 or 4) by LDLᵀ
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
	r0 := 1 / d0
	e10 := pw[1]
	l10 := e10 * r0
	d1 := pw[2] - l10*e10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	r1 := 1 / d1
	y0X := b[0].X
	y1X := b[1].X - l10*y0X
	c[1].X = r1 * y1X
	c[0].X = r0*y0X - l10*c[1].X
	y0Y := b[0].Y
	y1Y := b[1].Y - l10*y0Y
	c[1].Y = r1 * y1Y
	c[0].Y = r0*y0Y - l10*c[1].Y
	y0Z := b[0].Z
	y1Z := b[1].Z - l10*y0Z
	c[1].Z = r1 * y1Z
	c[0].Z = r0*y0Z - l10*c[1].Z
	if wantVar {
		v10 := -(l10)
		id[0] = r0 + v10*v10*r1
		id[1] = r1
	}
	return true
}

// solveHankel3 is solveHankel for m = 3, unrolled.
func solveHankel3(pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	d0 := pw[0]
	if !(d0 > 1e-13*pw[0]) {
		return false
	}
	r0 := 1 / d0
	e10 := pw[1]
	l10 := e10 * r0
	e20 := pw[2]
	l20 := e20 * r0
	d1 := pw[2] - l10*e10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	r1 := 1 / d1
	e21 := pw[3] - l20*e10
	l21 := e21 * r1
	d2 := pw[4] - l20*e20 - l21*e21
	if !(d2 > 1e-13*pw[4]) {
		return false
	}
	r2 := 1 / d2
	y0X := b[0].X
	y1X := b[1].X - l10*y0X
	y2X := b[2].X - l20*y0X - l21*y1X
	c[2].X = r2 * y2X
	c[1].X = r1*y1X - l21*c[2].X
	c[0].X = r0*y0X - l10*c[1].X - l20*c[2].X
	y0Y := b[0].Y
	y1Y := b[1].Y - l10*y0Y
	y2Y := b[2].Y - l20*y0Y - l21*y1Y
	c[2].Y = r2 * y2Y
	c[1].Y = r1*y1Y - l21*c[2].Y
	c[0].Y = r0*y0Y - l10*c[1].Y - l20*c[2].Y
	y0Z := b[0].Z
	y1Z := b[1].Z - l10*y0Z
	y2Z := b[2].Z - l20*y0Z - l21*y1Z
	c[2].Z = r2 * y2Z
	c[1].Z = r1*y1Z - l21*c[2].Z
	c[0].Z = r0*y0Z - l10*c[1].Z - l20*c[2].Z
	if wantVar {
		v10 := -(l10)
		v20 := -(l20 + l21*v10)
		v21 := -(l21)
		id[0] = r0 + v10*v10*r1 + v20*v20*r2
		id[1] = r1 + v21*v21*r2
		id[2] = r2
	}
	return true
}

// solveHankel4 is solveHankel for m = 4, unrolled.
func solveHankel4(pw *[2*MaxDegree + 1]float64, b *[MaxDegree + 1]r3.Vec, c *[MaxDegree + 1]r3.Vec, id *[MaxDegree + 1]float64, wantVar bool) bool {
	d0 := pw[0]
	if !(d0 > 1e-13*pw[0]) {
		return false
	}
	r0 := 1 / d0
	e10 := pw[1]
	l10 := e10 * r0
	e20 := pw[2]
	l20 := e20 * r0
	e30 := pw[3]
	l30 := e30 * r0
	d1 := pw[2] - l10*e10
	if !(d1 > 1e-13*pw[2]) {
		return false
	}
	r1 := 1 / d1
	e21 := pw[3] - l20*e10
	l21 := e21 * r1
	e31 := pw[4] - l30*e10
	l31 := e31 * r1
	d2 := pw[4] - l20*e20 - l21*e21
	if !(d2 > 1e-13*pw[4]) {
		return false
	}
	r2 := 1 / d2
	e32 := pw[5] - l30*e20 - l31*e21
	l32 := e32 * r2
	d3 := pw[6] - l30*e30 - l31*e31 - l32*e32
	if !(d3 > 1e-13*pw[6]) {
		return false
	}
	r3 := 1 / d3
	y0X := b[0].X
	y1X := b[1].X - l10*y0X
	y2X := b[2].X - l20*y0X - l21*y1X
	y3X := b[3].X - l30*y0X - l31*y1X - l32*y2X
	c[3].X = r3 * y3X
	c[2].X = r2*y2X - l32*c[3].X
	c[1].X = r1*y1X - l21*c[2].X - l31*c[3].X
	c[0].X = r0*y0X - l10*c[1].X - l20*c[2].X - l30*c[3].X
	y0Y := b[0].Y
	y1Y := b[1].Y - l10*y0Y
	y2Y := b[2].Y - l20*y0Y - l21*y1Y
	y3Y := b[3].Y - l30*y0Y - l31*y1Y - l32*y2Y
	c[3].Y = r3 * y3Y
	c[2].Y = r2*y2Y - l32*c[3].Y
	c[1].Y = r1*y1Y - l21*c[2].Y - l31*c[3].Y
	c[0].Y = r0*y0Y - l10*c[1].Y - l20*c[2].Y - l30*c[3].Y
	y0Z := b[0].Z
	y1Z := b[1].Z - l10*y0Z
	y2Z := b[2].Z - l20*y0Z - l21*y1Z
	y3Z := b[3].Z - l30*y0Z - l31*y1Z - l32*y2Z
	c[3].Z = r3 * y3Z
	c[2].Z = r2*y2Z - l32*c[3].Z
	c[1].Z = r1*y1Z - l21*c[2].Z - l31*c[3].Z
	c[0].Z = r0*y0Z - l10*c[1].Z - l20*c[2].Z - l30*c[3].Z
	if wantVar {
		v10 := -(l10)
		v20 := -(l20 + l21*v10)
		v30 := -(l30 + l31*v10 + l32*v20)
		v21 := -(l21)
		v31 := -(l31 + l32*v21)
		v32 := -(l32)
		id[0] = r0 + v10*v10*r1 + v20*v20*r2 + v30*v30*r3
		id[1] = r1 + v21*v21*r2 + v31*v31*r3
		id[2] = r2 + v32*v32*r3
		id[3] = r3
	}
	return true
}
