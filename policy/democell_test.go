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
// by hand (ISO/TS 15066:2016 §5.5.4, Sh = v_h·(Tr + Ts), Sr = v_r·Tr, with the
// configured 40 ms input latency added to Tr): v_h = 1.6 m/s, v_r = 1.0 m/s,
// Tr = 0.1 + 0.04 = 0.14 s, Ts = 0.3 s, Ss = 0.20 m, C = 0 m,
// Zd = 0.05 m, Zr = 0.02 m: Sh = 1.6·0.44 = 0.704, Sr = 0.14,
// Sp = 0.704 + 0.14 + 0.20 + 0 + 0.05 + 0.02 = 1.114 m. A hand held at the
// infeed station, about 1.5 m from the tool zones at the home pose, is
// outside Sp; a hand reaching in over the infeed towards the pick position
// (2.0, 3.9, 1.0) is within Sp of the tool gripper (by hand: the gripper
// capsule's axis runs from (3, 3.4, 1.65) up to (3, 3.4, 2.05) with radius
// 0.35 m, so the distance is √(1² + 0.5² + 0.65²) − 0.35 ≈ 0.943 m) and gets
// hold by that rule.
func TestDemoCellSeparation(t *testing.T) {
	cfg, zs := demoCell(t)
	const sp = 1.114
	for _, c := range []struct {
		name  string
		at    r3.Vec
		zones []string // zones the protective-separation rule must name
	}{
		{"infeed station", r3.Vec{X: 1.4, Y: 3.9, Z: 0.95}, nil},
		{"reaching in", r3.Vec{X: 2.0, Y: 3.9, Z: 1.0}, []string{"tool-gripper"}},
	} {
		e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindCV), Options{})
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < 20; i++ {
			e.Sample(forecast.Sample{Track: "op1/right", T: float64(i) * dt, P: c.at})
		}
		a := e.Advisory()
		var named []string
		for _, r := range a.Reasons {
			if r.Rule != RuleSeparation {
				continue
			}
			named = append(named, r.Zone)
			if math.Abs(r.Required-sp) > 1e-9 || !(r.Separation < sp) {
				t.Errorf("%s: reason %+v, want Sp %.3f m and separation below it", c.name, r, sp)
			}
		}
		if len(named) != len(c.zones) || (len(named) > 0 && named[0] != c.zones[0]) {
			t.Errorf("%s: protective-separation reasons for %v, want %v (advisory %+v)", c.name, named, c.zones, a)
		}
		if len(c.zones) > 0 && a.Level != LevelHold {
			t.Errorf("%s: advisory %+v, want hold", c.name, a)
		}
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
