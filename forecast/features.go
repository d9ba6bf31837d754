package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// The fitted model predicts the displacement from the last sample at lead τ
// as a linear combination of kinematic terms, with one set of gains per
// horizon: d(τ) = Σ_j g_j(τ)·f_j(τ). The terms are vectors built from causal
// local polynomial fits; they rotate with the frame, so gains fitted in one
// cell frame hold in any other.
//
// The terms adapt to the regime of the motion. ω, the angular frequency of
// the recent motion, is the square root of the ratio of the running mean
// squares of acceleration and speed (time constant oscTau; the share of the
// acceleration that measurement noise explains is taken out): slow,
// sustained reaching gives a small ω, quick back-and-forth motion a large
// one. The terms are those of a harmonic oscillator of that frequency
// started from the current velocity v and acceleration a,
//
//	osc-v = v·sin(ωτ)/ω       (→ v·τ as ωτ → 0)
//	osc-a = a·(1 − cos ωτ)/ω²  (→ a·τ²/2 as ωτ → 0)
//
// with ωτ capped at π (the oscillator's farthest point). For slow motion they
// reduce to the constant-acceleration extrapolation; for quick motion they
// damp it, as much as the motion's own time scale says. A third term,
//
//	osc-dv = λ·(v_short − v)·sin(ωτ)/ω,  λ = ā²/(ā² + blendAccel²),
//
// lets vigorous motion (large running mean square acceleration ā²), where
// the lag of a 100 ms velocity costs more than noise, use a 50 ms velocity
// instead. The fitted gains correct what the oscillator gets wrong, per
// horizon. (Found by leave-one-person-out cross-validation on real wrists:
// a pooled fit of many raw velocity and acceleration windows does worse on
// the person left out than these three terms.)
//
// The velocities adapt to the tracker's noise: v is a linear fit's velocity
// over 100 ms plus the difference to a quadratic fit's, and v_short adds the
// difference to a 50 ms quadratic fit's, each difference shrunk by the
// positive-part James–Stein factor 1 − 3σ_Δ²/|Δ|², σ_Δ² its noise variance
// (from the running mean square residual of the 100 ms fit and the fits'
// variance factors). On clean motion capture the differences pass whole; on
// a noisy tracker the smoother estimate is kept. A sample that lands farther
// from the one-step extrapolation than any hand moves (gateDist +
// gateSpeed·Δt) is taken for a glitch and coasted over.
//
// The uncertainty radius is z(τ)·σ(τ), with the scale σ(τ) = Σ_j b_j(τ)·s_j(τ)
// a non-negative combination of the root-mean-square speed times τ, the
// root-mean-square acceleration times τ²/2, the recent change of velocity
// (|v25 − v200|) times τ, and the tracker's noise (the running RMS residual
// of the 100 ms quadratic fit, the same at every lead), so it shrinks for a
// still hand and grows for a vigorous one, and on a noisy tracker it does
// not shrink below what the noise alone puts into the shortest forecasts;
// z(τ) is the quantile of the error divided by σ seen in
// cross-validation. The scale is fitted to the relative error (reweighted
// least squares, see Fit), so coverage holds in slow and vigorous regimes.
//
// The feature set is versioned: a gains file names its set and the names of
// its terms, and is refused when they differ from the built-in ones.
const FeatureSet = "osc-v4"

// featureNames name the terms, in order.
var featureNames = [...]string{
	"osc-v",  // v·sin(ωτ)/ω, v the noise-adaptive 100 ms velocity
	"osc-a",  // a·(1−cos ωτ)/ω², a from a cubic fit over 300 ms
	"osc-dv", // λ·(v_short − v)·sin(ωτ)/ω, v_short the noise-adaptive 50 ms velocity
}

// NumFeatures is the number of terms of the fitted model.
const NumFeatures = len(featureNames)

// NumScale is the number of terms of the radius scale.
const NumScale = 4

// scaleNames name the terms of the radius scale.
var scaleNames = [NumScale]string{"rms(v)*t", "rms(a)*t2/2", "|v25-v200|*t", "noise"}

const (
	featKeep = 0.35 // seconds of history kept
	// oscTau is the time constant (s) of the running mean squares of speed
	// and acceleration whose ratio gives ω.
	oscTau = 0.5
	// omegaMin and omegaMax bound ω (rad/s).
	omegaMin, omegaMax = 0.5, 40.0
	// minFeatureSpan is the history (s) a track needs before the fitted
	// model predicts.
	minFeatureSpan = 0.1
	// blendAccel (m/s²) sets λ = ā²/(ā² + blendAccel²), ā² the running mean
	// square acceleration: the share of the short-window velocity in
	// osc-dv. Vigorous motion (large ā) is dominated by the lag of the
	// longer window, slow motion by measurement noise, so the short window
	// earns its place only in the first.
	blendAccel = 10.0
	// The outlier gate: a sample more than gateDist + gateSpeed·Δt from the
	// one-step extrapolation is a glitch; gateMisses in a row restart the
	// history. Human hands change velocity by far less than gateSpeed
	// within one sample interval (common practice, no source: hand speeds
	// peak at a few m/s).
	gateDist, gateSpeed = 0.08, 3.0 // m, m/s
	gateMisses          = 3
	// minScale keeps the radius scale positive (m).
	minScale = 1e-4
)

// kinState is the kinematic state the terms are built from, refreshed at
// every update. It allocates nothing after warm-up.
type kinState struct {
	h      history
	ok     bool
	t      float64
	p      r3.Vec
	v      r3.Vec  // noise-adaptive velocity over 100 ms (see update)
	a      r3.Vec  // acceleration, cubic fit over 300 ms
	vs     r3.Vec  // shorter-window velocity (see update)
	noise2 float64 // running mean square residual of the 100 ms quadratic fit
	dv     float64
	msv    float64 // running mean square of |v|
	msa    float64 // running mean square of the 200 ms quadratic fit's |a|, less noise
	omega  float64
	tms    float64 // time of the last running-mean update
	wdt, w float64 // the last interval of the running means and its weight
	misses int     // glitches in a row (see update)
	nms    int
	fits   [numWindows]polyFit
	// fitWindowsFn, when set, replaces fitMany in fitWindows (tests put
	// the straightforward one-fit-at-a-time computation here).
	fitWindowsFn func() bool
}

// The local polynomial fits the state is built from, all ending at the
// latest sample.
const (
	winV25  = iota // linear, 25 ms: the velocity of |v25 − v200|
	winV200        // linear, 200 ms
	winL100        // linear, 100 ms: v's base
	winQ100        // quadratic, 100 ms: v's refinement, and the noise
	winQ50         // quadratic, 50 ms: v_short's refinement
	winQ200        // quadratic, 200 ms: the acceleration of ω
	winC300        // cubic, 300 ms: a
	numWindows
)

var kinWindows = [numWindows]windowSpec{
	winV25:  {deg: 1, window: 0.025, minN: 3},
	winV200: {deg: 1, window: 0.2, minN: 3},
	winL100: {deg: 1, window: 0.1, minN: 3, wantVar: true},
	winQ100: {deg: 2, window: 0.1, minN: 4, wantVar: true, wantRMS: true},
	winQ50:  {deg: 2, window: 0.05, minN: 4, wantVar: true},
	winQ200: {deg: 2, window: 0.2, minN: 5, wantVar: true},
	winC300: {deg: 3, window: 0.3, minN: 6},
}

func newKinState() kinState { return kinState{h: newHistory(featKeep, 8)} }

// fitWindows fits every window of kinWindows into k.fits.
func (k *kinState) fitWindows() bool {
	if k.fitWindowsFn != nil {
		return k.fitWindowsFn()
	}
	return k.h.fitMany(kinWindows[:], k.fits[:])
}

func (k *kinState) reset() { k.h.reset(); k.ok = false; k.nms = 0; k.misses = 0 }

func (k *kinState) update(t float64, p r3.Vec) {
	// Outlier gate: a sample farther from the one-step extrapolation of the
	// current state than any hand moves in one interval is taken for a
	// glitch and replaced by the extrapolation (the track coasts). After
	// gateMisses glitches in a row the measurements are believed again: the
	// history restarts from the new position.
	if k.ok {
		dt := t - k.t
		pred := r3.Add(k.p, r3.Add(r3.Scale(dt, k.v), r3.Scale(dt*dt/2, k.a)))
		if lim := gateDist + gateSpeed*dt; r3.Norm2(r3.Sub(p, pred)) > lim*lim {
			k.misses++
			if k.misses < gateMisses {
				p = pred
			} else {
				k.reset()
			}
		} else {
			k.misses = 0
		}
	}
	k.h.push(t, p)
	k.t, k.p = t, p
	k.ok = false
	t0, _ := k.h.at(k.h.n - 1)
	if k.h.n < 6 || t-t0 < minFeatureSpan {
		return
	}
	if !k.fitWindows() {
		return
	}
	fs := &k.fits
	k.dv = math.Sqrt(r3.Norm2(r3.Sub(fs[winV25].D[1], fs[winV200].D[1])))
	vL, varL := fs[winL100].D[1], fs[winL100].VarD[1]
	vM, varM := fs[winQ100].D[1], fs[winQ100].VarD[1]
	rms2 := fs[winQ100].RMS * fs[winQ100].RMS
	vS, varS := fs[winQ50].D[1], fs[winQ50].VarD[1]
	aq, varA := fs[winQ200].D[2], fs[winQ200].VarD[2]
	k.a = fs[winC300].D[2]
	// Running means (time constant oscTau) of the noise variance and of
	// the squared speed and acceleration.
	w := 1.0
	if k.nms > 0 {
		// The weight depends on the interval only: at a steady rate it is
		// the previous one.
		if dt := t - k.tms; dt == k.wdt {
			w = k.w
		} else {
			w = -math.Expm1(-dt / oscTau)
			k.wdt, k.w = dt, w
		}
	}
	k.tms = t
	k.nms++
	k.noise2 += w * (rms2 - k.noise2)
	// Noise-adaptive velocity: shrink the differences between velocity
	// estimates of decreasing smoothing towards the smoother one by how much
	// of each difference measurement noise explains (positive-part
	// James–Stein factor; for nested least-squares fits the variance of a
	// difference is the difference of the variances).
	k.v = r3.Add(vL, r3.Scale(shrink(r3.Sub(vM, vL), k.noise2*(varM-varL)), r3.Sub(vM, vL)))
	dS := r3.Sub(vS, vM)
	k.vs = r3.Add(k.v, r3.Scale(shrink(dS, k.noise2*(varS-varM)), dS))
	a2 := max(0, r3.Norm2(aq)-3*k.noise2*varA)
	k.msv += w * (r3.Norm2(k.v) - k.msv)
	k.msa += w * (a2 - k.msa)
	k.omega = math.Sqrt(k.msa / max(k.msv, 1e-12))
	k.omega = min(max(k.omega, omegaMin), omegaMax)
	k.ok = true
}

// shrink returns the positive-part James–Stein factor of a 3-vector
// difference d whose components carry noise of variance v each.
func shrink(d r3.Vec, v float64) float64 {
	n2 := r3.Norm2(d)
	if n2 == 0 {
		return 0
	}
	return max(0, 1-3*v/n2)
}

// lambda is the share of the short-window velocity in osc-dv.
func (k *kinState) lambda() float64 { return k.msa / (k.msa + blendAccel*blendAccel) }

// features writes the terms at lead tau into f.
func (k *kinState) features(tau float64, f *[NumFeatures]r3.Vec) {
	w := k.omega
	wt := math.Min(w*tau, math.Pi)
	f[0] = r3.Scale(math.Sin(wt)/w, k.v)
	f[1] = r3.Scale((1-math.Cos(wt))/(w*w), k.a)
	f[2] = r3.Scale(k.lambda()*math.Sin(wt)/w, r3.Sub(k.vs, k.v))
}

// Each radius scale term is a state factor (scaleState) times a lead
// factor (scaleLeadFactors).

// scaleState writes the state factors of the scale terms into s.
func (k *kinState) scaleState(s *[NumScale]float64) {
	s[0] = math.Sqrt(k.msv)
	s[1] = math.Sqrt(k.msa)
	s[2] = k.dv
	s[3] = math.Sqrt(k.noise2)
}

// scaleLeadFactors writes the lead factors of the scale terms at lead tau.
func scaleLeadFactors(tau float64, s *[NumScale]float64) {
	s[0] = tau
	s[1] = tau * tau / 2
	s[2] = tau
	s[3] = 1
}

// scaleTerms writes the radius scale terms at lead tau into s.
func (k *kinState) scaleTerms(tau float64, s *[NumScale]float64) {
	var lf [NumScale]float64
	k.scaleState(s)
	scaleLeadFactors(tau, &lf)
	for j := range s {
		s[j] *= lf[j]
	}
}
