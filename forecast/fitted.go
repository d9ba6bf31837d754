package forecast

import (
	_ "embed"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"
)

// fittedModel predicts with per-horizon gains (see features.go). Between
// fitted horizons the gains, scale terms and radius quantile are
// interpolated linearly in the lead; below the first fitted horizon they
// fall linearly to zero at lead 0 (the forecast then starts at the last
// sample); beyond the last one they stay at its values.
type fittedModel struct {
	hs    []float64 // fitted horizons, seconds, increasing
	gains [][NumFeatures]float64
	scale [][NumScale]float64
	z     []float64 // normalised-error quantile at the chosen coverage
}

func newFittedModel(g *Gains, coverage float64) (*fittedModel, error) {
	if err := g.Check(); err != nil {
		return nil, err
	}
	m := &fittedModel{}
	for _, h := range g.Horizons {
		var gv [NumFeatures]float64
		var sv [NumScale]float64
		copy(gv[:], h.Gains)
		copy(sv[:], h.Scale)
		z, err := interpQuantile(g.Levels, h.RadiusZ, coverage)
		if err != nil {
			return nil, fmt.Errorf("horizon %g ms: %w", h.MS, err)
		}
		m.hs = append(m.hs, h.MS/1000)
		m.gains = append(m.gains, gv)
		m.scale = append(m.scale, sv)
		m.z = append(m.z, z)
	}
	return m, nil
}

// interpQuantile interpolates the quantile table (levels increasing) at c.
func interpQuantile(levels, q []float64, c float64) (float64, error) {
	if len(levels) == 0 || c < levels[0]-1e-12 || c > levels[len(levels)-1]+1e-12 {
		return 0, fmt.Errorf("coverage %g outside the levels the gains file records (%v)", c, levels)
	}
	i := sort.SearchFloat64s(levels, c)
	if i >= len(levels) {
		i = len(levels) - 1
	}
	if i == 0 || levels[i] == c {
		return q[i], nil
	}
	w := (c - levels[i-1]) / (levels[i] - levels[i-1])
	return q[i-1] + w*(q[i]-q[i-1]), nil
}

func (m *fittedModel) Name() string { return KindFitted }
func (m *fittedModel) New() Forecaster {
	return &fittedForecaster{m: m, k: newKinState()}
}

type fittedForecaster struct {
	m   *fittedModel
	k   kinState
	tab leadTable
}

func (f *fittedForecaster) Update(t float64, p r3.Vec) { f.k.update(t, p) }
func (f *fittedForecaster) Reset()                     { f.k.reset() }

// coefs returns the gains, scale coefficients and radius quantile at lead
// tau, interpolated as the type's comment says, and the total weight of the
// bracketing horizons (0 at lead 0, 1 from the first fitted horizon on).
func (m *fittedModel) coefs(tau float64) (g [NumFeatures]float64, b [NumScale]float64, z, wsum float64) {
	var i0, i1 int
	var w0, w1 float64
	n := len(m.hs)
	switch {
	case tau <= 0:
		return g, b, 0, 0
	case tau < m.hs[0]:
		i0, i1, w0, w1 = 0, 0, 0, tau/m.hs[0]
	case tau >= m.hs[n-1]:
		i0, i1, w0, w1 = n-1, n-1, 0, 1
	default:
		i1 = sort.SearchFloat64s(m.hs, tau)
		if m.hs[i1] == tau {
			i0, w0, w1 = i1, 0, 1
		} else {
			i0 = i1 - 1
			w1 = (tau - m.hs[i0]) / (m.hs[i1] - m.hs[i0])
			w0 = 1 - w1
		}
	}
	for j := range g {
		g[j] = w0*m.gains[i0][j] + w1*m.gains[i1][j]
	}
	for j := range b {
		b[j] = w0*m.scale[i0][j] + w1*m.scale[i1][j]
	}
	return g, b, w0*m.z[i0] + w1*m.z[i1], w0 + w1
}

// leadTable holds, for the points of one Horizon, everything of a forecast
// that does not depend on the state: the leads, the interpolated gains, the
// scale coefficients times the lead factors of the scale terms, and the
// radius quantile. Predict rebuilds it only when the horizon changes (the
// engine asks for the same one sample after sample).
type leadTable struct {
	h    Horizon
	ok   bool
	tau  []float64
	g    [][NumFeatures]float64
	sc   [][NumScale]float64 // b_j(τ) times the lead factor of scale term j
	z    []float64
	zmin []float64 // z·minScale·(weight of the bracketing horizons)
}

func (tb *leadTable) build(m *fittedModel, h Horizon) {
	n := h.Points()
	if cap(tb.tau) < n {
		tb.tau = make([]float64, n)
		tb.g = make([][NumFeatures]float64, n)
		tb.sc = make([][NumScale]float64, n)
		tb.z = make([]float64, n)
		tb.zmin = make([]float64, n)
	}
	tb.tau, tb.g, tb.sc, tb.z, tb.zmin = tb.tau[:n], tb.g[:n], tb.sc[:n], tb.z[:n], tb.zmin[:n]
	for i := 0; i < n; i++ {
		tau := h.Lead + float64(i)*h.Step
		g, b, z, ws := m.coefs(tau)
		var lf [NumScale]float64
		scaleLeadFactors(tau, &lf)
		tb.tau[i], tb.g[i], tb.z[i], tb.zmin[i] = tau, g, z, z*ws*minScale
		for j := range b {
			tb.sc[i][j] = b[j] * lf[j]
		}
	}
	tb.h, tb.ok = h, true
}

// Predict writes out the sum over the NumScale scale terms: these two
// declarations compile only while there are exactly four.
var (
	_ [NumScale - 4]struct{}
	_ [4 - NumScale]struct{}
)

// Predict evaluates the terms of features.go at every point. The
// oscillator's sin(ωτ) and cos(ωτ) at τ = Lead + i·Step come from one sine
// and cosine per forecast and the angle-addition recurrence; everything
// else that depends only on τ comes from the lead table.
func (f *fittedForecaster) Predict(dst *Path, h Horizon) bool {
	k := &f.k
	if !k.ok {
		dst.Resize(0)
		return false
	}
	if !f.tab.ok || f.tab.h != h {
		f.tab.build(f.m, h)
	}
	tb := &f.tab
	n := fillTimes(dst, k.t, h)
	var st [NumScale]float64
	k.scaleState(&st)
	w := k.omega
	iw, iw2 := 1/w, 1/(w*w)
	lam := k.lambda()
	v, a, p := k.v, k.a, k.p
	dv := r3.Sub(k.vs, k.v)
	// sin and cos of ω·(Lead + i·Step) by rotation through ω·Step.
	sn, cs := math.Sincos(w * h.Lead)
	sd, cd := math.Sincos(w * h.Step)
	for i := 0; i < n; i++ {
		s, c := sn, cs
		if w*tb.tau[i] >= math.Pi {
			s, c = 0, -1 // ωτ capped at π
		}
		sn, cs = sn*cd+cs*sd, cs*cd-sn*sd
		g, sc := &tb.g[i], &tb.sc[i]
		fs := s * iw
		cv, ca, cdv := g[0]*fs, g[1]*(1-c)*iw2, g[2]*lam*fs
		dst.P[i] = r3.Vec{
			X: p.X + cv*v.X + ca*a.X + cdv*dv.X,
			Y: p.Y + cv*v.Y + ca*a.Y + cdv*dv.Y,
			Z: p.Z + cv*v.Z + ca*a.Z + cdv*dv.Z,
		}
		dst.R[i] = max(tb.z[i]*(sc[0]*st[0]+sc[1]*st[1]+sc[2]*st[2]+sc[3]*st[3]), tb.zmin[i])
	}
	return true
}
