package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat/distuv"
)

// Initial state uncertainty of a new Kalman track beyond its first position:
// hand speeds rarely exceed a few m/s and accelerations a few tens of m/s²
// (common practice, no source; the values only shape the first few updates).
const (
	kalmanInitSpeedSD = 2.0  // m/s
	kalmanInitAccelSD = 20.0 // m/s²
)

// kalmanModel is a Kalman filter with a constant-velocity (n=2) or
// constant-acceleration (n=3) process model driven by a discrete white-noise
// process: the highest derivative changes by a random amount, standard
// deviation σ_w, held over each sample interval T, so Q = σ_w²·Γ·Γᵀ with
// Γ = [T²/2, T] (CV) or [T³/6, T²/2, T] (CA). The measurement is the position
// with independent noise σ_n per axis. The three axes share one covariance
// (their noises are equal and independent), so the filter keeps one n×n
// covariance and three state vectors. The uncertainty radius at lead τ is
// sqrt(χ²₃(c))·σ_pos(τ), with σ_pos(τ)² the position variance of the
// predicted covariance F(τ)·P·F(τ)ᵀ + Q_τ: the radius of the ball holding
// the true position with probability c under the filter's Gaussian model.
// Over a lead τ longer than the track's typical sample interval T (a running
// mean), the process noise enters once per interval, as the model says:
// Q_τ = Σ_{j<m} F(jT)·Q(T)·F(jT)ᵀ with m = τ/T, summed in closed form
// (Faulhaber's power sums, extended to real m); for τ <= T, Q_τ = Q(τ).
type kalmanModel struct {
	name   string
	n      int
	sw, sn float64
	chi    float64 // sqrt of the chi-squared(3) quantile at the coverage
}

func newKalmanModel(name string, n int, s Settings) (*kalmanModel, error) {
	q := distuv.ChiSquared{K: 3}.Quantile(s.Coverage)
	return &kalmanModel{name: name, n: n, sw: s.ProcessNoise, sn: s.MeasurementNoise, chi: math.Sqrt(q)}, nil
}

func (m *kalmanModel) Name() string    { return m.name }
func (m *kalmanModel) New() Forecaster { return &kalmanForecaster{m: *m} }

type mat3 = [3][3]float64

type kalmanForecaster struct {
	m  kalmanModel
	t  float64
	x  [3]r3.Vec // position, velocity, acceleration estimates
	P  mat3      // shared per-axis covariance (only n×n used)
	K  [3]float64
	T  float64 // running mean of the sample interval (0: none yet)
	ok bool
}

func (f *kalmanForecaster) Reset() { f.ok = false; f.T = 0 }

// transition returns F(T) and the process-noise covariance Q(T).
func (m *kalmanModel) transition(dt float64) (F, Q mat3) {
	var g [3]float64
	if m.n == 2 {
		F = mat3{{1, dt, 0}, {0, 1, 0}, {0, 0, 0}}
		g = [3]float64{dt * dt / 2, dt, 0}
	} else {
		F = mat3{{1, dt, dt * dt / 2}, {0, 1, dt}, {0, 0, 1}}
		g = [3]float64{dt * dt * dt / 6, dt * dt / 2, dt}
	}
	v := m.sw * m.sw
	for i := 0; i < m.n; i++ {
		for j := 0; j < m.n; j++ {
			Q[i][j] = v * g[i] * g[j]
		}
	}
	return F, Q
}

// propagate returns F·P·Fᵀ + Q over n×n.
func propagate(n int, F, P, Q mat3) mat3 {
	var FP, R mat3
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			s := 0.0
			for k := 0; k < n; k++ {
				s += F[i][k] * P[k][j]
			}
			FP[i][j] = s
		}
	}
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			s := Q[i][j]
			for k := 0; k < n; k++ {
				s += FP[i][k] * F[j][k]
			}
			R[i][j], R[j][i] = s, s
		}
	}
	return R
}

// initState starts the filter at time t with state x and covariance P.
func (f *kalmanForecaster) initState(t float64, x [3]r3.Vec, P mat3) {
	f.t, f.x, f.P, f.ok = t, x, P, true
}

func (f *kalmanForecaster) Update(t float64, p r3.Vec) {
	n := f.m.n
	if !f.ok {
		var P mat3
		P[0][0] = f.m.sn * f.m.sn
		P[1][1] = kalmanInitSpeedSD * kalmanInitSpeedSD
		if n == 3 {
			P[2][2] = kalmanInitAccelSD * kalmanInitAccelSD
		}
		f.initState(t, [3]r3.Vec{p}, P)
		return
	}
	dt := t - f.t
	if f.T == 0 {
		f.T = dt
	} else {
		f.T += 0.1 * (dt - f.T)
	}
	F, Q := f.m.transition(dt)
	// Predict.
	var x [3]r3.Vec
	for i := 0; i < n; i++ {
		for k := 0; k < n; k++ {
			x[i] = r3.Add(x[i], r3.Scale(F[i][k], f.x[k]))
		}
	}
	P := propagate(n, F, f.P, Q)
	// Measurement update, H = [1 0 0].
	S := P[0][0] + f.m.sn*f.m.sn
	var K [3]float64
	for i := 0; i < n; i++ {
		K[i] = P[i][0] / S
	}
	innov := r3.Sub(p, x[0])
	for i := 0; i < n; i++ {
		x[i] = r3.Add(x[i], r3.Scale(K[i], innov))
	}
	var Pn mat3
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			v := P[i][j] - K[i]*P[0][j]
			Pn[i][j], Pn[j][i] = v, v
		}
	}
	f.t, f.x, f.P, f.K = t, x, Pn, K
}

// predictAt returns the predicted position and its per-axis variance tau
// seconds after the last update: row 0 of F(τ), and f0ᵀ·P·f0 + Q_τ[0][0].
func (f *kalmanForecaster) predictAt(tau float64) (r3.Vec, float64) {
	n := f.m.n
	f0 := [3]float64{1, tau, tau * tau / 2}
	var p r3.Vec
	v := 0.0
	for i := 0; i < n; i++ {
		p = r3.Add(p, r3.Scale(f0[i], f.x[i]))
		for j := 0; j < n; j++ {
			v += f0[i] * f.P[i][j] * f0[j]
		}
	}
	return p, v + f.m.positionNoise(f.T, tau)
}

// positionNoise returns the position element of the process noise over a
// lead tau: Q(τ)[0][0] for τ <= T (or no T yet), else the sum over τ/T
// sample intervals (see summedNoise).
func (m *kalmanModel) positionNoise(T, tau float64) float64 {
	if T > 0 && tau > T {
		return m.summedPositionNoise(T, tau/T)
	}
	g := tau * tau / 2
	if m.n == 3 {
		g = tau * tau * tau / 6
	}
	return m.sw * m.sw * g * g
}

func (f *kalmanForecaster) Predict(dst *Path, h Horizon) bool {
	if !f.ok {
		dst.Resize(0)
		return false
	}
	n := fillTimes(dst, f.t, h)
	for k := 0; k < n; k++ {
		p, v := f.predictAt(dst.T[k] - f.t)
		dst.P[k], dst.R[k] = p, f.m.chi*math.Sqrt(math.Max(v, 0))
	}
	return true
}

// noiseCoefs returns c[a][p], the coefficient of j^p in component a of
// F(jT)·Γ(T), and the power sums S[p] = Σ_{j<steps} j^p, p <= 4 (Faulhaber,
// extended to real steps).
func (m *kalmanModel) noiseCoefs(T, steps float64) (c [3][3]float64, S [5]float64) {
	if m.n == 2 {
		c[0] = [3]float64{T * T / 2, T * T, 0}
		c[1] = [3]float64{T, 0, 0}
	} else {
		T3 := T * T * T
		c[0] = [3]float64{T3 / 6, T3 / 2, T3 / 2}
		c[1] = [3]float64{T * T / 2, T * T, 0}
		c[2] = [3]float64{T, 0, 0}
	}
	x := steps
	S = [5]float64{
		x,
		x * (x - 1) / 2,
		x * (x - 1) * (2*x - 1) / 6,
		x * x * (x - 1) * (x - 1) / 4,
		x * (x - 1) * (2*x - 1) * (3*x*x - 3*x - 1) / 30,
	}
	return c, S
}

// summedPositionNoise is summedNoise(T, steps)[0][0], the only element a
// forecast needs, in closed form: with c the coefficients of component 0 of
// F(jT)·Γ(T), Σ_j (Σ_p c_p j^p)² expanded into the power sums S_p.
// Constant velocity: c = T²·(1/2, 1), so (1/2 + j)² = 1/4 + j + j².
// Constant acceleration: c = T³·(1/6, 1/2, 1/2), so the square is
// 1/36 + j/6 + 5j²/12 + j³/2 + j⁴/4.
func (m *kalmanModel) summedPositionNoise(T, steps float64) float64 {
	x := steps
	x1 := x * (x - 1)
	s0, s1, s2 := x, x1*0.5, x1*(2*x-1)*(1.0/6)
	v := m.sw * m.sw
	if m.n == 2 {
		T2 := T * T
		return v * T2 * T2 * (0.25*s0 + s1 + s2)
	}
	s3, s4 := x1*x1*0.25, x1*(2*x-1)*(3*x*x-3*x-1)*(1.0/30)
	T3 := T * T * T
	return v * T3 * T3 * (s0*(1.0/36) + s1*(1.0/6) + s2*(5.0/12) + 0.5*s3 + 0.25*s4)
}

// summedNoise returns Σ_{j=0}^{m-1} F(jT)·Q(T)·F(jT)ᵀ in closed form. The
// components of F(jT)·Γ(T) are polynomials in j (degree <= 2), so each
// element of the sum is a combination of the power sums Σ_{j<m} j^p, p <= 4.
func (m *kalmanModel) summedNoise(T, steps float64) (Q mat3) {
	c, S := m.noiseCoefs(T, steps)
	v := m.sw * m.sw
	for a := 0; a < m.n; a++ {
		for b := 0; b <= a; b++ {
			s := 0.0
			for p := 0; p < 3; p++ {
				for q := 0; q < 3; q++ {
					s += c[a][p] * c[b][q] * S[p+q]
				}
			}
			Q[a][b], Q[b][a] = v*s, v*s
		}
	}
	return Q
}
