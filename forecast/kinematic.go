package forecast

import (
	"gonum.org/v1/gonum/spatial/r3"
)

// fillTimes sets dst's length and times for horizon h after time t and
// reports the number of points.
func fillTimes(dst *Path, t float64, h Horizon) int {
	n := h.Points()
	dst.Resize(n)
	for k := 0; k < n; k++ {
		dst.T[k] = t + h.Lead + float64(k)*h.Step
	}
	return n
}

// holdModel predicts that the hand stays at its last measured position.
// The classical baselines carry no uncertainty model: their radius is 0.
type holdModel struct{}

func (holdModel) Name() string    { return KindHold }
func (holdModel) New() Forecaster { return &holdForecaster{} }

type holdForecaster struct {
	t  float64
	p  r3.Vec
	ok bool
}

func (f *holdForecaster) Update(t float64, p r3.Vec) { f.t, f.p, f.ok = t, p, true }
func (f *holdForecaster) Reset()                     { f.ok = false }

func (f *holdForecaster) Predict(dst *Path, h Horizon) bool {
	if !f.ok {
		dst.Resize(0)
		return false
	}
	n := fillTimes(dst, f.t, h)
	for k := 0; k < n; k++ {
		dst.P[k], dst.R[k] = f.p, 0
	}
	return true
}

// polyModel extrapolates a causal local polynomial fit of degree deg (1:
// constant velocity, 2: constant acceleration) over the last window seconds.
// Radius 0 (no uncertainty model).
type polyModel struct {
	name   string
	deg    int
	window float64
}

func (m *polyModel) Name() string { return m.name }
func (m *polyModel) New() Forecaster {
	return &polyForecaster{m: *m, h: newHistory(m.window*1.5, m.deg+2)}
}

type polyForecaster struct {
	m   polyModel
	h   history
	fit polyFit
	ok  bool
}

func (f *polyForecaster) Update(t float64, p r3.Vec) {
	f.h.push(t, p)
	f.ok = f.h.fit(&f.fit, f.m.deg, f.m.window, f.m.deg+1)
}

func (f *polyForecaster) Reset() { f.h.reset(); f.ok = false }

func (f *polyForecaster) Predict(dst *Path, h Horizon) bool {
	if !f.ok {
		dst.Resize(0)
		return false
	}
	t, _ := f.h.at(0)
	n := fillTimes(dst, t, h)
	for k := 0; k < n; k++ {
		dst.P[k], dst.R[k] = f.fit.eval(dst.T[k]-t), 0
	}
	return true
}
