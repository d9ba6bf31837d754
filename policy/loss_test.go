package policy

import (
	"math"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// lossCell is the test cell with position rules only (close: reduce 0.5
// below 0.15 m; inside: hold), stale_after 0.295 s (off the 10 ms grid, so
// that a loss is declared clearly at one tick) and release 1 s. With the
// hold forecaster (no look-ahead) only these rules fire.
func lossCell(t *testing.T) *Engine {
	cfg := cellConfig()
	sep := zones.Length(0.15)
	cfg.Policy.Rules = []zones.RuleConfig{
		{Name: "close", Level: "reduce", Scale: 0.5, SepBelow: &sep},
		{Name: "inside", Level: "hold", Inside: true},
	}
	cfg.Policy.StaleAfter = zones.Duration(295e6)
	return mustEngine(t, cfg, forecastModel(t, forecast.KindHold), palletBox())
}

// script feeds one track from t0 to t1 every 10 ms (f nil: silent) and
// ticks the engine every 10 ms, as the live service does.
func script(e *Engine, evs []Event, f motion, t0, t1 float64) []Event {
	n := int(math.Round((t1 - t0) / dt))
	for i := 0; i <= n; i++ {
		tt := t0 + float64(i)*dt
		if f != nil {
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: f(tt)})
		}
		e.Advance(tt)
		evs = e.Events(evs)
	}
	return evs
}

func at(x float64) motion { return func(float64) r3.Vec { return r3.Vec{X: x, Z: 0.9} } }

// TestLeadAfterTrackingLoss: lead times of entries after a tracking loss,
// against the pallet station (face x = 0.8 m), derived by hand.
func TestLeadAfterTrackingLoss(t *testing.T) {
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-9 }

	// 1. Near the zone, lost, reappears inside. The hand waits at x = 0.7
	// (0.1 m away: close requests reduce from t = 0) until t = 1.00 and
	// goes silent; it is declared lost at the first tick more than
	// 0.295 s later, t = 1.30, and held (tracking-lost, the pallet
	// station). It is seen again at t = 2.00 at x = 0.9, inside: an entry.
	// The warning from t = 0 ended with the loss; the fail-safe hold from
	// t = 1.30 is the warning: lead 2.00 − 1.30 = 0.70 s.
	e := lossCell(t)
	evs := script(e, nil, at(0.7), 0, 1.0)
	evs = script(e, evs, nil, 1.01, 1.99)
	evs = script(e, evs, at(0.9), 2.0, 2.2)
	lost := ofKind(evs, EventTrackingLost)
	if len(lost) != 1 || !near(lost[0].T, 1.30) || lost[0].Zone != "pallet-station" {
		t.Fatalf("case 1: tracking lost %+v, want one at 1.30 s near pallet-station", lost)
	}
	en := ofKind(evs, EventEntry)
	if len(en) != 1 || !near(en[0].T, 2.0) || !en[0].HasLead || en[0].Missed || !near(en[0].Lead, 0.70) {
		t.Errorf("case 1: entries %+v, want one at 2.00 s with lead 0.70 s", en)
	}

	// 2. Warned, then away from every zone, lost, reappears inside. The
	// hand waits at x = 0.7 until t = 1.00 (close: reduce from t = 0),
	// goes back at 1.4 m/s to x = 0 (reached at t = 1.50; the last request
	// is at t = 1.03, the last sample with x > 0.65), waits there until
	// t = 1.60 and goes silent: lost at t = 1.90, 0.8 m from the zone, not
	// near it (near_track 0.5 m): no hold. The warning episode from t = 0
	// ended with the loss (it had not lapsed yet: 1.90 − 1.03 < 1 s). Seen
	// again at t = 2.50 inside: an entry whose only warning is the inside
	// rule's hold of the same sample, lead 0: missed.
	e = lossCell(t)
	back := func(tt float64) r3.Vec { return r3.Vec{X: math.Max(0, 0.7-1.4*(tt-1.0)), Z: 0.9} }
	evs = script(e, nil, at(0.7), 0, 1.0)
	evs = script(e, evs, back, 1.01, 1.60)
	evs = script(e, evs, nil, 1.61, 2.49)
	evs = script(e, evs, at(0.9), 2.5, 2.7)
	lost = ofKind(evs, EventTrackingLost)
	if len(lost) != 1 || !near(lost[0].T, 1.90) || lost[0].Zone != "" {
		t.Fatalf("case 2: tracking lost %+v, want one at 1.90 s near no zone", lost)
	}
	en = ofKind(evs, EventEntry)
	if len(en) != 1 || !near(en[0].T, 2.5) || en[0].Lead != 0 || !en[0].Missed {
		t.Errorf("case 2: entries %+v, want one at 2.50 s, missed, lead 0", en)
	}
	if st := e.Stats(); st.RejectedTotal() != 0 || st.Missed != 1 {
		t.Errorf("case 2: stats %+v", st)
	}

	// 3. Near the zone, lost, seen again outside, warned anew, entry. As in
	// case 1 until the loss (hold from t = 1.30); seen again at t = 2.00
	// at x = 0.52 (0.28 m away: no request). The fail-safe warning,
	// current until the regain, lapses at the first sample 1 s later,
	// t = 3.00. At t = 3.50 the hand moves at 3 m/s towards the zone:
	// x = 0.52 + 3(t − 3.5) passes 0.65 (close) at t = 3.5433, so the new
	// warning starts at the sample t = 3.55, and x reaches 0.8 at
	// t = 3.5933: entry at the sample t = 3.60, lead 0.05 s.
	e = lossCell(t)
	reach := func(tt float64) r3.Vec { return r3.Vec{X: 0.52 + 3*math.Max(0, tt-3.5), Z: 0.9} }
	evs = script(e, nil, at(0.7), 0, 1.0)
	evs = script(e, evs, nil, 1.01, 1.99)
	evs = script(e, evs, reach, 2.0, 3.62)
	en = ofKind(evs, EventEntry)
	if len(en) != 1 || !near(en[0].T, 3.60) || !en[0].HasLead || en[0].Missed || !near(en[0].Lead, 0.05) {
		t.Errorf("case 3: entries %+v, want one at 3.60 s with lead 0.05 s", en)
	}
}
