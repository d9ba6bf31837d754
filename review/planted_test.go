package review

import (
	"math"
	"testing"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/zones"
)

// minJerkProgress is the minimum-jerk progress s(τ) = 10τ³ − 15τ⁴ + 6τ⁵ of a
// point-to-point reach (Flash & Hogan, 1985, J. Neurosci. 5(7):1688–1703),
// written out here independently of package sim.
func minJerkProgress(tau float64) float64 {
	tau = math.Max(0, math.Min(1, tau))
	return tau * tau * tau * (10 - 15*tau + 6*tau*tau)
}

// crossing returns the time at which a reach from x0 to x1 starting at t0
// and lasting d passes x (x0 < x < x1), by bisection on the closed form to
// 1e-12 s.
func crossing(x0, x1, t0, d, x float64) float64 {
	target := (x - x0) / (x1 - x0)
	lo, hi := 0.0, 1.0
	for hi-lo > 1e-12/d {
		mid := (lo + hi) / 2
		if minJerkProgress(mid) < target {
			lo = mid
		} else {
			hi = mid
		}
	}
	return t0 + d*(lo+hi)/2
}

// plantedCell is the example cell set up so that the planted incidents'
// lead times follow from the reach timing and the rules' thresholds alone:
//
//   - the forecast model is "hold" (the path stays at the measured point
//     with radius 0), so the cell's "approach" rule (forecast entry within
//     400 ms, with the zone's margin) requests reduce exactly when the
//     measured separation is within the margin (0.20 m for the robot
//     envelope; the "close" rule's 0.15 m is inside it), and
//   - the robot's speed is cleared: with the configured stopping data the
//     ISO/TS 15066 protective separation distance is 2.15 m, more than the
//     operator's distance from the tool zones at the robot's home pose, so
//     its hold would be requested the whole time and no request would tell
//     the planted incidents apart.
func plantedCell(t testing.TB) (*zones.Config, forecast.Model) {
	cfg := exampleCell(t)
	cfg.Forecast.Model = forecast.KindHold
	cfg.Robot.Speed = 0
	m, err := forecast.NewModel(forecast.Settings{Kind: forecast.KindHold})
	if err != nil {
		t.Fatal(err)
	}
	return cfg, m
}

// The planted reaches of testdata/review/planted.yaml along x at the west
// face of the robot envelope (x = 1.7 m).
const (
	face     = 1.7  // m, the envelope's west face
	rate     = 100  // Hz, the scenario's sensor rate
	period   = 0.01 // s, one sample period
	envelope = "robot-envelope"
)

type plantedEntry struct {
	name         string
	x0, x1, t0   float64
	d            float64
	depth        float64
	missed       bool
	lead         float64 // expected, derived below
	entryT       float64
	expectedDesc string
}

func plantedEntries(margin float64) []plantedEntry {
	es := []plantedEntry{
		{name: "entry A", x0: 1.10, x1: 1.95, t0: 2.0, d: 0.8, depth: 0.25},
		// Reaches 1.95 m during the loss (20.0–21.0 s) and reappears
		// inside at 21.0 s: missed, lead 0.
		{name: "unseen entry", x0: 1.10, x1: 1.95, t0: 20.1, d: 0.6, depth: 0.25, missed: true},
		{name: "entry B", x0: 1.10, x1: 1.85, t0: 25.0, d: 0.5, depth: 0.15},
	}
	for i := range es {
		e := &es[i]
		if e.missed {
			e.entryT, e.lead = 21.0, 0
			continue
		}
		// The first request comes when the separation 1.7 − x falls to the
		// margin (approach rule with the hold path), the entry when it
		// falls to 0.
		tr := crossing(e.x0, e.x1, e.t0, e.d, face-margin)
		te := crossing(e.x0, e.x1, e.t0, e.d, face)
		e.entryT, e.lead = te, te-tr
	}
	return es
}

// TestPlantedIncidents reviews a simulated recording of the example cell
// with planted entries, a near miss, a false alarm and two tracking losses
// (fixed seed) and checks that exactly those are found, with the lead
// times derived from the reach timing (closed-form minimum-jerk crossing
// times of the margin and of the face) to within one sample period.
func TestPlantedIncidents(t *testing.T) {
	cfg, model := plantedCell(t)
	margin := float64(cfg.Zones[0].Margin)
	if cfg.Zones[0].Name != envelope || margin != 0.20 {
		t.Fatalf("example cell changed: zones[0] is %q with margin %g", cfg.Zones[0].Name, margin)
	}
	sc := loadScenario(t, "planted.yaml", cfg)
	path := writeRecording(t, sc, 7, cfg, model, false)

	rv, err := New(cfg, model, Options{})
	if err != nil {
		t.Fatal(err)
	}
	replayFile(t, rv, path)
	res := rv.Result()

	want := plantedEntries(margin)
	if res.Totals.Entries != len(want) || len(res.Entries) != len(want) {
		t.Fatalf("entries: got %d (%+v), want %d", res.Totals.Entries, res.Entries, len(want))
	}
	if res.Totals.Missed != 1 {
		t.Errorf("missed entries: got %d, want 1", res.Totals.Missed)
	}
	for i, w := range want {
		g := res.Entries[i]
		if g.Zone != envelope || g.Track != "op1/right" {
			t.Errorf("%s: got zone %q track %q", w.name, g.Zone, g.Track)
		}
		if g.Missed != w.missed {
			t.Errorf("%s: missed = %v, want %v", w.name, g.Missed, w.missed)
		}
		// The entry is seen at the first sample at or after the crossing.
		if g.T < w.entryT-1e-9 || g.T > w.entryT+period+1e-9 {
			t.Errorf("%s: entry at %.4f s, want within one sample after %.4f s", w.name, g.T, w.entryT)
		}
		if g.Lead == nil {
			t.Errorf("%s: no lead", w.name)
		} else if math.Abs(*g.Lead-w.lead) > period+1e-9 {
			t.Errorf("%s: lead %.4f s, want %.4f s ± %.2f s (one sample)", w.name, *g.Lead, w.lead, period)
		}
		// Depth: the reach ends at rest w.depth inside the face (exact
		// samples, no noise).
		if math.Abs(g.Depth-w.depth) > 1e-9 {
			t.Errorf("%s: depth %.6f m, want %.3f m", w.name, g.Depth, w.depth)
		}
		if g.Exit == nil {
			t.Errorf("%s: no exit", w.name)
		}
	}

	// One near miss, 0.06 m short of the face, reached when the reach
	// came to rest at 7.7 s and held until 8.5 s.
	if len(res.NearMisses) != 1 {
		t.Fatalf("near misses: got %+v, want 1", res.NearMisses)
	}
	nm := res.NearMisses[0]
	if nm.Zone != envelope || math.Abs(nm.MinSep-0.06) > 1e-9 || nm.T < 7.7-period || nm.T > 8.5 {
		t.Errorf("near miss: got %+v, want %s 0.06 m between 7.7 and 8.5 s", nm, envelope)
	}

	// Warning episodes: entry A, the near miss, the false alarm, the
	// unseen entry, entry B. The fail-safe hold of the first loss is not
	// one. Exactly one false alarm: the reach that stopped 0.16 m short,
	// with its episode starting when the separation reached the margin.
	if res.Totals.Warnings != 5 {
		t.Errorf("warning episodes: got %d, want 5", res.Totals.Warnings)
	}
	if res.Totals.FalseAlarms != 1 || len(res.FalseAlarms) != 1 {
		t.Fatalf("false alarms: got %+v, want 1", res.FalseAlarms)
	}
	fa := res.FalseAlarms[0]
	faStart := crossing(1.10, 1.54, 10.5, 0.6, face-margin)
	if fa.Zone != envelope || math.Abs(fa.Start-faStart) > period+1e-9 || fa.MinSep == nil || math.Abs(*fa.MinSep-0.16) > 1e-9 {
		t.Errorf("false alarm: got %+v (min sep %v), want start %.3f s, min separation 0.16 m", fa, fa.MinSep, faStart)
	}

	// Tracking losses: silent from the last sample before the planted
	// window to the first one after it.
	if len(res.TrackingLosses) != 2 {
		t.Fatalf("tracking losses: got %+v, want 2", res.TrackingLosses)
	}
	for i, w := range []struct {
		last, back float64
		zone       string
	}{{12.99, 14.0, envelope}, {19.99, 21.0, ""}} {
		g := res.TrackingLosses[i]
		if g.Track != "op1/right" || math.Abs(g.LastSeen-w.last) > 1e-9 || g.Regained == nil ||
			math.Abs(*g.Regained-w.back) > 1e-9 || g.Zone != w.zone {
			t.Errorf("loss %d: got %+v, want last seen %.2f, regained %.2f, zone %q", i, g, w.last, w.back, w.zone)
		}
		// Declared once stale_after (200 ms) had passed, at the next
		// sample of the other hand.
		if g.Declared < w.last+0.2-1e-9 || g.Declared > w.last+0.2+period+1e-9 {
			t.Errorf("loss %d declared at %.3f s, want within one sample after %.3f s", i, g.Declared, w.last+0.2)
		}
	}

	// Time at each level covers the recording.
	sum := 0.0
	for _, l := range res.Levels {
		sum += l.Seconds
	}
	if math.Abs(sum-res.Duration) > 1e-9 || math.Abs(res.Duration-29) > period+1e-9 {
		t.Errorf("time at levels %.6f s, recording %.6f s, want both 29 s", sum, res.Duration)
	}
	if res.Totals.Rejected != 0 || res.Totals.BadLines != 0 {
		t.Errorf("rejections %d, bad lines %d: want none", res.Totals.Rejected, res.Totals.BadLines)
	}
	// Windows for figures: every incident (4 entries and near misses
	// fewer than the default 12), the missed entry first.
	if len(res.Windows) != 4 || res.Windows[0].Kind != "missed entry" {
		t.Errorf("windows: got %d, first %q", len(res.Windows), res.Windows[0].Kind)
	}
}

// TestAsRecorded reviews the planted recording with the advisories the
// engine issued while it was recorded: the same entries, with lead times
// from the recorded advisories equal to the replay's time since the cell's
// advisory left clear, and the same time at each level.
func TestAsRecorded(t *testing.T) {
	cfg, model := plantedCell(t)
	sc := loadScenario(t, "planted.yaml", cfg)
	path := writeRecording(t, sc, 7, cfg, model, true)

	replay, err := New(cfg, model, Options{})
	if err != nil {
		t.Fatal(err)
	}
	replayFile(t, replay, path)
	asRec, err := New(cfg, model, Options{AsRecorded: true})
	if err != nil {
		t.Fatal(err)
	}
	replayFile(t, asRec, path)
	a, b := replay.Result(), asRec.Result()
	if b.Recordings[0].Recorded == 0 {
		t.Fatal("no advisory lines recorded")
	}
	if len(a.Entries) != len(b.Entries) {
		t.Fatalf("entries: replay %d, as recorded %d", len(a.Entries), len(b.Entries))
	}
	for i := range a.Entries {
		ea, eb := a.Entries[i], b.Entries[i]
		if ea.T != eb.T || (ea.CellLead == nil) != (eb.Lead == nil) ||
			(ea.CellLead != nil && math.Abs(*ea.CellLead-*eb.Lead) > 1e-9) || ea.Missed != eb.Missed {
			t.Errorf("entry %d: replay %+v (cell lead %v), as recorded %+v (lead %v)", i, ea, ea.CellLead, eb, eb.Lead)
		}
	}
	if len(a.Levels) != len(b.Levels) {
		t.Fatalf("levels: replay %+v, as recorded %+v", a.Levels, b.Levels)
	}
	for i := range a.Levels {
		if a.Levels[i].Level != b.Levels[i].Level || math.Abs(a.Levels[i].Seconds-b.Levels[i].Seconds) > 1e-9 {
			t.Errorf("level %d: replay %+v, as recorded %+v", i, a.Levels[i], b.Levels[i])
		}
	}
	if b.Totals.FalseAlarms != 1 {
		t.Errorf("as recorded: %d false alarms, want the planted one", b.Totals.FalseAlarms)
	}
}

var (
	_ = bus.Version
	_ = policy.LevelClear
)
