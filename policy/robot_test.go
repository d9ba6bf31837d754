package policy

import (
	"math"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// robotCell is a cell with one zone attached to the robot's tool frame: a
// sphere of radius 0.3 m around the frame origin, no margin; the tool starts
// at (2, 0, 1). Its stopping data are those of the first ISO/TS 15066 case
// of the safety tests.
func robotCell(t testing.TB) (*zones.Config, *zones.ZoneSet) {
	t.Helper()
	cfg := cellConfig()
	cfg.Robot = zones.RobotConfig{
		Name:                     "pl3-palletiser-robot",
		Frames:                   []zones.FrameConfig{{Name: "tool", Pos: zones.Point{2, 0, 1}}, {Name: "base"}},
		StoppingTime:             zones.Duration(300e6), // Ts = 0.3 s
		StoppingDistance:         0.15,                  // Ss
		ReactionTime:             zones.Duration(100e6), // Tr = 0.1 s
		Speed:                    1.0,                   // v_r
		Intrusion:                0.1,                   // C
		PositionUncertaintyHuman: 0.05,                  // Zd
		PositionUncertaintyRobot: 0.02,                  // Zr
	}
	sph, err := zones.NewSphere(r3.Vec{}, 0.3)
	if err != nil {
		t.Fatal(err)
	}
	zs, err := zones.NewZoneSet([]zones.Zone{{Name: "tool-gripper", Shape: sph, Frame: "tool",
		Pose: zones.Pose{Pos: r3.Vec{X: 2, Z: 1}}}})
	if err != nil {
		t.Fatal(err)
	}
	return cfg, zs
}

// TestProtectiveSeparationRule: a hand at rest near a robot-attached zone
// gets hold (rule protective-separation) exactly when its separation is
// below Sp. Sp by hand, ISO/TS 15066:2016 §5.5.4 with Sh = v_h·(Tr + Ts),
// Sr = v_r·Tr, v_h = 1.6 m/s (ISO 13855):
//
//	configured v_r = 1.0 m/s, Tr = 0.1 s, Ts = 0.3 s, Ss = 0.15 m, C = 0.1 m,
//	Zd = 0.05 m, Zr = 0.02 m: Sp = 0.64 + 0.1 + 0.15 + 0.1 + 0.05 + 0.02 = 1.06 m;
//	live v_r = 2.0 m/s: Sr = 0.2, Sp = 1.16 m;
//	then 50 ms latency on the track: Tr = 0.15 s, Sh = 1.6·0.45 = 0.72,
//	Sr = 2.0·0.15 = 0.3, Sp = 0.72 + 0.3 + 0.15 + 0.17 = 1.34 m.
func TestProtectiveSeparationRule(t *testing.T) {
	cfg, zs := robotCell(t)
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindHold), Options{})
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-9
	// Hand on the x axis: separation = 2 − 0.3 − x.
	hand := r3.Vec{X: 2 - 0.3 - 1.10, Z: 1} // 1.10 m from the sphere
	tt := 0.0
	feed := func(n int) {
		for i := 0; i < n; i++ {
			tt += dt
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: hand})
		}
	}
	feed(10)
	if a := e.Advisory(); a.Level != LevelClear {
		t.Fatalf("at 1.10 m (Sp 1.06 m): %v, want clear", a.Level)
	}
	// The robot moves 0.08 m towards the hand: separation 1.02 m < 1.06 m.
	if err := e.Robot(RobotState{T: tt, Frames: []FramePose{{Frame: "tool", Pose: zones.Pose{Pos: r3.Vec{X: 1.92, Z: 1}}}}}); err != nil {
		t.Fatal(err)
	}
	a := e.Advisory()
	if a.Level != LevelHold || len(a.Reasons) != 1 {
		t.Fatalf("at 1.02 m: %+v, want hold", a)
	}
	r := a.Reasons[0]
	if r.Rule != RuleSeparation || r.Zone != "tool-gripper" || math.Abs(r.Required-1.06) > tol || math.Abs(r.Separation-1.02) > 1e-6 {
		t.Errorf("reason %+v, want protective-separation, Sp 1.06 m, separation 1.02 m", r)
	}

	// Back to 1.10 m, but the robot reports 2 m/s towards the operator:
	// Sp = 1.16 m, still hold.
	if err := e.Robot(RobotState{T: tt, HasSpeed: true, Speed: 2.0,
		Frames: []FramePose{{Frame: "tool", Pose: zones.Pose{Pos: r3.Vec{X: 2, Z: 1}}}}}); err != nil {
		t.Fatal(err)
	}
	feed(1)
	if r := e.Advisory().Reasons; len(r) != 1 || r[0].Rule != RuleSeparation || math.Abs(r[0].Required-1.16) > tol {
		t.Errorf("v_r 2 m/s: reasons %+v, want Sp 1.16 m", r)
	}
	// 50 ms input latency on the track adds to Tr: Sp = 1.34 m.
	if err := e.SetLatency("op1/right", 0.05); err != nil {
		t.Fatal(err)
	}
	feed(1)
	if r := e.Advisory().Reasons; len(r) != 1 || math.Abs(r[0].Required-1.34) > tol {
		t.Errorf("latency 50 ms: reasons %+v, want Sp 1.34 m", r)
	}
	// Moving away from the robot at speed 0 (robot at rest, Sr = 0, Ss = 0.15
	// m given): Sp = 0.72 + 0 + 0.15 + 0.17 = 1.04 m < 1.10 m → no request.
	if err := e.Robot(RobotState{T: tt, HasSpeed: true, Speed: -0.5}); err != nil {
		t.Fatal(err)
	}
	feed(1)
	// The advisory stays hold for the release time (Held), but the request
	// is gone.
	if a := e.Advisory(); a.Level != LevelHold || !a.Held {
		t.Errorf("robot moving away: advisory %+v, want hold kept by the release time", a)
	}
	st := e.State(nil)
	if len(st) != 1 || st[0].Rule != "" || st[0].Level != LevelClear || math.Abs(st[0].Required-1.04) > tol {
		t.Errorf("state %+v, want no request and Sp 1.04 m", st)
	}
}

func TestRobotZoneMovesOntoHand(t *testing.T) {
	cfg, zs := robotCell(t)
	cfg.Robot.Speed = 0 // no stopping data used: only the zone rules
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindHold), Options{})
	if err != nil {
		t.Fatal(err)
	}
	hand := r3.Vec{X: 1.0, Z: 1}
	e.Sample(forecast.Sample{Track: "op1/left", T: 0, P: hand})
	var evs []Event
	for i := 1; i <= 100; i++ {
		tt := float64(i) * dt
		x := 2 - 0.01*float64(i) // the tool comes towards the hand at 1 m/s
		if err := e.Robot(RobotState{T: tt, Frames: []FramePose{{Frame: "tool", Pose: zones.Pose{Pos: r3.Vec{X: x, Z: 1}}}}}); err != nil {
			t.Fatal(err)
		}
		if i%10 == 0 { // the hand is still seen every 100 ms
			e.Sample(forecast.Sample{Track: "op1/left", T: tt, P: hand})
		}
		evs = e.Events(evs)
	}
	en := ofKind(evs, EventEntry)
	// The sphere surface reaches x = 1.0 when x_tool − 0.3 = 1.0: at i = 70.
	if len(en) != 1 || math.Abs(en[0].T-0.70) > 1e-9 {
		t.Fatalf("entries %+v, want one at 0.70 s", en)
	}
	if e.Advisory().Level != LevelHold {
		t.Errorf("advisory %v, want hold", e.Advisory().Level)
	}
	if n := len(ofKind(evs, EventTrackingLost)); n != 0 {
		t.Errorf("%d tracking-lost events", n)
	}
}

func TestRobotStateRejected(t *testing.T) {
	cfg, zs := robotCell(t)
	e, err := NewEngine(cfg, zs, forecastModel(t, forecast.KindHold), Options{})
	if err != nil {
		t.Fatal(err)
	}
	good := zones.Pose{Pos: r3.Vec{X: 2, Z: 1}}
	if err := e.Robot(RobotState{T: 1, Frames: []FramePose{{Frame: "base", Pose: good}}}); err != nil {
		t.Errorf("a configured frame without zones: %v", err)
	}
	bad := []RobotState{
		{T: math.NaN()},
		{T: 0.5}, // earlier than 1
		{T: 2, Frames: []FramePose{{Frame: "elbow", Pose: good}}},
		{T: 2, Frames: []FramePose{{Frame: "tool", Pose: zones.Pose{Pos: r3.Vec{X: math.Inf(1)}}}}},
		{T: 2, HasSpeed: true, Speed: math.NaN()},
		{T: 2, HasStopping: true, StoppingTime: -1},
	}
	for i, st := range bad {
		if err := e.Robot(st); err == nil {
			t.Errorf("bad state %d accepted", i)
		}
	}
	s := e.Stats()
	if s.Rejected[RejectRobotState] != uint64(len(bad)) || s.RobotStates != 1 {
		t.Errorf("stats %+v", s)
	}
}
