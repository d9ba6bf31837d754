package policy

import (
	"bytes"
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

const dt = 0.01 // sample period of the scenarios, s (100 Hz)

// palletBox is the pallet station of the pl3-palletiser cell: the face the
// operator reaches towards is x = 0.8 m.
func palletBox() *dzone {
	return &dzone{name: "pallet-station", lo: r3.Vec{X: 0.8, Y: -0.5, Z: 0}, hi: r3.Vec{X: 1.6, Y: 0.5, Z: 1.2}}
}

func mustEngine(t testing.TB, cfg *zones.Config, m forecast.Model, zs ...*dzone) *Engine {
	t.Helper()
	e, err := newEngine(cfg, &doubleSet{zs: zs}, m, Options{})
	if err != nil {
		t.Fatal(err)
	}
	return e
}

// minJerkCrossing returns the time at which the minimum-jerk movement m
// reaches fraction s of its way (bisection on the closed form, to 1e-12 s).
func minJerkCrossing(m minJerk, s float64) float64 {
	lo, hi := 0.0, 1.0
	for hi-lo > 1e-12 {
		mid := (lo + hi) / 2
		if mid*mid*mid*(10-15*mid+6*mid*mid) < s {
			lo = mid
		} else {
			hi = mid
		}
	}
	return m.t0 + m.d*hi
}

// firstSampleAtOrAfter returns the first sample time i·dt >= t; it fails the
// test when t is within 1 ms of the grid, where rounding could go either way.
func firstSampleAtOrAfter(t *testing.T, at float64) float64 {
	t.Helper()
	i := math.Ceil(at / dt)
	if i*dt-at < 1e-3 && i*dt-at > -1e-3 || at-(i-1)*dt < 1e-3 {
		t.Fatalf("scenario time %v s is within 1 ms of a sample: choose other parameters", at)
	}
	return i * dt
}

// levels returns the levels of the advisory events in order.
func levels(evs []Event) []Level {
	var out []Level
	for _, e := range evs {
		if e.Kind == EventAdvisory {
			out = append(out, e.Level)
		}
	}
	return out
}

func sameLevels(a, b []Level) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// TestReachTowardsAndAway: a minimum-jerk reach (Flash & Hogan 1985) into
// the pallet station and back, forecast exactly. With the default rules
// (reduce within 400 ms, hold within 150 ms or inside) the expected times
// follow from the closed form: the hand crosses x = 0.8 m at t_e, where the
// movement has done 0.6/0.8 = 75 % of its way; reduce starts at the first
// sample at or after t_e − 0.4 s, hold at the first sample at or after
// t_e − 0.15 s, the entry is the first sample at or after t_e, and the lead
// time is entry − reduce start.
func TestReachTowardsAndAway(t *testing.T) {
	in := minJerk{a: r3.Vec{X: 0.2, Z: 0.9}, b: r3.Vec{X: 1.0, Z: 0.9}, t0: 0.205, d: 0.8}
	out := minJerk{a: in.b, b: in.a, t0: 2.005, d: 0.8}
	f := func(t float64) r3.Vec {
		if t < out.t0 {
			return in.at(t)
		}
		return out.at(t)
	}
	// A release time off the sample grid, so that "release time passed"
	// falls clearly between two samples.
	cfg := cellConfig()
	cfg.Policy.Release = zones.Duration(1005e6)
	e := mustEngine(t, cfg, oracleModel{f}, palletBox())
	evs := run(e, "op1/right", f, 0, 4, dt)

	te := minJerkCrossing(in, 0.75)
	wantReduce := firstSampleAtOrAfter(t, te-0.4)
	wantHold := firstSampleAtOrAfter(t, te-0.15)
	wantEntry := firstSampleAtOrAfter(t, te)
	// Exit: x falls below 0.8 − exitBand on the way back (25 % of the way
	// back done when x = 0.8, a little more with the band).
	tx := minJerkCrossing(out, (0.2+exitBand)/0.8)
	wantExit := firstSampleAtOrAfter(t, tx)
	// The last sample with the hand inside (the hold request by the
	// "inside" rule) is the last one before x < 0.8.
	lastHold := firstSampleAtOrAfter(t, minJerkCrossing(out, 0.25)) - dt
	wantRelease := firstSampleAtOrAfter(t, lastHold+1.005)

	adv := ofKind(evs, EventAdvisory)
	if got, want := levels(evs), []Level{LevelReduce, LevelHold, LevelClear}; !sameLevels(got, want) {
		t.Fatalf("advisory levels %v, want %v", got, want)
	}
	near := func(a, b float64) bool { return math.Abs(a-b) < 1e-9 }
	if !near(adv[0].T, wantReduce) || adv[0].Scale != 0.5 {
		t.Errorf("reduce at %v scale %v, want %v scale 0.5", adv[0].T, adv[0].Scale, wantReduce)
	}
	if !near(adv[1].T, wantHold) {
		t.Errorf("hold at %v, want %v", adv[1].T, wantHold)
	}
	if !near(adv[2].T, wantRelease) {
		t.Errorf("release at %v, want %v (last hold request %v + release 1.005 s)", adv[2].T, wantRelease, lastHold)
	}
	entries, exits := ofKind(evs, EventEntry), ofKind(evs, EventExit)
	if len(entries) != 1 || len(exits) != 1 {
		t.Fatalf("%d entries, %d exits; want 1 and 1", len(entries), len(exits))
	}
	en := entries[0]
	if !near(en.T, wantEntry) || !en.HasLead || en.Missed || !near(en.Lead, wantEntry-wantReduce) {
		t.Errorf("entry %+v, want at %v with lead %v", en, wantEntry, wantEntry-wantReduce)
	}
	if en.Zone != "pallet-station" || en.Track != "op1/right" {
		t.Errorf("entry names %q %q", en.Track, en.Zone)
	}
	if !near(exits[0].T, wantExit) {
		t.Errorf("exit at %v, want %v", exits[0].T, wantExit)
	}
	// The reasons of the hold name the track, the zone, the rule and a
	// time-to-entry within the rule's 150 ms.
	var found bool
	for _, r := range adv[1].Reasons {
		if r.Track == "op1/right" && r.Zone == "pallet-station" && r.Rule == "imminent" && r.Level == LevelHold &&
			r.HasEntry && r.TimeToEntry <= 0.15 && r.TimeToEntry >= 0 {
			found = true
		}
	}
	if !found {
		t.Errorf("hold reasons %+v lack the imminent rule of op1/right", adv[1].Reasons)
	}
	st := e.Stats()
	if st.Entries != 1 || st.Missed != 0 || st.Changes[LevelHold] != 1 || st.RejectedTotal() != 0 {
		t.Errorf("stats %+v", st)
	}
}

// TestReachWithForecaster runs the same reach with the project's
// constant-velocity and constant-acceleration forecasters instead of the
// exact one: the advisory must still escalate to reduce, then hold, before
// the entry, with a lead time of at least 250 ms (the exact forecast gives
// about 400 ms; the estimators lag the accelerating hand).
func TestReachWithForecaster(t *testing.T) {
	for _, kind := range []string{forecast.KindCV, forecast.KindCA} {
		m, err := forecast.NewModel(forecast.Settings{Kind: kind})
		if err != nil {
			t.Fatal(err)
		}
		in := minJerk{a: r3.Vec{X: 0.2, Z: 0.9}, b: r3.Vec{X: 1.0, Z: 0.9}, t0: 0.205, d: 0.8}
		e := mustEngine(t, cellConfig(), m, palletBox())
		evs := run(e, "op1/right", in.at, 0, 2, dt)
		entries := ofKind(evs, EventEntry)
		lv := levels(evs)
		if len(entries) != 1 || len(lv) < 2 || lv[0] != LevelReduce {
			t.Fatalf("%s: entries %d, levels %v", kind, len(entries), lv)
		}
		var holdT float64 = math.Inf(1)
		for _, a := range ofKind(evs, EventAdvisory) {
			if a.Level == LevelHold {
				holdT = math.Min(holdT, a.T)
			}
		}
		if !(holdT < entries[0].T) {
			t.Errorf("%s: hold at %v, not before the entry at %v", kind, holdT, entries[0].T)
		}
		if !entries[0].HasLead || entries[0].Lead < 0.25 {
			t.Errorf("%s: lead %v (has %v), want >= 0.25 s", kind, entries[0].Lead, entries[0].HasLead)
		}
		t.Logf("%s: lead %.3f s", kind, entries[0].Lead)
	}
}

// TestReachAway: a minimum-jerk reach away from the zone, starting 0.3 m
// from it, never touches it: no advisory change, no entry.
func TestReachAway(t *testing.T) {
	away := minJerk{a: r3.Vec{X: 0.5, Z: 0.9}, b: r3.Vec{X: -0.1, Z: 0.9}, t0: 0.1, d: 0.7}
	e := mustEngine(t, cellConfig(), oracleModel{away.at}, palletBox())
	evs := run(e, "op1/left", away.at, 0, 1.5, dt)
	if len(evs) != 0 {
		t.Errorf("events %+v, want none", evs)
	}
	if a := e.Advisory(); a.Level != LevelClear || a.Scale != 1 || a.Seq != 0 {
		t.Errorf("advisory %+v, want clear", a)
	}
}

// TestPassByNearMiss: a hand passing a sphere at 0.06 m from its surface
// (near_miss 0.1 m) gives one near miss and no entry. The minimum sampled
// separation is within 1 mm of the closed-form 0.06 m (samples every 10 ms
// at a peak speed of 1.875·1.6/1.0 = 3 m/s lie within 1.5 cm of the
// closest point: sqrt(0.36² + 0.015²) − 0.36 < 0.4 mm), at the movement's
// midpoint (±1 sample).
func TestPassByNearMiss(t *testing.T) {
	z := &dzone{name: "wrapper-arm", sphere: true, c: r3.Vec{X: 1, Z: 1}, r: 0.3}
	pass := minJerk{a: r3.Vec{X: 0.64, Y: -0.8, Z: 1}, b: r3.Vec{X: 0.64, Y: 0.8, Z: 1}, t0: 0.1, d: 1.0}
	e := mustEngine(t, cellConfig(), oracleModel{pass.at}, z)
	evs := run(e, "op2/right", pass.at, 0, 1.5, dt)
	if n := len(ofKind(evs, EventEntry)); n != 0 {
		t.Errorf("%d entries, want none", n)
	}
	nm := ofKind(evs, EventNearMiss)
	if len(nm) != 1 {
		t.Fatalf("%d near misses, want 1: %+v", len(nm), evs)
	}
	if math.Abs(nm[0].Separation-0.06) > 1e-3 || math.Abs(nm[0].MinT-0.6) > dt+1e-9 {
		t.Errorf("near miss sep %v at %v, want 0.06 m at 0.6 s", nm[0].Separation, nm[0].MinT)
	}
	if nm[0].Zone != "wrapper-arm" || nm[0].Track != "op2/right" || e.Stats().NearMisses != 1 {
		t.Errorf("near miss %+v stats %+v", nm[0], e.Stats())
	}
}

// TestPassThroughIsNoNearMiss: an approach that ends in an entry is an
// entry, not a near miss.
func TestPassThroughIsNoNearMiss(t *testing.T) {
	z := &dzone{name: "wrapper-arm", sphere: true, c: r3.Vec{X: 1, Z: 1}, r: 0.3}
	pass := minJerk{a: r3.Vec{X: 0.8, Y: -0.8, Z: 1}, b: r3.Vec{X: 0.8, Y: 0.8, Z: 1}, t0: 0.1, d: 1.0}
	e := mustEngine(t, cellConfig(), oracleModel{pass.at}, z)
	evs := run(e, "op2/right", pass.at, 0, 1.5, dt)
	e.Flush()
	evs = e.Events(evs)
	if n, m := len(ofKind(evs, EventEntry)), len(ofKind(evs, EventNearMiss)); n != 1 || m != 0 {
		t.Errorf("%d entries, %d near misses; want 1, 0", n, m)
	}
}

// TestTrackingLost: a hand that stops 0.2 m from the zone and goes silent
// yields hold (rule tracking-lost) within stale_after plus one sample
// period, while a silent hand far from every zone does not. The engine is
// ticked with Advance every sample period, as the live service does.
func TestTrackingLost(t *testing.T) {
	reach := minJerk{a: r3.Vec{X: 0.0, Z: 0.9}, b: r3.Vec{X: 0.6, Z: 0.9}, t0: 0.1, d: 0.8}
	far := func(t float64) r3.Vec { return r3.Vec{X: -2, Y: 1, Z: 1} }
	cfg := cellConfig()
	// stale_after off the sample grid, so that "silent longer than
	// stale_after" falls clearly between two ticks.
	cfg.Policy.StaleAfter = zones.Duration(295e6)
	e := mustEngine(t, cfg, oracleModel{reach.at}, palletBox())
	var evs []Event
	const lastNear, lastFar = 1.5, 1.0
	for i := 0; i <= 400; i++ {
		tt := float64(i) * dt
		if tt <= lastNear {
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: reach.at(tt)})
		}
		if tt <= lastFar {
			e.Sample(forecast.Sample{Track: "op1/left", T: tt, P: far(tt)})
		}
		e.Advance(tt)
		evs = e.Events(evs)
	}
	lost := ofKind(evs, EventTrackingLost)
	if len(lost) != 2 {
		t.Fatalf("%d tracking-lost events, want 2: %+v", len(lost), lost)
	}
	stale := cfg.Policy.StaleAfter.Seconds()
	if lost[0].Track != "op1/left" || lost[0].Zone != "" || lost[0].T <= lastFar+stale || lost[0].T > lastFar+stale+dt+1e-9 {
		t.Errorf("far track lost %+v", lost[0])
	}
	if lost[1].Track != "op1/right" || lost[1].Zone != "pallet-station" {
		t.Errorf("near track lost %+v", lost[1])
	}
	adv := ofKind(evs, EventAdvisory)
	if len(adv) == 0 || adv[0].Level != LevelHold {
		t.Fatalf("advisories %+v, want hold", adv)
	}
	if adv[0].T <= lastNear+stale || adv[0].T > lastNear+stale+dt+1e-9 {
		t.Errorf("hold at %v, want within (%v, %v]", adv[0].T, lastNear+stale, lastNear+stale+dt)
	}
	if len(adv[0].Reasons) != 1 || adv[0].Reasons[0].Rule != RuleTrackingLost || adv[0].Reasons[0].Track != "op1/right" {
		t.Errorf("hold reasons %+v", adv[0].Reasons)
	}
	// The hold lasts while the track stays lost (4 s here): no release.
	if len(adv) != 1 || e.Advisory().Level != LevelHold {
		t.Errorf("advisories %+v, now %v; want a single hold", adv, e.Advisory())
	}

	// Regained: the track is seen again at rest, 0.2 m away; the hold is
	// released one release time later.
	t0 := e.Now()
	for i := 1; i <= 150; i++ {
		tt := t0 + float64(i)*dt
		e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: reach.b})
	}
	evs = e.Events(evs[:0])
	if n := len(ofKind(evs, EventTrackingRegained)); n != 1 {
		t.Errorf("%d regained events, want 1", n)
	}
	adv = ofKind(evs, EventAdvisory)
	if len(adv) != 1 || adv[0].Level != LevelClear || adv[0].T < t0+1.0 || adv[0].T > t0+1.0+2*dt {
		t.Errorf("after regain: advisories %+v, want one release about %v", adv, t0+1)
	}
}

// TestOscillationNoChatter: a hand oscillating across the zone's face
// faster than the release time keeps one hold; releases are never closer
// together than the release time, whatever the oscillation frequency.
func TestOscillationNoChatter(t *testing.T) {
	cfg := cellConfig()
	cfg.Policy.Release = zones.Duration(500e6)
	const release = 0.5
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 20; trial++ {
		freq := 0.2 + 2.8*rng.Float64()
		amp := 0.05 + 0.15*rng.Float64()
		if amp*2*math.Pi*freq > 5 {
			amp = 5 / (2 * math.Pi * freq)
		}
		f := func(t float64) r3.Vec {
			return r3.Vec{X: 0.78 + amp*math.Sin(2*math.Pi*freq*t), Z: 0.9}
		}
		e := mustEngine(t, cfg, oracleModel{f}, palletBox())
		evs := run(e, "op1/right", f, 0, 10, dt)
		var lastChange float64 = math.Inf(-1)
		prev := LevelClear
		prevScale := 1.0
		releases := 0
		for _, a := range ofKind(evs, EventAdvisory) {
			if a.Level < prev || (a.Level == prev && a.Scale > prevScale) {
				releases++
				if a.T-lastChange < release-1e-9 {
					t.Errorf("f=%.2f Hz: release at %v only %v after the previous change", freq, a.T, a.T-lastChange)
				}
			}
			lastChange, prev, prevScale = a.T, a.Level, a.Scale
		}
		if releases > int(10/release)+1 {
			t.Errorf("f=%.2f Hz: %d releases in 10 s", freq, releases)
		}
		if rs := e.Stats().RejectedTotal(); rs != 0 {
			t.Errorf("f=%.2f Hz: %d rejections", freq, rs)
		}
	}

	// Fast oscillation (period 0.2 s, well below the release time): one
	// escalation to hold and no release while it lasts.
	f := func(t float64) r3.Vec { return r3.Vec{X: 0.78 + 0.05*math.Sin(2*math.Pi*5*t), Z: 0.9} }
	e := mustEngine(t, cfg, oracleModel{f}, palletBox())
	evs := run(e, "op1/right", f, 0, 10, dt)
	if lv := levels(evs); len(lv) != 1 || lv[0] != LevelHold {
		t.Errorf("fast oscillation: levels %v, want [hold]", lv)
	}
}

// TestRejections: bad samples are rejected with their reason, counted, and
// do not disturb the track; nothing panics.
func TestRejections(t *testing.T) {
	e := mustEngine(t, cellConfig(), forecastModel(t, forecast.KindCV), palletBox())
	p := r3.Vec{X: 0, Z: 1}
	good := func(tt float64) { e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: p}) }
	good(1.0)
	good(1.01)
	e.Sample(forecast.Sample{Track: "op1/right", T: math.NaN(), P: p})
	e.Sample(forecast.Sample{Track: "op1/right", T: 1.02, P: r3.Vec{X: math.Inf(1)}})
	e.Sample(forecast.Sample{Track: "op1/right", T: 1.0, P: p})                   // backwards
	e.Sample(forecast.Sample{Track: "op1/right", T: 1.01, P: p})                  // duplicate
	e.Sample(forecast.Sample{Track: "op1/right", T: 1.02, P: r3.Vec{X: 1, Z: 1}}) // 100 m/s
	e.Sample(forecast.Sample{Track: "", T: 1.02, P: p})
	good(1.02)
	// 9 m/s is below the default 10 m/s: accepted.
	p = r3.Vec{X: 0.09, Z: 1}
	good(1.03)
	evs := e.Events(nil)
	st := e.Stats()
	want := map[RejectReason]uint64{RejectNonFinite: 2, RejectBackwards: 1, RejectDuplicate: 1, RejectSpeed: 1, RejectNoTrack: 1}
	for r, n := range want {
		if st.Rejected[r] != n {
			t.Errorf("rejected %v: %d, want %d", r, st.Rejected[r], n)
		}
	}
	if st.Samples != 10 || st.Accepted != 4 || st.RejectedTotal() != 6 {
		t.Errorf("stats %+v", st)
	}
	rej := ofKind(evs, EventRejected)
	if len(rej) != 6 || rej[4].Reject != RejectSpeed || math.Abs(rej[4].Value-100) > 1e-6 {
		t.Errorf("rejected events %+v", rej)
	}
	for _, ev := range evs {
		if !finite(ev.T) || !finite(ev.Value) {
			t.Errorf("event with a non-finite field: %+v", ev)
		}
	}
}

func forecastModel(t testing.TB, kind string) forecast.Model {
	m, err := forecast.NewModel(forecast.Settings{Kind: kind})
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestMissedEntry: with the hold forecaster (no look-ahead) and no margin,
// the first request comes with the entry itself: the entry is missed.
func TestMissedEntry(t *testing.T) {
	in := minJerk{a: r3.Vec{X: 0.2, Z: 0.9}, b: r3.Vec{X: 1.0, Z: 0.9}, t0: 0.205, d: 0.8}
	e := mustEngine(t, cellConfig(), forecastModel(t, forecast.KindHold), palletBox())
	evs := run(e, "op1/right", in.at, 0, 2, dt)
	en := ofKind(evs, EventEntry)
	if len(en) != 1 || !en[0].Missed || en[0].Lead > 0 || e.Stats().Missed != 1 {
		t.Errorf("entries %+v, want one missed", en)
	}
}

// TestDeterminism: the same input gives byte-identical events.
func TestDeterminism(t *testing.T) {
	encode := func() []byte {
		reach := minJerk{a: r3.Vec{X: 0.2, Z: 0.9}, b: r3.Vec{X: 1.0, Z: 0.9}, t0: 0.205, d: 0.8}
		pass := minJerk{a: r3.Vec{X: 0.64, Y: -0.8, Z: 1}, b: r3.Vec{X: 0.64, Y: 0.8, Z: 1}, t0: 0.1, d: 1.0}
		sph := &dzone{name: "wrapper-arm", sphere: true, c: r3.Vec{X: 1, Z: 1}, r: 0.3}
		e := mustEngine(t, cellConfig(), forecastModel(t, forecast.KindKalmanCA), palletBox(), sph)
		var buf bytes.Buffer
		enc := json.NewEncoder(&buf)
		var evs []Event
		for i := 0; i <= 300; i++ {
			tt := float64(i) * dt
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: reach.at(tt)})
			if i < 150 {
				e.Sample(forecast.Sample{Track: "op2/left", T: tt + 0.003, P: pass.at(tt)})
			}
			if i%7 == 3 {
				e.Sample(forecast.Sample{Track: "op2/left", T: tt - 0.5, P: pass.at(tt)})
			}
			e.Advance(tt + 0.005)
			evs = e.Events(evs[:0])
			for _, ev := range evs {
				if err := enc.Encode(ev); err != nil {
					t.Fatal(err)
				}
			}
		}
		return buf.Bytes()
	}
	a, b := encode(), encode()
	if len(a) == 0 || !bytes.Equal(a, b) {
		t.Errorf("two runs differ (%d and %d bytes)", len(a), len(b))
	}
}
