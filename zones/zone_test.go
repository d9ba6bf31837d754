package zones

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/num/quat"
	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
)

// demoCell returns the zones of the invented demo cell pl3-palletiser: the
// end-of-line palletising cell of line 3 of a fictional biscuit packaging
// line (conveyor infeed, pallet station, a robot on a pedestal) next to a
// parts-kitting bench. Invented data, for demos and benchmarks only.
func demoCell() []Zone {
	tool := Pose{Pos: r3.Vec{X: 1.6, Y: 1.1, Z: 1.3}, Rot: RotationRPY(0, 90, 30)}
	link3 := Pose{Pos: r3.Vec{X: 1.2, Y: 0.8, Z: 1.5}, Rot: RotationRPY(0, 20, 35)}
	link2 := Pose{Pos: r3.Vec{X: 1.0, Y: 0.6, Z: 0.9}, Rot: RotationRPY(0, -60, 35)}
	return []Zone{
		{Name: "infeed-conveyor", Shape: must(NewBox(r3.Vec{X: -1.5, Y: 0.2, Z: 0}, r3.Vec{X: 0.4, Y: 0.8, Z: 0.85})), Margin: 0.10},
		{Name: "pallet-station", Shape: must(NewPrism([]r2.Vec{{X: 1.8, Y: -0.2}, {X: 3.1, Y: -0.2}, {X: 3.1, Y: 1.0}, {X: 2.4, Y: 1.3}, {X: 1.8, Y: 1.0}}, 0, 1.9)), Margin: 0.15},
		{Name: "robot-reach", Shape: must(NewPrism([]r2.Vec{{X: 0.5, Y: -0.5}, {X: 2.0, Y: -0.5}, {X: 2.0, Y: 2.2}, {X: 1.2, Y: 2.2}, {X: 1.2, Y: 1.2}, {X: 0.5, Y: 1.2}}, 0, 2.4)), Margin: 0.05},
		{Name: "robot-pedestal", Shape: must(NewCylinder(r3.Vec{X: 1.0, Y: 0.6, Z: 0}, r3.Vec{X: 1.0, Y: 0.6, Z: 0.9}, 0.3)), Margin: 0.05},
		{Name: "arm-upper", Shape: must(NewCapsule(r3.Vec{}, r3.Vec{X: 0.7}, 0.12)), Margin: 0.10, Frame: "link2", Pose: link2},
		{Name: "arm-fore", Shape: must(NewCapsule(r3.Vec{}, r3.Vec{X: 0.6}, 0.10)), Margin: 0.10, Frame: "link3", Pose: link3},
		{Name: "gripper", Shape: must(NewOBox(r3.Vec{Z: 0.15}, r3.Vec{X: 0.35, Y: 0.25, Z: 0.3}, RotationRPY(0, 0, 0))), Margin: 0.15, Frame: "tool", Pose: tool},
		{Name: "slip-sheet-magazine", Shape: must(NewBox(r3.Vec{X: 2.3, Y: 1.6, Z: 0}, r3.Vec{X: 3.1, Y: 2.4, Z: 1.2})), Margin: 0.05},
		{Name: "stretch-wrapper", Shape: must(NewCylinder(r3.Vec{X: 4.5, Y: 0.4, Z: 0}, r3.Vec{X: 4.5, Y: 0.4, Z: 2.2}, 1.0)), Margin: 0.10},
		{Name: "kitting-press", Shape: must(NewSphere(r3.Vec{X: -2.2, Y: -1.6, Z: 1.0}, 0.2)), Margin: 0.05},
	}
}

// demoPath is a 25-point forecast (20 ms steps, 0.48 s) of a right hand
// reaching from the kitting bench towards the conveyor, uncertainty radius
// growing from 15 mm to 63 mm.
func demoPath() PathView {
	const n = 25
	p := PathView{T: make([]float64, n), P: make([]r3.Vec, n), R: make([]float64, n)}
	start, v := r3.Vec{X: -0.6, Y: -0.5, Z: 1.1}, r3.Vec{X: 1.2, Y: 1.9, Z: -0.5}
	for k := 0; k < n; k++ {
		tt := 0.02 * float64(k)
		p.T[k] = 100 + tt
		p.P[k] = r3.Add(start, r3.Scale(tt, v))
		p.R[k] = 0.015 + 0.1*tt
	}
	return p
}

func TestNewZoneSetErrors(t *testing.T) {
	sph := must(NewSphere(r3.Vec{}, 1))
	cases := []struct {
		name string
		zs   []Zone
		want string
	}{
		{"empty name", []Zone{{Shape: sph}}, `zones[0]: name: empty`},
		{"nil shape", []Zone{{Name: "a", Shape: sph}, {Name: "b"}}, `zones[1] "b": shape: missing`},
		{"negative margin", []Zone{{Name: "a", Shape: sph, Margin: -0.1}}, `zones[0] "a": margin: must be >= 0, got -0.1`},
		{"NaN margin", []Zone{{Name: "a", Shape: sph, Margin: math.NaN()}}, `zones[0] "a": margin: NaN/Inf`},
		{"duplicate", []Zone{{Name: "a", Shape: sph}, {Name: "b", Shape: sph}, {Name: "a", Shape: sph}}, `zones[2] "a": name: duplicate name (also zones[0])`},
		{"bad pose", []Zone{{Name: "a", Shape: sph, Frame: "tool", Pose: Pose{Pos: r3.Vec{Y: math.Inf(1)}}}}, `zones[0] "a": pose: pos: NaN/Inf`},
	}
	for _, c := range cases {
		_, err := NewZoneSet(c.zs)
		var ze *ZoneError
		if !errors.As(err, &ze) || err.Error() != c.want {
			t.Errorf("%s: error %v, want %q", c.name, err, c.want)
		}
	}
}

func TestZoneSetBasics(t *testing.T) {
	zs, err := NewZoneSet(demoCell())
	if err != nil {
		t.Fatal(err)
	}
	if zs.Len() != 10 || zs.Index("gripper") != 6 || zs.Index("nope") != -1 || zs.Zone(6).Name != "gripper" {
		t.Fatalf("Len %d, Index(gripper) %d, Index(nope) %d", zs.Len(), zs.Index("gripper"), zs.Index("nope"))
	}
	if f := zs.Frames(); strings.Join(f, ",") != "link2,link3,tool" {
		t.Errorf("Frames() = %v", f)
	}
	// The set copies its input.
	in := demoCell()
	zs2 := must(NewZoneSet(in))
	in[0].Margin = 9
	if zs2.Zone(0).Margin == 9 {
		t.Error("NewZoneSet does not copy the zones")
	}
	if n := zs.SetFramePose("tool", Pose{Pos: r3.Vec{X: 5}}); n != 1 {
		t.Errorf("SetFramePose(tool) = %d, want 1", n)
	}
	if n := zs.SetFramePose("base", Pose{}); n != 0 {
		t.Errorf("SetFramePose(unknown) = %d, want 0", n)
	}
	before := zs.Zone(6).Pose
	if n := zs.SetFramePose("tool", Pose{Pos: r3.Vec{X: math.NaN()}}); n != -1 || zs.Zone(6).Pose != before {
		t.Errorf("SetFramePose(NaN) = %d, pose now %v", n, zs.Zone(6).Pose)
	}
}

// Attached zones against shapes built directly in the cell frame, with the
// pose applied by gonum's quaternion rotation (r3.Rotation.Rotate).
func TestAttachedZones(t *testing.T) {
	local := must(NewOBox(r3.Vec{X: 0.1, Z: 0.15}, r3.Vec{X: 0.35, Y: 0.25, Z: 0.3}, RotationRPY(0, 0, 20)))
	capL := must(NewCapsule(r3.Vec{X: -0.1}, r3.Vec{X: 0.6, Y: 0.1}, 0.1))
	zs := must(NewZoneSet([]Zone{
		{Name: "gripper", Shape: local, Frame: "tool"},
		{Name: "fore", Shape: capL, Frame: "tool", Margin: 0.1},
		{Name: "fixed", Shape: capL, Margin: 0.1},
	}))
	rng := rand.New(rand.NewPCG(41, 42))
	var out []float64
	for i := 0; i < 200; i++ {
		pose := Pose{Pos: randIn(rng, AABB{Max: r3.Vec{X: 2, Y: 2, Z: 2}}, 0), Rot: RotationRPY(360*rng.Float64(), 180*rng.Float64()-90, 360*rng.Float64())}
		if n := zs.SetFramePose("tool", pose); n != 2 {
			t.Fatalf("SetFramePose moved %d zones, want 2", n)
		}
		// The same solids placed in the cell: obox centre Rot·c + Pos,
		// rotation Rot·R_local; capsule end points Rot·a + Pos.
		wbox := must(NewOBox(r3.Add(pose.Rot.Rotate(local.Center()), pose.Pos), local.Size(), quatMul(pose.Rot, local.Rot())))
		wcap := must(NewCapsule(r3.Add(pose.Rot.Rotate(capL.A()), pose.Pos), r3.Add(pose.Rot.Rotate(capL.B()), pose.Pos), capL.Radius()))
		for j := 0; j < 20; j++ {
			p := randIn(rng, wbox.Bounds(), 0.5)
			out = zs.SignedDistances(p, out)
			if len(out) != 3 || !near(out[0], wbox.SignedDistance(p), 1e-12) || !near(out[1], wcap.SignedDistance(p), 1e-12) ||
				out[2] != capL.SignedDistance(p) {
				t.Fatalf("SignedDistances(%v) = %v, want %v %v %v", p, out, wbox.SignedDistance(p), wcap.SignedDistance(p), capL.SignedDistance(p))
			}
			if zs.Zone(1).Contains(p) != (wcap.SignedDistance(p) <= 0.1) {
				t.Fatalf("Contains disagrees with the margin at %v", p)
			}
		}
		// Bounds of an attached zone enclose the placed shape's bounds.
		wb, zb := wcap.Bounds(), zs.Zone(1).Bounds()
		if !zb.Grow(1e-12).Contains(wb.Min) || !zb.Grow(1e-12).Contains(wb.Max) {
			t.Fatalf("attached bounds %v do not enclose %v", zb, wb)
		}
		// The path query on the attached zone agrees with the query on the
		// zone built in the cell frame.
		path := randomPath(rng, wcap.Bounds(), 8)
		a := zs.Zone(1).Sweep(path, math.Inf(1))
		b := (&Zone{Name: "w", Shape: wcap, Margin: 0.1}).Sweep(path, math.Inf(1))
		if a.Touch != b.Touch || math.Abs(a.MinSep-b.MinSep) > SweepTol || (a.Touch && math.Abs(a.TouchT-b.TouchT) > 1e-3) {
			t.Fatalf("attached %+v vs placed %+v", a, b)
		}
	}
}

// quatMul composes rotations with gonum's quaternion product (b first).
func quatMul(a, b r3.Rotation) r3.Rotation {
	return r3.Rotation(quat.Mul(quat.Number(a), quat.Number(b)))
}

func TestZoneSetSweep(t *testing.T) {
	zs := must(NewZoneSet(demoCell()))
	path := demoPath()
	out := zs.Sweep(path, 0.5, nil)
	if len(out) != zs.Len() {
		t.Fatalf("len(out) = %d", len(out))
	}
	far, touch := 0, 0
	for i := range out {
		z := zs.Zone(i)
		if want := z.Sweep(path, 0.5); out[i] != want {
			t.Errorf("%s: set result %+v, zone result %+v", z.Name, out[i], want)
		}
		checkDense(t, z.Name, z, path, out[i], 2000)
		if out[i].Far {
			far++
		}
		if out[i].Touch {
			touch++
		}
	}
	// The demo mixes near and far zones.
	if far < 3 || far > 8 || touch < 1 {
		t.Errorf("demo cell: %d far, %d touching zones", far, touch)
	}
	// SweepSelected leaves the skipped zones' results as they were and
	// gives the others exactly as Sweep does.
	skip := make([]bool, zs.Len())
	sel := make([]SweepResult, zs.Len())
	marker := SweepResult{MinSep: -123, TouchT: 7}
	for i := range sel {
		skip[i] = i%3 == 1
		sel[i] = marker
	}
	sel = zs.SweepSelected(path, 0.5, sel, skip)
	for i := range sel {
		if skip[i] && sel[i] != marker || !skip[i] && sel[i] != out[i] {
			t.Errorf("%s (skip %v): selected result %+v, full %+v", zs.Zone(i).Name, skip[i], sel[i], out[i])
		}
	}
	allocs := testing.AllocsPerRun(100, func() { out = zs.Sweep(path, 0.5, out) })
	if allocs != 0 {
		t.Errorf("ZoneSet.Sweep allocates %v times per call", allocs)
	}
	z := zs.Zone(zs.Index("robot-reach"))
	if allocs := testing.AllocsPerRun(100, func() { z.Sweep(path, math.Inf(1)) }); allocs != 0 {
		t.Errorf("Zone.Sweep allocates %v times per call", allocs)
	}
	var d []float64
	d = zs.SignedDistances(path.P[0], d)
	if allocs := testing.AllocsPerRun(100, func() { d = zs.SignedDistances(path.P[3], d) }); allocs != 0 {
		t.Errorf("SignedDistances allocates %v times per call", allocs)
	}
}
