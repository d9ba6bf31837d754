package policy

import (
	"math"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// stillHand returns samples of a hand held still at p every dt from t0 to
// t1 (inclusive).
func stillHand(e *Engine, track string, p r3.Vec, t0, t1 float64) []Event {
	return run(e, track, func(float64) r3.Vec { return p }, t0, t1, dt)
}

// rawForecast is the forecast a fresh forecaster of m makes from samples of
// a still hand at p at times ts, with the test cell's horizon.
func rawForecast(m forecast.Model, p r3.Vec, ts ...float64) zones.PathView {
	f := m.New()
	for _, t := range ts {
		f.Update(t, p)
	}
	var path forecast.Path
	f.Predict(&path, forecast.Horizon{Step: 0.02, Span: 0.5})
	return zones.PathView{T: path.T, P: path.P, R: path.R}
}

// TestNoForecastRequestsWhileWarmingUp: a hand held still 2.5 m from the
// pallet station, forecast by the Kalman filter. Its first forecast has an
// uncertainty radius of metres (checked below: swept through the zone it
// touches within the approach rule's 400 ms, so an engine that used it
// would request reduce at once); during the warm-up the forecast is not used,
// and after it the settled radius keeps the forecast entry beyond the
// approach rule's 400 ms: no request at all. The same holds after a gap
// longer than gap_reset, which restarts the forecaster.
func TestNoForecastRequestsWhileWarmingUp(t *testing.T) {
	for _, kind := range []string{forecast.KindKalmanCV, forecast.KindKalmanCA} {
		m := forecastModel(t, kind)
		at := r3.Vec{X: -1.7, Z: 0.9} // 2.5 m from the face x = 0.8
		box := palletBox()
		var res [1]zones.SweepResult
		(&doubleSet{zs: []*dzone{box}}).sweep(rawForecast(m, at, 0), math.Inf(1), res[:], nil)
		if !res[0].Touch || res[0].TouchT > 0.4 {
			t.Fatalf("%s: the first forecast %+v does not touch within 400 ms: the test shows nothing", kind, res[0])
		}
		e := mustEngine(t, cellConfig(), m, box)
		evs := stillHand(e, "op1/right", at, 0, 0.6)
		// gap of 0.28 s: more than gap_reset (0.25 s), less than
		// stale_after (0.3 s)
		evs = append(evs, stillHand(e, "op1/right", at, 0.88, 1.2)...)
		if adv := ofKind(evs, EventAdvisory); len(adv) != 0 {
			t.Errorf("%s: advisories %+v, want none", kind, adv)
		}
		if st := e.Stats(); st.TrackingLost != 0 || st.Accepted != 94 {
			t.Errorf("%s: stats %+v, want 94 samples and no loss", kind, st)
		}
	}
}

// TestPositionRulesWhileWarmingUp: the position rules apply from the first
// sample. A hand first seen inside the pallet station gets hold at once
// (imminent: inside); a hand first seen 0.1 m from a zone with a sep_below
// rule of 0.15 m gets that rule's reduce at once.
func TestPositionRulesWhileWarmingUp(t *testing.T) {
	m := forecastModel(t, forecast.KindKalmanCV)
	e := mustEngine(t, cellConfig(), m, palletBox())
	e.Sample(forecast.Sample{Track: "op1/right", T: 0, P: r3.Vec{X: 1.0, Z: 0.9}})
	if a := e.Advisory(); a.Level != LevelHold || len(a.Reasons) != 1 || a.Reasons[0].Rule != "imminent" {
		t.Errorf("first sample inside: %+v, want hold by the imminent rule", a)
	}

	cfg := cellConfig()
	sep := zones.Length(0.15)
	cfg.Policy.Rules = []zones.RuleConfig{
		{Name: "approach", Level: "reduce", Scale: 0.5, EntryWithin: zones.Duration(400e6)},
		{Name: "close", Level: "reduce", Scale: 0.25, SepBelow: &sep},
	}
	e = mustEngine(t, cfg, m, palletBox())
	e.Sample(forecast.Sample{Track: "op1/right", T: 0, P: r3.Vec{X: 0.7, Z: 0.9}})
	if a := e.Advisory(); a.Level != LevelReduce || a.Scale != 0.25 || len(a.Reasons) != 1 || a.Reasons[0].Rule != "close" {
		t.Errorf("first sample 0.1 m away: %+v, want reduce 0.25 by the close rule", a)
	}
}

// TestForecastUsedAfterWarmUp: the warm-up delays the forecast rules by
// ForecastWarmUp only. A hand moving at a constant 1 m/s towards the
// pallet station's face from 0.9 m away, forecast exactly (oracle): the
// forecast entry is 0.9 s ahead at t = 0, so the approach rule (400 ms)
// would start at t = 0.5 s with or without a warm-up; a hand starting
// 0.3 m away (entry 0.3 s ahead) is warned at the first sample after the
// warm-up, t = 0.1 s (0.2 s before the entry), instead of at t = 0.
func TestForecastUsedAfterWarmUp(t *testing.T) {
	for _, c := range []struct {
		x0, wantReduce float64
	}{{-0.1, 0.5}, {0.5, ForecastWarmUp}} {
		f := func(t float64) r3.Vec { return r3.Vec{X: c.x0 + t, Z: 0.9} }
		e := mustEngine(t, cellConfig(), oracleModel{f}, palletBox())
		evs := run(e, "op1/right", f, 0, 1.2, dt)
		adv := ofKind(evs, EventAdvisory)
		if len(adv) == 0 || adv[0].Level != LevelReduce || math.Abs(adv[0].T-c.wantReduce) > 1e-9 {
			t.Errorf("start at x = %v: advisories %+v, want reduce at %v s", c.x0, adv, c.wantReduce)
		}
	}
}

// TestKalmanSettlesWithinWarmUp backs the choice of ForecastWarmUp: with
// the default settings, the Kalman filters' radius at the end of the
// horizon for a still hand, at the first sample at or after the warm-up,
// is within 5 % of its value after 1 s, at 100 Hz and 240 Hz.
func TestKalmanSettlesWithinWarmUp(t *testing.T) {
	for _, kind := range []string{forecast.KindKalmanCV, forecast.KindKalmanCA} {
		for _, rate := range []float64{100, 240} {
			m := forecastModel(t, kind)
			f := m.New()
			var path forecast.Path
			h := forecast.Horizon{Step: 0.02, Span: 0.5}
			var first, atWarm, settled float64
			for i := 0; float64(i)/rate <= 1+1e-9; i++ {
				tt := float64(i) / rate
				f.Update(tt, r3.Vec{X: 1, Y: 2, Z: 1})
				if !f.Predict(&path, h) {
					t.Fatalf("%s: no forecast", kind)
				}
				r := path.R[path.Len()-1]
				if i == 0 {
					first = r
				}
				if atWarm == 0 && tt >= ForecastWarmUp {
					atWarm = r
				}
				settled = r
			}
			t.Logf("%s at %v Hz: end radius %.3f m at the first sample, %.3f m after the warm-up, %.3f m after 1 s", kind, rate, first, atWarm, settled)
			if atWarm > 1.05*settled || first < 2*settled {
				t.Errorf("%s at %v Hz: end radius %.3f m after the warm-up, %.3f m settled, %.3f m at first", kind, rate, atWarm, settled, first)
			}
		}
	}
}
