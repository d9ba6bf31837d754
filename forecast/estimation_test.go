package forecast

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

// Savitzky–Golay convolution weights. Reference: A. Savitzky and M. J. E.
// Golay, "Smoothing and Differentiation of Data by Simplified Least Squares
// Procedures", Analytical Chemistry 36(8):1627–1639, 1964: Table I
// (smoothing, quadratic and cubic: 5 points /35, 7 points /21) and Table III
// (first derivative, quadratic: 5 points /10, 7 points /28); the cubic/quartic
// first-derivative convolutes (5 points /12, 7 points /252) are from the
// same paper's first-derivative tables. Table numbers and the cubic
// first-derivative integers are stated from memory. The weights come out
// of our irregular-sampling estimator evaluated at the window centre.
func TestSavitzkyGolayTables(t *testing.T) {
	cases := []struct {
		name        string
		n, deg, der int
		ints        []float64
		norm        float64
	}{
		{"smooth 5 quadratic", 5, 2, 0, []float64{-3, 12, 17, 12, -3}, 35},
		{"smooth 5 cubic", 5, 3, 0, []float64{-3, 12, 17, 12, -3}, 35},
		{"smooth 7 quadratic", 7, 2, 0, []float64{-2, 3, 6, 7, 6, 3, -2}, 21},
		{"smooth 7 cubic", 7, 3, 0, []float64{-2, 3, 6, 7, 6, 3, -2}, 21},
		{"d1 5 quadratic", 5, 2, 1, []float64{-2, -1, 0, 1, 2}, 10},
		{"d1 7 quadratic", 7, 2, 1, []float64{-3, -2, -1, 0, 1, 2, 3}, 28},
		{"d1 5 linear", 5, 1, 1, []float64{-2, -1, 0, 1, 2}, 10},
		{"d1 5 cubic", 5, 3, 1, []float64{1, -8, 0, 8, -1}, 12},
		{"d1 7 cubic", 7, 3, 1, []float64{22, -67, -58, 0, 58, 67, -22}, 252},
	}
	for _, c := range cases {
		// Unit spacing centred on 0, and a scaled/shifted axis (spacing h
		// multiplies derivative weights by 1/h).
		for _, h := range []float64{1, 1.0 / 120} {
			ts := make([]float64, c.n)
			for i := range ts {
				ts[i] = 5 + float64(i-c.n/2)*h
			}
			w := LocalPolyWeights(ts, 5, c.deg, c.der)
			if w == nil {
				t.Fatalf("%s: no weights", c.name)
			}
			for i := range w {
				want := c.ints[i] / c.norm / math.Pow(h, float64(c.der))
				if math.Abs(w[i]-want) > 1e-12*math.Max(1, math.Abs(want)) {
					t.Errorf("%s h=%g: weight %d = %.15g, want %g/%g", c.name, h, i, w[i], c.ints[i], c.norm)
				}
			}
		}
	}
}

// The causal estimator is the same least-squares fit: its derivatives at the
// latest sample equal the weights of LocalPolyWeights at that time applied
// to the window (an independent use of the same normal equations is not a
// check, so the reference solves the least-squares problem with gonum's QR).
func TestLocalFitMatchesGonumLeastSquares(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	ts := irregularTimes(rng, 40, 1.0/120)
	h := newHistory(1, 8)
	ps := make([]r3.Vec, len(ts))
	for i, ti := range ts {
		ps[i] = vec(math.Sin(3*ti)+0.01*rng.NormFloat64(), math.Cos(2*ti), ti*ti)
		h.push(ti, ps[i])
	}
	for deg := 1; deg <= 3; deg++ {
		var fit polyFit
		if !h.fit(&fit, deg, 0.1, deg+2) {
			t.Fatalf("deg %d: no fit", deg)
		}
		// Reference: gonum QR least squares on the same window, in seconds
		// relative to the last sample.
		n := fit.N
		A := mat.NewDense(n, deg+1, nil)
		b := mat.NewDense(n, 1, nil)
		tl := ts[len(ts)-1]
		for i := 0; i < n; i++ {
			j := len(ts) - 1 - i
			for k := 0; k <= deg; k++ {
				A.Set(i, k, math.Pow(ts[j]-tl, float64(k)))
			}
			b.Set(i, 0, ps[j].X)
		}
		var x mat.Dense
		if err := x.Solve(A, b); err != nil {
			t.Fatal(err)
		}
		fact := 1.0
		for k := 0; k <= deg; k++ {
			if k > 1 {
				fact *= float64(k)
			}
			want := x.At(k, 0) * fact
			got := fit.D[k].X
			if math.Abs(got-want) > 1e-7*math.Max(1, math.Abs(want)) {
				t.Errorf("deg %d: derivative %d = %.12g, gonum least squares %.12g", deg, k, got, want)
			}
		}
	}
}

func TestSolveSPDMatchesGonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for m := 1; m <= MaxDegree+1; m++ {
		for trial := 0; trial < 20; trial++ {
			B := mat.NewDense(m+2, m, nil)
			for i := 0; i < m+2; i++ {
				for j := 0; j < m; j++ {
					B.Set(i, j, rng.NormFloat64())
				}
			}
			var S mat.SymDense
			S.SymOuterK(1, B.T())
			var a [MaxDegree + 1][MaxDegree + 1]float64
			var rhs, x [MaxDegree + 1]r3.Vec
			bv := mat.NewVecDense(m, nil)
			for i := 0; i < m; i++ {
				for j := 0; j < m; j++ {
					a[i][j] = S.At(i, j)
				}
				rhs[i].X = rng.NormFloat64()
				bv.SetVec(i, rhs[i].X)
			}
			if !solveSPD(&a, m, &rhs, &x) {
				t.Fatal("not solved")
			}
			var want mat.VecDense
			if err := want.SolveVec(&S, bv); err != nil {
				t.Fatal(err)
			}
			for i := 0; i < m; i++ {
				if math.Abs(x[i].X-want.AtVec(i)) > 1e-8*math.Max(1, math.Abs(want.AtVec(i))) {
					t.Fatalf("m=%d: x[%d] = %g, gonum %g", m, i, x[i].X, want.AtVec(i))
				}
			}
		}
	}
}

// The variance factors of the local fit are the diagonal of (AᵀA)⁻¹ (scaled
// to derivatives), checked against gonum's inverse; and, as a closed form,
// for the linear fit over n equally spaced samples at spacing h the slope
// variance factor is 12/(h²·n(n²−1)) (ordinary least squares slope variance
// σ²/Σ(t−t̄)²).
func TestLocalFitVarianceFactors(t *testing.T) {
	h := newHistory(1, 8)
	const dt = 0.01
	for i := 0; i < 9; i++ {
		h.push(float64(i)*dt, vec(float64(i), 0, 0))
	}
	f := polyFit{WantVar: true}
	if !h.fit(&f, 1, 1, 3) {
		t.Fatal("no fit")
	}
	n := 9.0
	if want := 12 / (dt * dt * n * (n*n - 1)); math.Abs(f.VarD[1]-want) > 1e-9*want {
		t.Fatalf("slope variance factor %g, want %g", f.VarD[1], want)
	}
	if !h.fit(&f, 3, 1, 5) {
		t.Fatal("no fit")
	}
	A := mat.NewDense(9, 4, nil)
	for i := 0; i < 9; i++ {
		for k := 0; k < 4; k++ {
			A.Set(i, k, math.Pow(float64(i-8)*dt, float64(k)))
		}
	}
	var ata, inv mat.Dense
	ata.Mul(A.T(), A)
	if err := inv.Inverse(&ata); err != nil {
		t.Fatal(err)
	}
	fact := []float64{1, 1, 2, 6}
	for k := 0; k < 4; k++ {
		want := inv.At(k, k) * fact[k] * fact[k]
		if math.Abs(f.VarD[k]-want) > 1e-6*want {
			t.Errorf("cubic: variance factor %d = %g, gonum %g", k, f.VarD[k], want)
		}
	}
}
