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

// twin feeds the same input to two engines of the same cell, one sweeping
// every zone for every forecast (fullSweep) and one skipping the zones its
// temporal coherence shows far, and compares everything either reports
// after every call: the events as JSON, byte for byte, the advisory with its
// reasons and the state of every track and zone.
type twin struct {
	t          *testing.T
	full, fast *Engine
	calls      int
	events     int
	ea, eb     []Event
	sa, sb     []TrackZone
	ja, jb     bytes.Buffer
}

func newTwin(t *testing.T, mk func() *Engine) *twin {
	w := &twin{t: t, full: mk(), fast: mk()}
	w.full.fullSweep = true
	return w
}

func (w *twin) do(f func(e *Engine)) {
	w.t.Helper()
	f(w.full)
	f(w.fast)
	w.calls++
	w.ea, w.eb = w.full.Events(w.ea[:0]), w.fast.Events(w.eb[:0])
	w.events += len(w.ea)
	w.ja.Reset()
	w.jb.Reset()
	if err := json.NewEncoder(&w.ja).Encode(w.ea); err != nil {
		w.t.Fatal(err)
	}
	if err := json.NewEncoder(&w.jb).Encode(w.eb); err != nil {
		w.t.Fatal(err)
	}
	if !bytes.Equal(w.ja.Bytes(), w.jb.Bytes()) {
		w.t.Fatalf("call %d: events differ:\nfull: %s\nfast: %s", w.calls, w.ja.Bytes(), w.jb.Bytes())
	}
	a, b := w.full.Advisory(), w.fast.Advisory()
	if !sameAdvisory(a, b) {
		w.t.Fatalf("call %d: advisories differ:\nfull: %+v\nfast: %+v", w.calls, a, b)
	}
	w.sa, w.sb = w.full.State(w.sa[:0]), w.fast.State(w.sb[:0])
	if len(w.sa) != len(w.sb) {
		w.t.Fatalf("call %d: %d and %d states", w.calls, len(w.sa), len(w.sb))
	}
	for i := range w.sa {
		if w.sa[i] != w.sb[i] {
			w.t.Fatalf("call %d: states differ:\nfull: %+v\nfast: %+v", w.calls, w.sa[i], w.sb[i])
		}
	}
	if sa, sb := w.full.Stats(), w.fast.Stats(); sa != sb {
		w.t.Fatalf("call %d: stats differ:\nfull: %+v\nfast: %+v", w.calls, sa, sb)
	}
	w.checkViews(w.fast, w.sb)
}

// checkViews checks Requests and Separations against State: the requests
// are the pairs of live tracks whose level is not clear, with their place
// in State's order; the separations those of State.
func (w *twin) checkViews(e *Engine, st []TrackZone) {
	w.t.Helper()
	nz := len(e.zones)
	reqs := e.Requests(nil)
	k := 0
	for i, tz := range st {
		if tz.Level == LevelClear || tz.Lost {
			continue
		}
		if k >= len(reqs) {
			w.t.Fatalf("call %d: %d requests, State has more: %+v", w.calls, len(reqs), tz)
		}
		if q := reqs[k]; q.Reason != tz.Reason || q.T != tz.T || q.TrackIndex != i/nz || q.ZoneIndex != i%nz {
			w.t.Fatalf("call %d: request %+v, State %d: %+v", w.calls, q, i, tz)
		}
		k++
	}
	if k != len(reqs) {
		w.t.Fatalf("call %d: %d requests, State has %d", w.calls, len(reqs), k)
	}
	for i := 0; i < len(st); i += nz {
		seps, ok := e.Separations(st[i].Track, nil)
		if !ok || len(seps) != nz {
			w.t.Fatalf("call %d: separations of %s: %v %v", w.calls, st[i].Track, seps, ok)
		}
		for z := range seps {
			if seps[z] != st[i+z].Separation {
				w.t.Fatalf("call %d: separation of %s from %s: %v, State %v", w.calls, st[i].Track, st[i+z].Zone, seps[z], st[i+z].Separation)
			}
		}
	}
	if _, ok := e.Separations("nobody", nil); ok {
		w.t.Fatalf("separations of an unknown track")
	}
}

func sameAdvisory(a, b Advisory) bool {
	ra, rb := a.Reasons, b.Reasons
	if a.T != b.T || a.Seq != b.Seq || a.Level != b.Level || a.Scale != b.Scale || a.Since != b.Since ||
		a.Held != b.Held || a.Horizon != b.Horizon || len(ra) != len(rb) {
		return false
	}
	for i := range ra {
		if ra[i] != rb[i] {
			return false
		}
	}
	return true
}

// check ends the comparison (Flush) and returns how many zone sweeps the
// coherent engine skipped.
func (w *twin) check(name string) uint64 {
	w.t.Helper()
	w.do(func(e *Engine) { e.Flush() })
	if w.full.skipped != 0 {
		w.t.Fatalf("%s: the full engine skipped %d sweeps", name, w.full.skipped)
	}
	if w.events == 0 {
		w.t.Fatalf("%s: no events to compare", name)
	}
	return w.fast.skipped
}

// TestCoherenceEquivalentOnScenarios replays the engine tests' scenarios
// (the pallet station and a sphere, exact and estimated forecasts,
// tracking losses) through both engines.
func TestCoherenceEquivalentOnScenarios(t *testing.T) {
	reach := minJerk{a: r3.Vec{X: 0.2, Z: 0.9}, b: r3.Vec{X: 1.0, Z: 0.9}, t0: 0.205, d: 0.8}
	back := minJerk{a: reach.b, b: reach.a, t0: 2.005, d: 0.8}
	pass := minJerk{a: r3.Vec{X: 0.64, Y: -0.8, Z: 1}, b: r3.Vec{X: 0.64, Y: 0.8, Z: 1}, t0: 0.1, d: 1.0}
	far := minJerk{a: r3.Vec{X: -3, Y: 2, Z: 1}, b: r3.Vec{X: 0.3, Y: 0.2, Z: 1}, t0: 0.5, d: 1.5}
	there := func(tt float64) r3.Vec {
		if tt < back.t0 {
			return reach.at(tt)
		}
		return back.at(tt)
	}
	var skipped uint64
	for _, kind := range []string{"oracle", forecast.KindCV, forecast.KindKalmanCA, forecast.KindFitted} {
		w := newTwin(t, func() *Engine {
			var m forecast.Model = oracleModel{there}
			if kind != "oracle" {
				m = forecastModel(t, kind)
			}
			sph := &dzone{name: "wrapper-arm", sphere: true, c: r3.Vec{X: 1, Z: 1}, r: 0.3}
			return mustEngine(t, cellConfig(), m, palletBox(), sph)
		})
		for i := 0; i <= 500; i++ {
			tt := float64(i) * dt
			if tt < 1.5 || tt > 2.2 { // op1/right lost in between
				w.do(func(e *Engine) { e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: there(tt)}) })
			}
			w.do(func(e *Engine) { e.Sample(forecast.Sample{Track: "op2/left", T: tt + 0.003, P: pass.at(tt)}) })
			w.do(func(e *Engine) { e.Sample(forecast.Sample{Track: "op3/left", T: tt + 0.006, P: far.at(tt)}) })
			w.do(func(e *Engine) { e.Advance(tt + 0.005) })
		}
		skipped += w.check(kind)
	}
	if skipped == 0 {
		t.Error("no sweep was skipped: the comparison shows nothing")
	}
}

// TestCoherenceEquivalentLongRun: a long simulated shift in the example
// cell: both hands of an operator reaching between the stations, the
// infeed, the robot envelope's west face, the pick position, the pallet
// station and the slip-sheet magazine, at 240 Hz with jitter, 2 mm noise,
// dropouts and tracking losses, while the robot's tool moves (robot states
// at 50 Hz with speed) and the service ticks every 50 ms; with the fitted
// and the Kalman forecasts.
func TestCoherenceEquivalentLongRun(t *testing.T) {
	dur, want := 240.0, 5
	if testing.Short() {
		dur, want = 30, 1
	}
	cfg, _ := demoCell(t)
	// stations and the walkway (several times, so that hands spend time
	// away from the zones), the infeed, the envelope's west face, the pick
	// position, the notch of the envelope, the pallet station, the
	// magazine and the exit
	targets := []r3.Vec{
		{X: 1.4, Y: 3.9, Z: 0.95}, {X: 1.0, Y: 0.8, Z: 1.0}, {X: 0.6, Y: 3.75, Z: 0.8}, {X: 0.2, Y: 2.0, Z: 1.0},
		{X: 0.3, Y: 0.8, Z: 1.0}, {X: 0.2, Y: 3.0, Z: 0.8}, {X: 0.1, Y: 2.0, Z: 1.0}, {X: 7.0, Y: 1.0, Z: 1.0},
		{X: 1.75, Y: 3.6, Z: 1.0}, {X: 2.2, Y: 3.9, Z: 1.0}, {X: 2.4, Y: 1.2, Z: 1.2}, {X: 4.6, Y: 1.0, Z: 1.0},
		{X: 5.4, Y: 5.2, Z: 1.0}, {X: 5.3, Y: 4.3, Z: 1.2}, {X: 6.3, Y: 1.0, Z: 1.0},
	}
	type hand struct {
		id    string
		moves []minJerk
		next  float64 // next sample time
		quiet float64 // silent until
	}
	var skipped uint64
	for _, kind := range []string{forecast.KindFitted, forecast.KindKalmanCV} {
		rng := rand.New(rand.NewPCG(91, 92))
		hands := []*hand{{id: "op1/left"}, {id: "op1/right"}}
		for _, h := range hands {
			p, tt := targets[rng.IntN(len(targets))], 0.0
			for tt < dur+2 {
				q := targets[rng.IntN(len(targets))]
				q = r3.Add(q, r3.Vec{X: 0.2 * rng.NormFloat64(), Y: 0.2 * rng.NormFloat64(), Z: 0.1 * rng.NormFloat64()})
				// peak speed 1.875·distance/d: at most about 2 m/s
				d := max(0.4, r3.Norm(r3.Sub(q, p))) + 0.5*rng.Float64()
				h.moves = append(h.moves, minJerk{a: p, b: q, t0: tt, d: d})
				p, tt = q, tt+d+2.5*rng.Float64()
			}
		}
		at := func(h *hand, tt float64) r3.Vec {
			for i := len(h.moves) - 1; i >= 0; i-- {
				if h.moves[i].t0 <= tt {
					return h.moves[i].at(tt)
				}
			}
			return h.moves[0].a
		}
		w := newTwin(t, func() *Engine {
			zs, err := cfg.BuildZones()
			if err != nil {
				t.Fatal(err)
			}
			e, err := NewEngine(cfg, zs, forecastModel(t, kind), Options{})
			if err != nil {
				t.Fatal(err)
			}
			return e
		})
		// the tool swings between its home pose above the pick position
		// and the pallet station
		home, pallet := r3.Vec{X: 3.0, Y: 3.4, Z: 2.1}, r3.Vec{X: 5.4, Y: 1.0, Z: 1.9}
		nextRobot, nextTick := 0.0, 0.0
		for now := 0.0; now < dur; {
			// the earliest of the next sample of every hand, robot state
			// and tick
			var h *hand
			for _, c := range hands {
				if h == nil || c.next < h.next {
					h = c
				}
			}
			switch {
			case nextRobot <= h.next && nextRobot <= nextTick:
				now = nextRobot
				a := 0.5 * now
				u := 0.5 * (1 - math.Cos(a))
				pos := r3.Add(home, r3.Scale(u, r3.Sub(pallet, home)))
				st := RobotState{T: now, Frames: []FramePose{{Frame: "tool", Pose: zones.Pose{Pos: pos, Rot: zones.RotationRPY(180, 0, 90*u)}}},
					HasSpeed: true, Speed: 0.5 * 0.5 * math.Sin(a) * r3.Norm(r3.Sub(pallet, home))}
				w.do(func(e *Engine) {
					if err := e.Robot(st); err != nil {
						t.Fatal(err)
					}
				})
				nextRobot += 0.02
			case nextTick <= h.next:
				now = nextTick
				w.do(func(e *Engine) { e.Advance(now) })
				nextTick += 0.05
			default:
				now = h.next
				h.next += 1.0/240 + 0.001*(rng.Float64()-0.5)
				switch r := rng.Float64(); {
				case r < 0.0004: // a tracking loss
					h.quiet = now + 0.5 + rng.Float64()
				case r < 0.005: // a dropout
					h.quiet = now + 0.03
				}
				if now < h.quiet {
					continue
				}
				p := r3.Add(at(h, now), r3.Vec{X: 0.002 * rng.NormFloat64(), Y: 0.002 * rng.NormFloat64(), Z: 0.002 * rng.NormFloat64()})
				w.do(func(e *Engine) { e.Sample(forecast.Sample{Track: h.id, T: now, P: p}) })
			}
		}
		n := w.check(kind)
		st := w.fast.Stats()
		t.Logf("%s: %d samples, %d entries (%d missed), %d near misses, %d losses, advisory changes %v; %d zone sweeps of %d skipped",
			kind, st.Accepted, st.Entries, st.Missed, st.NearMisses, st.TrackingLost, st.Changes,
			n, st.Accepted*uint64(len(w.fast.zones)))
		if st.Entries < uint64(2*want) || st.NearMisses < uint64(want) || st.TrackingLost < uint64(want) || st.Changes[LevelClear] < uint64(want+1)/2 ||
			st.Changes[LevelReduce] < uint64(want) || st.Changes[LevelHold] < uint64(want) || st.RobotStates == 0 {
			t.Errorf("%s: the run does not exercise the engine: %+v", kind, st)
		}
		skipped += n
	}
	if skipped == 0 {
		t.Error("no sweep was skipped: the comparison shows nothing")
	}
}
