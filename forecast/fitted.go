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
	m *fittedModel
	k kinState
}

func (f *fittedForecaster) Update(t float64, p r3.Vec) { f.k.update(t, p) }
func (f *fittedForecaster) Reset()                     { f.k.reset() }

// at returns the displacement and radius at lead tau.
func (m *fittedModel) at(k *kinState, tau float64) (r3.Vec, float64) {
	// Bracket and weights: coefficients = w0·set[i0] + w1·set[i1].
	var i0, i1 int
	var w0, w1 float64
	n := len(m.hs)
	switch {
	case tau <= 0:
		return r3.Vec{}, 0
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
	var f [NumFeatures]r3.Vec
	k.features(tau, &f)
	var d r3.Vec
	g0, g1 := &m.gains[i0], &m.gains[i1]
	for j := range f {
		d = r3.Add(d, r3.Scale(w0*g0[j]+w1*g1[j], f[j]))
	}
	var s [NumScale]float64
	k.scaleTerms(tau, &s)
	b0, b1 := &m.scale[i0], &m.scale[i1]
	sigma := 0.0
	for j := range s {
		sigma += (w0*b0[j] + w1*b1[j]) * s[j]
	}
	z := w0*m.z[i0] + w1*m.z[i1]
	return d, z * math.Max(sigma, (w0+w1)*minScale)
}

func (f *fittedForecaster) Predict(dst *Path, h Horizon) bool {
	if !f.k.ok {
		dst.Resize(0)
		return false
	}
	n := fillTimes(dst, f.k.t, h)
	for i := 0; i < n; i++ {
		d, r := f.m.at(&f.k, dst.T[i]-f.k.t)
		dst.P[i], dst.R[i] = r3.Add(f.k.p, d), r
	}
	return true
}
