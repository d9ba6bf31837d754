package forecast

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// refFitWindows is the straightforward computation fitMany replaces: one
// history.fit per window, each summing over its samples from scratch.
func refFitWindows(k *kinState) func() bool {
	return func() bool {
		for w, s := range kinWindows {
			f := &k.fits[w]
			f.WantVar = s.wantVar
			if !k.h.fit(f, s.deg, s.window, s.minN) {
				return false
			}
		}
		return true
	}
}

// refAt is the straightforward forecast at lead tau: the terms and scale
// terms evaluated with math.Sin and math.Cos, the gains interpolated at tau.
func refAt(m *fittedModel, k *kinState, tau float64) (r3.Vec, float64) {
	g, b, z, ws := m.coefs(tau)
	if ws == 0 {
		return r3.Vec{}, 0
	}
	var f [NumFeatures]r3.Vec
	k.features(tau, &f)
	var d r3.Vec
	for j := range f {
		d = r3.Add(d, r3.Scale(g[j], f[j]))
	}
	var s [NumScale]float64
	k.scaleTerms(tau, &s)
	sigma := 0.0
	for j := range s {
		sigma += b[j] * s[j]
	}
	return d, z * math.Max(sigma, ws*minScale)
}

// The fitted forecaster's fast path (all windows fitted in one pass, the
// oscillator by recurrence, per-horizon tables) gives the straightforward
// computation's forecasts to within 1e-9 m, in position and radius, on
// irregular noisy samples with glitches and gaps, and on the recorded wrists
// when present, for several horizons (changed mid-stream).
func TestFittedFastPathMatchesStraightforward(t *testing.T) {
	m := mustModel(t, Settings{Kind: KindFitted}).(*fittedModel)
	horizons := []Horizon{
		{Step: 0.02, Span: 0.5},
		{Step: 0.013, Span: 0.7, Lead: 0.031}, // past the last fitted horizon
		{Step: 0.05, Span: 0.3, Lead: 0.1},
	}
	type run struct {
		name string
		T    []float64
		P    []r3.Vec
	}
	var runs []run
	rng := rand.New(rand.NewPCG(7, 8))
	for _, dt := range []float64{1.0 / 120, 1.0 / 30, 1.0 / 500} {
		ts := irregularTimes(rng, 2000, dt)
		ps := make([]r3.Vec, len(ts))
		for i, ti := range ts {
			ps[i] = r3.Add(handPath(3*ti), vec(0.002*rng.NormFloat64(), 0.002*rng.NormFloat64(), 0.002*rng.NormFloat64()))
			if i%397 == 100 {
				ps[i] = r3.Add(ps[i], vec(0.5, 0, 0)) // a glitch
			}
		}
		runs = append(runs, run{"synthetic", ts, ps})
	}
	if dir, why := findMotionDir(); dir == "" {
		t.Logf("synthetic tracks only: %s", why)
	} else {
		for _, f := range loadMotionFiles(t) {
			if f.Name == "05_06.csv" || f.Name == "kth_handover_giver.csv" {
				for _, tr := range f.Tracks {
					runs = append(runs, run{f.Name, tr.T, tr.P})
				}
			}
		}
	}
	checked := 0
	for _, r := range runs {
		fast := m.New().(*fittedForecaster)
		ref := m.New().(*fittedForecaster)
		ref.k.fitWindowsFn = refFitWindows(&ref.k)
		trF, trR := &Track{F: fast, GapReset: 0.1}, &Track{F: ref, GapReset: 0.1}
		var p Path
		worst := 0.0
		for i, ti := range r.T {
			if trF.Add(ti, r.P[i]) != trR.Add(ti, r.P[i]) {
				t.Fatal("tracks disagree")
			}
			h := horizons[(i/500)%len(horizons)]
			got := fast.Predict(&p, h)
			if got != ref.k.ok {
				t.Fatalf("%s sample %d: fast path ready=%v, straightforward %v", r.name, i, got, ref.k.ok)
			}
			if !got {
				continue
			}
			for j := range p.T {
				d, rad := refAt(m, &ref.k, p.T[j]-ref.k.t)
				e := math.Max(r3.Norm(r3.Sub(p.P[j], r3.Add(ref.k.p, d))), math.Abs(p.R[j]-rad))
				worst = math.Max(worst, e)
				if e > 1e-9 {
					t.Fatalf("%s sample %d point %d (%+v): fast path off by %g m", r.name, i, j, h, e)
				}
			}
			checked++
		}
		t.Logf("%s: largest difference %.3g m", r.name, worst)
	}
	if checked < 5000 {
		t.Fatalf("only %d forecasts compared", checked)
	}
}

// The one-pass fit of several windows equals one history.fit per window,
// value, derivatives, residual and variance factors, on irregular samples.
func TestFitManyMatchesFit(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for _, dt := range []float64{1.0 / 20, 1.0 / 60, 1.0 / 120, 1.0 / 1000} {
		h := newHistory(featKeep, 8)
		var fast, ref [numWindows]polyFit
		n := 0
		for _, ti := range irregularTimes(rng, 600, dt) {
			h.push(ti, vec(math.Sin(5*ti), math.Cos(3*ti), ti*ti+0.001*rng.NormFloat64()))
			if !h.fitMany(kinWindows[:], fast[:]) {
				continue
			}
			for w, s := range kinWindows {
				ref[w].WantVar = s.wantVar
				if !h.fit(&ref[w], s.deg, s.window, s.minN) {
					t.Fatalf("dt %g window %d: fitMany fitted, fit did not", dt, w)
				}
				a, b := &fast[w], &ref[w]
				if a.N != b.N || a.Span != b.Span || (s.wantRMS && math.Abs(a.RMS-b.RMS) > 1e-9) { // m
					t.Fatalf("dt %g window %d: N %d/%d span %g/%g rms %g/%g", dt, w, a.N, b.N, a.Span, b.Span, a.RMS, b.RMS)
				}
				for k := 0; k <= s.deg; k++ {
					// 1e-9 m, 1e-9 m/s, 1e-7 m/s², 1e-5 m/s³: each derivative
					// divides the rounding by the window once more.
					tol := []float64{1e-9, 1e-9, 1e-7, 1e-5}[k]
					if d := r3.Norm(r3.Sub(a.D[k], b.D[k])); d > tol {
						t.Fatalf("dt %g window %d: derivative %d differs by %g", dt, w, k, d)
					}
					if s.wantVar && math.Abs(a.VarD[k]-b.VarD[k]) > 1e-9*math.Abs(b.VarD[k]) {
						t.Fatalf("dt %g window %d: variance factor %d %g, fit %g", dt, w, k, a.VarD[k], b.VarD[k])
					}
				}
			}
			n++
		}
		if n < 400 {
			t.Fatalf("dt %g: only %d fits compared", dt, n)
		}
	}
}

// The residual sum of squares of given gains, from the normal equations
// alone (yᵀy − 2gᵀXᵀy + gᵀXᵀXg), equals the sum of the squared residuals
// computed example by example.
func TestNormalEqRSS(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	rv := func() r3.Vec { return vec(rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()) }
	var a normalEq
	g := [NumFeatures]float64{0.8, -0.3, 1.7}
	direct := 0.0
	for i := 0; i < 500; i++ {
		var f [NumFeatures]r3.Vec
		for j := range f {
			f[j] = rv()
		}
		d := rv()
		a.add(&f, d)
		p := d
		for j := range f {
			p = r3.Sub(p, r3.Scale(g[j], f[j]))
		}
		direct += r3.Norm2(p)
	}
	if got := a.rss(&g); math.Abs(got-direct) > 1e-9*direct {
		t.Fatalf("rss from the normal equations %g, example by example %g", got, direct)
	}
}

// With RidgeCV, Fit chooses each horizon's ridge from RidgeGrid and records
// it; with a fixed ridge it records that one. Synthetic tracks of three
// groups (the same smooth paths at three speeds, with noise).
func TestFitRidgeChoiceRecorded(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	var files []FitFile
	for gi, speed := range []float64{1, 2, 3} {
		var tr TrackData
		tr.Name = "h"
		for i := 0; i < 1200; i++ {
			ti := float64(i) / 120
			tr.T = append(tr.T, ti)
			tr.P = append(tr.P, r3.Add(handPath(speed*ti), vec(0.001*rng.NormFloat64(), 0.001*rng.NormFloat64(), 0.001*rng.NormFloat64())))
		}
		files = append(files, FitFile{Name: fmt.Sprintf("g%d_1.csv", gi), Group: fmt.Sprintf("g%d", gi), Tracks: []TrackData{tr}})
	}
	hs := []float64{0.1, 0.3}
	res, err := Fit(files, FitOptions{Horizons: hs, RidgeCV: true})
	if err != nil {
		t.Fatal(err)
	}
	if res.Gains.Fitted.Ridge != 0 || !strings.Contains(res.Gains.Fitted.Method, "nested") {
		t.Errorf("provenance: ridge %g, method %q", res.Gains.Fitted.Ridge, res.Gains.Fitted.Method)
	}
	for _, h := range res.Gains.Horizons {
		if !slices.Contains(RidgeGrid, h.Ridge) {
			t.Errorf("%g ms: ridge %g is not one of %v", h.MS, h.Ridge, RidgeGrid)
		}
	}
	res, err = Fit(files, FitOptions{Horizons: hs})
	if err != nil {
		t.Fatal(err)
	}
	for _, h := range res.Gains.Horizons {
		if h.Ridge != DefaultRidge || res.Gains.Fitted.Ridge != DefaultRidge {
			t.Errorf("%g ms: ridge %g, provenance %g, want the default %g", h.MS, h.Ridge, res.Gains.Fitted.Ridge, DefaultRidge)
		}
	}
}
