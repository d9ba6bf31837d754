package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// MaxDegree is the highest polynomial degree the local polynomial estimator
// fits (cubic: position, velocity, acceleration and jerk).
const MaxDegree = 3

// history is a growable ring buffer of the most recent samples of one track,
// oldest first. It grows (allocates) only while warming up, when a window
// needs more samples than it holds; after that push allocates nothing.
type history struct {
	t    []float64
	p    []r3.Vec
	head int // index of the oldest sample
	n    int // number of samples held
	// keep is how far back (seconds) samples must be kept; minKeep how many
	// samples are kept whatever their age.
	keep    float64
	minKeep int
}

func newHistory(keep float64, minKeep int) history {
	c := 16
	for c < minKeep+1 {
		c *= 2
	}
	return history{t: make([]float64, c), p: make([]r3.Vec, c), keep: keep, minKeep: minKeep}
}

func (h *history) reset() { h.head, h.n = 0, 0 }

// at returns the i-th most recent sample (0 is the latest).
func (h *history) at(i int) (float64, r3.Vec) {
	j := (h.head + h.n - 1 - i) & (len(h.t) - 1)
	return h.t[j], h.p[j]
}

func (h *history) push(t float64, p r3.Vec) {
	// Drop samples no longer needed.
	for h.n > h.minKeep {
		t0 := h.t[h.head]
		if t-t0 <= h.keep {
			break
		}
		h.head = (h.head + 1) & (len(h.t) - 1)
		h.n--
	}
	if h.n == len(h.t) {
		c := 2 * len(h.t)
		nt, np := make([]float64, c), make([]r3.Vec, c)
		for i := 0; i < h.n; i++ {
			j := (h.head + i) & (len(h.t) - 1)
			nt[i], np[i] = h.t[j], h.p[j]
		}
		h.t, h.p, h.head = nt, np, 0
	}
	j := (h.head + h.n) & (len(h.t) - 1)
	h.t[j], h.p[j] = t, p
	h.n++
}

// polyFit is the result of a causal local polynomial least-squares fit
// (Savitzky–Golay smoothing generalised to irregular sampling): the fitted
// polynomial's value and derivatives at the time of the latest sample.
type polyFit struct {
	deg int
	// D[k] is the k-th derivative at the latest sample time (m/s^k).
	D [MaxDegree + 1]r3.Vec
	// N is the number of samples used and Span their time extent (s).
	N    int
	Span float64
	// RMS is the root-mean-square residual of the fit (m), with N − deg − 1
	// degrees of freedom (0 when there are none).
	RMS float64
	// WantVar asks fit to fill VarD: per axis, the variance of D[k] is
	// σ²·VarD[k] when the samples carry independent noise of variance σ²
	// (the diagonal of (AᵀA)⁻¹, scaled to derivatives).
	WantVar bool
	VarD    [MaxDegree + 1]float64
}

// eval returns the fitted polynomial at tau seconds after the latest sample.
func (f *polyFit) eval(tau float64) r3.Vec {
	// Horner on the Taylor form: sum D[k] tau^k / k!.
	var r r3.Vec
	for k := f.deg; k >= 0; k-- {
		r = r3.Add(r3.Scale(tau/float64(k+1), r), f.D[k])
	}
	return r
}

// fit fits a polynomial of degree deg to the samples within window seconds of
// the latest one (at least minN of them when available, and never fewer than
// deg+1) and stores the derivatives at the latest sample time in f. It
// reports false when the history holds fewer than deg+1 samples or the fit
// is degenerate (repeated times). It does not allocate.
func (h *history) fit(f *polyFit, deg int, window float64, minN int) bool {
	f.deg = deg
	if minN < deg+1 {
		minN = deg + 1
	}
	if h.n < deg+1 {
		return false
	}
	tl, pl := h.at(0)
	n := 0
	for n < h.n {
		ti, _ := h.at(n)
		if tl-ti > window*(1+1e-9) && n >= minN {
			break
		}
		n++
	}
	t0, _ := h.at(n - 1)
	span := tl - t0
	if !(span > 0) {
		return false
	}
	// Normal equations in the scaled time u = (t - tl)/span in [-1, 0].
	m := deg + 1
	var pw [2*MaxDegree + 1]float64
	var b [MaxDegree + 1]r3.Vec
	ss := 0.0
	for i := 0; i < n; i++ {
		ti, pi := h.at(i)
		pi = r3.Sub(pi, pl) // relative to the latest sample, for precision
		ss += r3.Norm2(pi)
		u := (ti - tl) / span
		x := 1.0
		for k := 0; k <= 2*deg; k++ {
			pw[k] += x
			if k < m {
				b[k] = r3.Add(b[k], r3.Scale(x, pi))
			}
			x *= u
		}
	}
	var a [MaxDegree + 1][MaxDegree + 1]float64
	for i := 0; i < m; i++ {
		for j := 0; j < m; j++ {
			a[i][j] = pw[i+j]
		}
	}
	var c [MaxDegree + 1]r3.Vec
	if !solveSPD(&a, m, &b, &c) {
		return false
	}
	// Residual sum of squares: Σ|p|² − Σ_k c_k·b_k (p relative to the
	// latest sample), per axis summed.
	rss := ss
	for k := 0; k < m; k++ {
		rss -= r3.Dot(c[k], b[k])
	}
	f.RMS = 0
	if n > m && rss > 0 {
		f.RMS = math.Sqrt(rss / float64(3*(n-m)))
	}
	// Derivatives at u=0: k! c_k / span^k.
	fact, s := 1.0, 1.0
	for k := 0; k < m; k++ {
		if k > 0 {
			fact *= float64(k)
			s *= span
		}
		f.D[k] = r3.Scale(fact/s, c[k])
	}
	f.D[0] = r3.Add(f.D[0], pl)
	for k := m; k <= MaxDegree; k++ {
		f.D[k] = r3.Vec{}
		f.VarD[k] = 0
	}
	if f.WantVar {
		fact, s := 1.0, 1.0
		for k := 0; k < m; k++ {
			if k > 0 {
				fact *= float64(k)
				s *= span
			}
			var e, x [MaxDegree + 1]r3.Vec
			e[k].X = 1
			solveSPD(&a, m, &e, &x)
			f.VarD[k] = x[k].X * (fact / s) * (fact / s)
		}
	}
	f.N, f.Span = n, span
	return true
}

// solveSPD solves the m×m symmetric positive definite system a·c = b (three
// right-hand sides packed in r3.Vec) by Cholesky factorisation in place. It
// reports false when a is not numerically positive definite. It exists
// because the hot path must not allocate; tests check it against gonum.
func solveSPD(a *[MaxDegree + 1][MaxDegree + 1]float64, m int, b, c *[MaxDegree + 1]r3.Vec) bool {
	var l [MaxDegree + 1][MaxDegree + 1]float64
	if !cholesky(a, m, &l) {
		return false
	}
	cholSolve(&l, m, b, c)
	return true
}

// cholesky writes the lower Cholesky factor l of the m×m symmetric matrix a
// (a = l·lᵀ) and reports false when a is not numerically positive definite.
func cholesky(a *[MaxDegree + 1][MaxDegree + 1]float64, m int, l *[MaxDegree + 1][MaxDegree + 1]float64) bool {
	for j := 0; j < m; j++ {
		d := a[j][j]
		for k := 0; k < j; k++ {
			d -= l[j][k] * l[j][k]
		}
		if !(d > 1e-13*a[j][j]) {
			return false
		}
		l[j][j] = math.Sqrt(d)
		for i := j + 1; i < m; i++ {
			s := a[i][j]
			for k := 0; k < j; k++ {
				s -= l[i][k] * l[j][k]
			}
			l[i][j] = s / l[j][j]
		}
	}
	return true
}

// cholSolve solves l·lᵀ·c = b for the factor l of cholesky.
func cholSolve(l *[MaxDegree + 1][MaxDegree + 1]float64, m int, b, c *[MaxDegree + 1]r3.Vec) {
	var y [MaxDegree + 1]r3.Vec
	for i := 0; i < m; i++ {
		s := b[i]
		for k := 0; k < i; k++ {
			s = r3.Sub(s, r3.Scale(l[i][k], y[k]))
		}
		y[i] = r3.Scale(1/l[i][i], s)
	}
	for i := m - 1; i >= 0; i-- {
		s := y[i]
		for k := i + 1; k < m; k++ {
			s = r3.Sub(s, r3.Scale(l[k][i], c[k]))
		}
		c[i] = r3.Scale(1/l[i][i], s)
	}
}

// cholInvDiag returns the diagonal of a⁻¹ from the Cholesky factor l of a:
// a⁻¹ = l⁻ᵀ·l⁻¹, so (a⁻¹)_kk is the squared norm of column k of l⁻¹.
func cholInvDiag(l *[MaxDegree + 1][MaxDegree + 1]float64, m int) (d [MaxDegree + 1]float64) {
	var inv [MaxDegree + 1][MaxDegree + 1]float64 // l⁻¹, lower triangular
	for j := 0; j < m; j++ {
		inv[j][j] = 1 / l[j][j]
		for i := j + 1; i < m; i++ {
			s := 0.0
			for k := j; k < i; k++ {
				s -= l[i][k] * inv[k][j]
			}
			inv[i][j] = s / l[i][i]
		}
	}
	for k := 0; k < m; k++ {
		for i := k; i < m; i++ {
			d[k] += inv[i][k] * inv[i][k]
		}
	}
	return d
}

// LocalPolyWeights returns the weights w of the least-squares polynomial fit
// of degree deg to samples at times ts, such that the estimate of the
// deriv-th derivative at time t0 is sum_i w[i]·y[i]. It uses the same solver
// as the forecasters. For equally spaced ts centred on t0 these are the
// Savitzky–Golay convolution weights. It returns nil when the fit is not
// determined (fewer than deg+1 distinct times, or deg/deriv out of range).
func LocalPolyWeights(ts []float64, t0 float64, deg, deriv int) []float64 {
	if deg < 0 || deg > MaxDegree || deriv < 0 || deriv > deg || len(ts) < deg+1 {
		return nil
	}
	span := 0.0
	for _, t := range ts {
		span = math.Max(span, math.Abs(t-t0))
	}
	if !(span > 0) {
		return nil
	}
	m := deg + 1
	var a [MaxDegree + 1][MaxDegree + 1]float64
	for _, t := range ts {
		u := (t - t0) / span
		for i := 0; i < m; i++ {
			for j := 0; j < m; j++ {
				a[i][j] += math.Pow(u, float64(i+j))
			}
		}
	}
	// Row deriv of a^-1: solve a·x = e_deriv (one column suffices as a is
	// symmetric), using the x component of r3.Vec.
	var b, x [MaxDegree + 1]r3.Vec
	b[deriv].X = 1
	if !solveSPD(&a, m, &b, &x) {
		return nil
	}
	fact := 1.0
	for k := 2; k <= deriv; k++ {
		fact *= float64(k)
	}
	scale := fact / math.Pow(span, float64(deriv))
	w := make([]float64, len(ts))
	for i, t := range ts {
		u := (t - t0) / span
		s := 0.0
		for j := 0; j < m; j++ {
			s += x[j].X * math.Pow(u, float64(j))
		}
		w[i] = s * scale
	}
	return w
}
