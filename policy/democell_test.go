package policy

import (
	"math"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

func demoCell(t *testing.T) (*zones.Config, *zones.ZoneSet) {
	t.Helper()
	cfg, err := zones.Load("../testdata/pl3-palletiser.yaml")
	if err != nil {
		t.Fatal(err)
	}
	zs, err := cfg.BuildZones()
	if err != nil {
		t.Fatal(err)
	}
	return cfg, zs
}

// TestDemoCellSeparation: in the demo cell the robot's stopping data give,
// by hand (ISO/TS 15066:2016 §5.5.4, Sh = vh·(Tr + Ts), Sr = vr·Tr, with the
// configured 40 ms input latency added to Tr): vh = 1.6 m/s, vr = 2.0 m/s,
// Tr = 0.1 + 0.04 = 0.14 s, Ts = 0.6 s, Ss = 0.55 m, C = 0.208 m,
// Zd = 0.05 m, Zr = 0.02 m: Sh = 1.6·0.74 = 1.184, Sr = 0.28,
// Sp = 1.184 + 0.28 + 0.55 + 0.208 + 0.05 + 0.02 = 2.292 m. A hand at the
// infeed station, about 1.5 m from the tool zones at the home pose, gets
// hold by that rule.
func TestDemoCellSeparation(t *testing.T) {
	cfg, zs := demoCell(t)
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindCV), Options{})
	if err != nil {
		t.Fatal(err)
	}
	at := r3.Vec{X: 1.4, Y: 3.9, Z: 0.95} // station "infeed"
	for i := 0; i < 20; i++ {
		e.Sample(forecast.Sample{Track: "op1/right", T: float64(i) * dt, P: at})
	}
	a := e.Advisory()
	if a.Level != LevelHold {
		t.Fatalf("advisory %+v, want hold", a)
	}
	n := 0
	for _, r := range a.Reasons {
		if r.Rule != RuleSeparation {
			continue
		}
		n++
		if (r.Zone != "tool-gripper" && r.Zone != "tool-wrist") || math.Abs(r.Required-2.292) > 1e-9 || !(r.Separation < 2.292) {
			t.Errorf("reason %+v, want a tool zone with Sp 2.292 m", r)
		}
	}
	if n != 2 {
		t.Errorf("%d protective-separation reasons, want 2 (both tool zones): %+v", n, a.Reasons)
	}
}

// TestDemoCellReach: in the demo cell with the robot at rest (no speed, so
// no protective-separation rule), a minimum-jerk reach from the infeed
// station into the infeed pick position crosses the robot envelope and
// enters the pick zone. Both entries are warned (reduce or hold) before
// they happen, with the constant-velocity forecaster.
func TestDemoCellReach(t *testing.T) {
	cfg, zs := demoCell(t)
	cfg.Robot.Speed = 0
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindCV), Options{})
	if err != nil {
		t.Fatal(err)
	}
	reach := minJerk{a: r3.Vec{X: 1.2, Y: 3.9, Z: 0.95}, b: r3.Vec{X: 2.2, Y: 3.9, Z: 0.95}, t0: 0.5, d: 0.9}
	evs := run(e, "op1/right", reach.at, 0, 2, dt)
	en := ofKind(evs, EventEntry)
	zonesEntered := map[string]Event{}
	for _, ev := range en {
		zonesEntered[ev.Zone] = ev
	}
	for _, z := range []string{"robot-envelope", "infeed-pick"} {
		ev, ok := zonesEntered[z]
		if !ok {
			t.Errorf("no entry into %s: %+v", z, en)
			continue
		}
		if ev.Missed || ev.Lead < 0.2 {
			t.Errorf("%s: lead %v s (missed %v), want >= 0.2 s", z, ev.Lead, ev.Missed)
		}
		t.Logf("%s: entry at %.2f s, lead %.3f s", z, ev.T, ev.Lead)
	}
	if lv := levels(evs); len(lv) == 0 || lv[len(lv)-1] != LevelHold {
		t.Errorf("levels %v, want ending in hold", lv)
	}
}
