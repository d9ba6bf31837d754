package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// The fitted model predicts the displacement from the last sample at lead τ
// as a linear combination of kinematic terms, with one set of gains per
// horizon: d(τ) = Σ_j g_j(τ)·f_j(τ). The terms are vectors built from causal
// local polynomial fits over several windows; they rotate with the frame,
// so gains fitted in one cell frame hold in any other.
//
// The feature set is versioned: a gains file names its set and the names of
// its terms, and is refused when they differ from the built-in ones.
const FeatureSet = "kin-v1"

// featureNames name the terms, in order.
var featureNames = [...]string{
	"v25*t",        // velocity, linear fit over 25 ms, times τ
	"v50*t",        // velocity, linear fit over 50 ms
	"v100*t",       // velocity, linear fit over 100 ms
	"v200*t",       // velocity, linear fit over 200 ms
	"v400*t",       // velocity, linear fit over 400 ms
	"a100*t2/2",    // acceleration, quadratic fit over 100 ms, times τ²/2
	"a200*t2/2",    // acceleration, quadratic fit over 200 ms
	"a400*t2/2",    // acceleration, quadratic fit over 400 ms
	"brake",        // v50 decelerated by the tangential part of a200 down to a stop (see brake)
	"mean1s",       // mean position over the last second, minus the last sample (a damping pull)
	"smooth100",    // position of the 100 ms linear fit now, minus the last sample
	"v50*t*slow",   // v50·τ weighted by the slow-motion indicator (see slowness)
	"a200*t2*slow", // a200·τ²/2 weighted by the slow-motion indicator
}

// NumFeatures is the number of terms of the fitted model.
const NumFeatures = len(featureNames)

// NumScale is the number of terms of the radius scale model.
const NumScale = 4

// scaleNames name the terms of the radius scale σ(τ) = Σ_j b_j(τ)·s_j(τ):
// a floor, the distance the current speed covers in τ, the distance the
// current acceleration covers, and how much the velocity changed over the
// last 200 ms times τ (a measure of recent unpredictability).
var scaleNames = [NumScale]string{"1", "|v50|*t", "|a200|*t2/2", "|v25-v200|*t"}

const (
	featKeep = 1.05 // seconds of history kept
	// slowSpeed is the speed (m/s) below which motion counts as slow for the
	// slow-motion indicator.
	slowSpeed = 0.5
)

// kinState is the kinematic state the terms are built from, refreshed at
// every update. It allocates nothing after warm-up.
type kinState struct {
	h     history
	ok    bool
	t     float64
	p     r3.Vec
	v     [5]r3.Vec // v25, v50, v100, v200, v400
	a     [3]r3.Vec // a100, a200, a400
	mean  r3.Vec    // mean1s
	sm    r3.Vec    // smooth100
	slow  float64   // slow-motion indicator in [0, 1]
	speed float64   // |v50|
	amag  float64   // |a200|
	dv    float64   // |v25 - v200|
	fit   polyFit
}

var velWindows = [5]float64{0.025, 0.05, 0.1, 0.2, 0.4}
var accWindows = [3]float64{0.1, 0.2, 0.4}

func newKinState() kinState { return kinState{h: newHistory(featKeep, 8)} }

func (k *kinState) reset() { k.h.reset(); k.ok = false }

// minFeatureSpan is the history (seconds) a track needs before the fitted
// model predicts.
const minFeatureSpan = 0.1

func (k *kinState) update(t float64, p r3.Vec) {
	k.h.push(t, p)
	k.t, k.p = t, p
	k.ok = false
	t0, _ := k.h.at(k.h.n - 1)
	if k.h.n < 5 || t-t0 < minFeatureSpan {
		return
	}
	for i, w := range velWindows {
		if !k.h.fit(&k.fit, 1, w, 3) {
			return
		}
		k.v[i] = k.fit.D[1]
		if i == 2 {
			k.sm = r3.Sub(k.fit.D[0], p)
		}
	}
	for i, w := range accWindows {
		if !k.h.fit(&k.fit, 2, w, 5) {
			return
		}
		k.a[i] = k.fit.D[2]
	}
	// Mean over the last second (time-weighted by sample count).
	var sum r3.Vec
	n := 0
	for i := 0; i < k.h.n; i++ {
		ti, pi := k.h.at(i)
		if t-ti > 1.0 {
			break
		}
		sum = r3.Add(sum, pi)
		n++
	}
	k.mean = r3.Sub(r3.Scale(1/float64(n), sum), p)
	k.speed = r3.Norm(k.v[1])
	k.amag = r3.Norm(k.a[1])
	k.dv = r3.Norm(r3.Sub(k.v[0], k.v[3]))
	// Slow-motion indicator: 1 when the hand has been slow over the last
	// 400 ms, falling towards 0 as the speed rises.
	s := math.Max(k.speed, r3.Norm(k.v[4]))
	k.slow = 1 / (1 + (s/slowSpeed)*(s/slowSpeed))
	k.ok = true
}

// brake is the displacement at lead tau of a point moving at v that
// decelerates at the tangential (braking) part of a until it stops, then
// stays; when a does not brake it is v·tau.
func brake(v, a r3.Vec, tau float64) r3.Vec {
	s := r3.Norm(v)
	if s == 0 {
		return r3.Vec{}
	}
	at := r3.Dot(a, v) / s // tangential acceleration
	if at >= 0 {
		return r3.Scale(tau, v)
	}
	stop := s / -at
	if tau > stop {
		tau = stop
	}
	return r3.Scale((s*tau+0.5*at*tau*tau)/s, v)
}

// features writes the terms at lead tau into f.
func (k *kinState) features(tau float64, f *[NumFeatures]r3.Vec) {
	t2 := tau * tau / 2
	for i := range k.v {
		f[i] = r3.Scale(tau, k.v[i])
	}
	for i := range k.a {
		f[5+i] = r3.Scale(t2, k.a[i])
	}
	f[8] = brake(k.v[1], k.a[1], tau)
	f[9] = k.mean
	f[10] = k.sm
	f[11] = r3.Scale(tau*k.slow, k.v[1])
	f[12] = r3.Scale(t2*k.slow, k.a[1])
}

// scaleTerms writes the radius scale terms at lead tau into s.
func (k *kinState) scaleTerms(tau float64, s *[NumScale]float64) {
	s[0] = 1
	s[1] = k.speed * tau
	s[2] = k.amag * tau * tau / 2
	s[3] = k.dv * tau
}
