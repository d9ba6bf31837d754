package forecast

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
)

func newKalman(t testing.TB, kind string, sw, sn float64) *kalmanForecaster {
	m := mustModel(t, Settings{Kind: kind, ProcessNoise: sw, MeasurementNoise: sn})
	return m.New().(*kalmanForecaster)
}

// On a linear-Gaussian case the Kalman filter's estimate is the batch
// weighted least-squares solution (closed form: both are the posterior mean
// of the same linear-Gaussian model). The batch problem: unknowns are the
// initial state x0 and the process noises w_1..w_N; residuals are the
// measurements, the prior of the initial velocity (and acceleration), and
// the w_k, each whitened; it is solved with gonum's QR. Irregular steps.
func TestKalmanMatchesBatchLeastSquares(t *testing.T) {
	for _, kind := range []string{KindKalmanCV, KindKalmanCA} {
		const sw, sn = 7.0, 0.004
		f := newKalman(t, kind, sw, sn)
		n := f.m.n
		rng := rand.New(rand.NewPCG(7, 8))
		ts := irregularTimes(rng, 30, 1.0/60)
		zs := make([]float64, len(ts))
		for i, ti := range ts {
			zs[i] = math.Sin(2*ti) + sn*rng.NormFloat64()
			f.Update(ti, vec(zs[i], 0, 0))
		}
		N := len(ts) - 1
		np := n + N // unknowns: x0 (n), w_1..w_N
		// State at step k as a linear map of the unknowns: x_k = M_k θ.
		M := mat.NewDense(n, np, nil)
		for i := 0; i < n; i++ {
			M.Set(i, i, 1)
		}
		rows := (N + 1) + (n - 1) + N
		A := mat.NewDense(rows, np, nil)
		b := mat.NewVecDense(rows, nil)
		r := 0
		addMeas := func(k int) {
			for j := 0; j < np; j++ {
				A.Set(r, j, M.At(0, j)/sn)
			}
			b.SetVec(r, zs[k]/sn)
			r++
		}
		addMeas(0)
		// Priors of the filter's initial state beyond position: zero mean.
		sd := []float64{0, kalmanInitSpeedSD, kalmanInitAccelSD}
		for i := 1; i < n; i++ {
			A.Set(r, i, 1/sd[i])
			r++
		}
		for k := 1; k <= N; k++ {
			dt := ts[k] - ts[k-1]
			F, _ := f.m.transition(dt)
			var g [3]float64
			if n == 2 {
				g = [3]float64{dt * dt / 2, dt, 0}
			} else {
				g = [3]float64{dt * dt * dt / 6, dt * dt / 2, dt}
			}
			Fd := mat.NewDense(n, n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					Fd.Set(i, j, F[i][j])
				}
			}
			var next mat.Dense
			next.Mul(Fd, M)
			for i := 0; i < n; i++ {
				next.Set(i, n+k-1, next.At(i, n+k-1)+g[i])
			}
			M = &next
			A.Set(r, n+k-1, 1/sw)
			r++
			addMeas(k)
		}
		var theta mat.VecDense
		if err := theta.SolveVec(A, b); err != nil {
			t.Fatal(err)
		}
		var xN mat.VecDense
		xN.MulVec(M, &theta)
		// Covariance of x_N: M (AᵀA)⁻¹ Mᵀ.
		var ata, inv, tmp, cov mat.Dense
		ata.Mul(A.T(), A)
		if err := inv.Inverse(&ata); err != nil {
			t.Fatal(err)
		}
		tmp.Mul(M, &inv)
		cov.Mul(&tmp, M.T())
		got := [3]float64{f.x[0].X, f.x[1].X, f.x[2].X}
		for i := 0; i < n; i++ {
			if d := math.Abs(got[i] - xN.AtVec(i)); d > 1e-8*math.Max(1, math.Abs(xN.AtVec(i))) {
				t.Errorf("%s: state[%d] = %.12g, batch least squares %.12g", kind, i, got[i], xN.AtVec(i))
			}
			for j := 0; j < n; j++ {
				w := cov.At(i, j)
				if d := math.Abs(f.P[i][j] - w); d > 1e-6*math.Sqrt(math.Abs(cov.At(i, i)*cov.At(j, j))) {
					t.Errorf("%s: P[%d][%d] = %.12g, batch %.12g", kind, i, j, f.P[i][j], w)
				}
			}
		}
	}
}

// Steady-state gains of the constant-velocity filter with the discrete
// white-noise acceleration model are those of the alpha–beta filter with
// the tracking index Λ = σ_w·T²/σ_n. Reference: P. R. Kalata, "The Tracking
// Index: A Generalized Parameter for α-β and α-β-γ Target Trackers", IEEE
// Trans. Aerospace and Electronic Systems AES-20(2):174–182, 1984:
//
//	α = −(Λ² + 8Λ − (Λ + 4)·sqrt(Λ² + 8Λ))/8
//	β = (Λ² + 4Λ − Λ·sqrt(Λ² + 8Λ))/4
//
// which satisfy β = 2(2 − α) − 4·sqrt(1 − α) and Λ² = β²/(1 − α). The
// filter's gain is K = [α, β/T].
func TestKalmanCVSteadyStateMatchesKalata(t *testing.T) {
	for _, c := range []struct{ sw, sn, T float64 }{
		{30, 0.002, 1.0 / 120}, {5, 0.01, 1.0 / 30}, {200, 0.001, 1.0 / 500}, {1, 0.05, 0.1},
	} {
		f := newKalman(t, KindKalmanCV, c.sw, c.sn)
		for i := 0; i < 20000; i++ {
			f.Update(float64(i)*c.T, vec(0, 0, 0))
		}
		alpha, beta := f.K[0], f.K[1]*c.T
		L := c.sw * c.T * c.T / c.sn
		r := math.Sqrt(L*L + 8*L)
		wantA := -(L*L + 8*L - (L+4)*r) / 8
		wantB := (L*L + 4*L - L*r) / 4
		if math.Abs(alpha-wantA) > 1e-6 || math.Abs(beta-wantB) > 1e-6 {
			t.Errorf("Λ=%g: α=%.9f β=%.9f, Kalata α=%.9f β=%.9f", L, alpha, beta, wantA, wantB)
		}
		if d := beta - (2*(2-alpha) - 4*math.Sqrt(1-alpha)); math.Abs(d) > 1e-6 {
			t.Errorf("Λ=%g: β − (2(2−α) − 4√(1−α)) = %g", L, d)
		}
		if d := L*L - beta*beta/(1-alpha); math.Abs(d) > 1e-6*math.Max(1, L*L) {
			t.Errorf("Λ=%g: Λ² − β²/(1−α) = %g", L, d)
		}
	}
}

// The process noise summed over m sample intervals equals the explicit sum
// Σ_{j<m} F(jT)·Q(T)·F(jT)ᵀ (computed with gonum) for whole m, and Q(τ)
// itself for m = 1.
func TestKalmanSummedNoise(t *testing.T) {
	for _, kind := range []string{KindKalmanCV, KindKalmanCA} {
		f := newKalman(t, kind, 13, 0.003)
		n := f.m.n
		const T = 1.0 / 90
		_, Q := f.m.transition(T)
		Qd := mat.NewDense(n, n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				Qd.Set(i, j, Q[i][j])
			}
		}
		for _, m := range []int{1, 2, 7, 40} {
			sum := mat.NewDense(n, n, nil)
			for j := 0; j < m; j++ {
				F, _ := f.m.transition(float64(j) * T)
				Fd := mat.NewDense(n, n, nil)
				for a := 0; a < n; a++ {
					for b := 0; b < n; b++ {
						Fd.Set(a, b, F[a][b])
					}
				}
				var t1, t2 mat.Dense
				t1.Mul(Fd, Qd)
				t2.Mul(&t1, Fd.T())
				sum.Add(sum, &t2)
			}
			got := f.m.summedNoise(T, float64(m))
			if pn := f.m.summedPositionNoise(T, float64(m)); math.Abs(pn-got[0][0]) > 1e-12*got[0][0] {
				t.Errorf("%s m=%d: position noise alone %g, from the matrix %g", kind, m, pn, got[0][0])
			}
			for a := 0; a < n; a++ {
				for b := 0; b < n; b++ {
					w := sum.At(a, b)
					if math.Abs(got[a][b]-w) > 1e-9*math.Abs(w)+1e-300 {
						t.Errorf("%s m=%d: Q[%d][%d] = %g, explicit sum %g", kind, m, a, b, got[a][b], w)
					}
				}
			}
		}
	}
}

// The radius is the chi-distribution quantile of the predicted position
// variance: for coverage 0.95 and 3 degrees of freedom, sqrt(7.814728) (the
// chi-squared 0.95 quantile for 3 degrees of freedom, standard tables, e.g.
// NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.4). The variance
// is recomputed here with gonum: F(τ)·P·F(τ)ᵀ plus the process noise of the
// τ/T sample intervals, summed explicitly. Once converged on a straight line
// the prediction reproduces it.
func TestKalmanRadiusAndLine(t *testing.T) {
	for _, kind := range []string{KindKalmanCV, KindKalmanCA} {
		f := newKalman(t, kind, 30, 0.002)
		n := f.m.n
		const T = 1.0 / 120
		var p Path
		for i := 0; i < 600; i++ {
			ti := float64(i) * T
			f.Update(ti, vec(0.3*ti, -0.2*ti, 1))
		}
		h := Horizon{Step: 3 * T, Span: 72 * T} // 25 points, whole sample intervals
		if !f.Predict(&p, h) || p.Len() != 25 {
			t.Fatal("no prediction")
		}
		tl := 599 * T
		Pd := mat.NewSymDense(n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j <= i; j++ {
				Pd.SetSym(i, j, f.P[i][j])
			}
		}
		dense := func(m mat3) *mat.Dense {
			d := mat.NewDense(n, n, nil)
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					d.Set(i, j, m[i][j])
				}
			}
			return d
		}
		_, Q1 := f.m.transition(T)
		for k := range p.T {
			tau := p.T[k] - tl
			F, _ := f.m.transition(tau)
			var a, cov mat.Dense
			a.Mul(dense(F), Pd)
			cov.Mul(&a, dense(F).T())
			steps := int(math.Round(tau / T))
			for j := 0; j < steps; j++ {
				Fj, _ := f.m.transition(float64(j) * T)
				var b, c mat.Dense
				b.Mul(dense(Fj), dense(Q1))
				c.Mul(&b, dense(Fj).T())
				cov.Add(&cov, &c)
			}
			want := math.Sqrt(7.814728) * math.Sqrt(cov.At(0, 0))
			if math.Abs(p.R[k]-want) > 1e-6*want {
				t.Fatalf("%s: radius %d = %g, want %g", kind, k, p.R[k], want)
			}
			wantP := vec(0.3*p.T[k], -0.2*p.T[k], 1)
			if d := r3.Norm(r3.Sub(p.P[k], wantP)); d > 1e-9 {
				t.Fatalf("%s: point %d off the line by %g m", kind, k, d)
			}
			if k > 0 && p.R[k] < p.R[k-1] {
				t.Fatalf("%s: radius decreases at %d", kind, k)
			}
		}
	}
}
