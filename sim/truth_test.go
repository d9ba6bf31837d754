package sim

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// The planted incidents of testdata/scenarios/planted-incidents.yaml, as
// documented in the file, against the example cell's zones. Expected times
// come from the minimum-jerk profile s(τ) = 10τ³ − 15τ⁴ + 6τ⁵ (Flash &
// Hogan, 1985), solved here independently of the simulator's code.
func TestTruthPlantedIncidents(t *testing.T) {
	sc := loadFile(t, "planted-incidents.yaml")
	set, err := exampleCell(t).BuildZones()
	if err != nil {
		t.Fatal(err)
	}
	zs := FixedZones(set)
	if len(zs) != 7 {
		t.Fatalf("%d fixed zones in the example cell, want 7 (two are attached to the tool)", len(zs))
	}
	r := sc.Run(1)
	tr := r.Truth(zs, 0.15)

	// τ* with s(τ*) = 1/3: the right hand crosses x = 1.7 on its way from
	// 1.3 to 2.5.
	s := func(u float64) float64 { return u * u * u * (10 - 15*u + 6*u*u) }
	lo, hi := 0.0, 1.0
	for range 100 {
		m := (lo + hi) / 2
		if s(m) < 1.0/3 {
			lo = m
		} else {
			hi = m
		}
	}
	tau := (lo + hi) / 2

	const tol = 1e-7 // bisection to 1e-9 s on a 1 ms grid; allow rounding
	want := []Entry{
		{Track: "op1/right", Zone: "robot-envelope", Enter: 1 + tau, Exit: 3.5 - tau},
		{Track: "op1/right", Zone: "infeed-pick", Enter: 1.5, Exit: 3.0},
	}
	if len(tr.Entries) != len(want) {
		t.Fatalf("entries %+v, want %+v", tr.Entries, want)
	}
	for i, w := range want {
		g := tr.Entries[i]
		if g.Track != w.Track || g.Zone != w.Zone || math.Abs(g.Enter-w.Enter) > tol || math.Abs(g.Exit-w.Exit) > tol || g.Open {
			t.Errorf("entry %d: %+v, want %+v", i, g, w)
		}
	}
	// infeed-pick: the hand stops at (2.5, 3.95, 1.0); its depth is the
	// distance to the nearest face of the box [1.9, 3.1]×[3.5, 4.3]×[0, 1.3]:
	// min(0.6, 0.6, 0.45, 0.35, 1.0, 0.3) = 0.3 (the top).
	if d := tr.Entries[1].Depth; math.Abs(d-0.3) > 1e-9 {
		t.Errorf("infeed-pick depth %g, want 0.3", d)
	}

	wantNear := []NearPass{
		{Track: "op1/left", Zone: "robot-envelope", T: 4.8, Dist: 0.10},
		{Track: "op1/right", Zone: "robot-envelope", T: 7.6, Dist: 0.05},
	}
	if len(tr.NearPasses) != len(wantNear) {
		t.Fatalf("near passes %+v, want %+v", tr.NearPasses, wantNear)
	}
	for i, w := range wantNear {
		g := tr.NearPasses[i]
		if g.Track != w.Track || g.Zone != w.Zone || math.Abs(g.T-w.T) > 1e-4 || math.Abs(g.Dist-w.Dist) > 1e-12 {
			t.Errorf("near pass %d: %+v, want %+v", i, g, w)
		}
		if !(g.Start < g.T && g.T < g.End) {
			t.Errorf("near pass %d: closest approach %g outside [%g, %g]", i, g.T, g.Start, g.End)
		}
	}
	// Closest approaches: infeed-pick and robot-envelope are entered
	// (negative distances). The right hand at (2.5, 3.95, 1.0) is 0.8 m
	// inside the envelope's west face x = 1.7, 0.65 m from its north face
	// y = 4.6 and 2 m below its top: depth 0.65. The other zones stay
	// farther than the near distance (no near pass was reported).
	for _, c := range tr.Closest {
		switch c.Zone {
		case "robot-envelope":
			if c.Track != "op1/right" || math.Abs(c.Dist+0.65) > 1e-9 {
				t.Errorf("closest approach to robot-envelope %+v, want op1/right at -0.65 m", c)
			}
		case "infeed-pick":
			if c.Track != "op1/right" || math.Abs(c.Dist+0.3) > 1e-9 {
				t.Errorf("closest approach to infeed-pick %+v, want op1/right at -0.3 m", c)
			}
		default:
			if c.Dist < 0.15 {
				t.Errorf("closest approach to %s %+v: closer than the near distance, yet no near pass", c.Zone, c)
			}
		}
	}
	if ls := r.Losses(); len(ls) != 1 || ls[0] != (LossWindow{"op1/right", 6, 6.5}) {
		t.Errorf("losses %+v, want op1/right over [6, 6.5)", ls)
	}
}

// Truth does not disturb the stream: the measurements are the same
// whether or not it was asked first.
func TestTruthLeavesStream(t *testing.T) {
	sc := loadFile(t, "demo.yaml")
	set, err := exampleCell(t).BuildZones()
	if err != nil {
		t.Fatal(err)
	}
	a, b := sc.Run(4), sc.Run(4)
	tr := a.Truth(FixedZones(set), 0.1)
	if len(tr.Entries) == 0 {
		t.Error("the demo has no zone entry")
	}
	for {
		m1, ok1 := a.Next()
		m2, ok2 := b.Next()
		if ok1 != ok2 || m1 != m2 {
			t.Fatalf("streams differ: %+v / %+v", m1, m2)
		}
		if !ok1 {
			break
		}
	}
}

// A hand resting on a zone's surface, trembling across it, counts as one
// entry; one resting at the near distance as one near pass.
func TestTruthHysteresis(t *testing.T) {
	sc := load(t, `
duration: 6s
tremor: {rms: 0.0002}
operators:
  - name: op1
    at: [0, 0]
    heading: 0
    hands:
      - {name: a, rest: [0.5, 0, 1.0]}
      - {name: b, rest: [0.5, 2, 1.0]}
    timeline:
      - reach: {hand: a, to: [1.0, 0, 1.0], duration: 1s}   # onto the face x = 1
      - parallel: true
        reach: {hand: b, to: [0.9, 2, 1.0], duration: 1s}   # 0.1 m from it
`)
	box, err := zones.NewBox(r3.Vec{X: 1, Y: -1, Z: 0}, r3.Vec{X: 2, Y: 3, Z: 2})
	if err != nil {
		t.Fatal(err)
	}
	r := sc.Run(2)
	// The tremor does take hand a across the face many times.
	crossings, prev := 0, false
	for k := 1000; k <= 6000; k++ {
		p, _ := r.Position("op1/a", float64(k)/1000)
		if in := p.X >= 1; in != prev {
			crossings++
			prev = in
		}
	}
	if crossings < 10 {
		t.Fatalf("only %d crossings of the face by the trembling hand: the test does not test", crossings)
	}
	tr := r.Truth([]Zone{{Name: "box", Volume: box}}, 0.1)
	if len(tr.Entries) != 1 || tr.Entries[0].Track != "op1/a" {
		t.Errorf("entries %+v, want one of op1/a", tr.Entries)
	}
	if len(tr.NearPasses) != 1 || tr.NearPasses[0].Track != "op1/b" {
		t.Errorf("near passes %+v, want one of op1/b", tr.NearPasses)
	}
}
