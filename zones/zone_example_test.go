package zones_test

import (
	"fmt"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// Two zones of the demo cell pl3-palletiser (line 3's end-of-line
// palletiser): the conveyor infeed, fixed in the cell, and the gripper,
// which moves with the robot's tool frame. A forecast of a hand reaching
// for the infeed is swept through both.
func ExampleZoneSet_Sweep() {
	conveyor, _ := zones.NewBox(r3.Vec{X: -1.5, Y: 0.2, Z: 0}, r3.Vec{X: 0.4, Y: 0.8, Z: 0.85})
	gripper, _ := zones.NewCapsule(r3.Vec{}, r3.Vec{Z: -0.3}, 0.15)
	set, err := zones.NewZoneSet([]zones.Zone{
		{Name: "infeed-conveyor", Shape: conveyor, Margin: 0.10},
		{Name: "gripper", Shape: gripper, Margin: 0.15, Frame: "tool"},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	// The robot reports its tool above the pallet station.
	set.SetFramePose("tool", zones.Pose{Pos: r3.Vec{X: 2.2, Y: 0.5, Z: 1.6}, Rot: zones.RotationRPY(0, 0, 0)})

	// A hand forecast: 0.4 s, moving at 1.5 m/s towards the conveyor, the
	// uncertainty radius growing from 2 cm to 6 cm.
	path := zones.PathView{T: make([]float64, 21), P: make([]r3.Vec, 21), R: make([]float64, 21)}
	for k := range path.T {
		t := 0.02 * float64(k)
		path.T[k] = 10 + t
		path.P[k] = r3.Vec{X: -0.5, Y: -0.4 + 1.5*t, Z: 1.0}
		path.R[k] = 0.02 + 0.1*t
	}
	out := set.Sweep(path, 0.5, nil)
	for i, r := range out {
		switch {
		case r.Far:
			fmt.Printf("%s: far (more than %.2f m clear)\n", set.Zone(i).Name, r.MinSep)
		case r.Touch:
			fmt.Printf("%s: reached in %.0f ms\n", set.Zone(i).Name, 1000*(r.TouchT-path.T[0]))
		default:
			fmt.Printf("%s: clear by %.3f m\n", set.Zone(i).Name, r.MinSep)
		}
	}
	// Output:
	// infeed-conveyor: reached in 369 ms
	// gripper: far (more than 2.35 m clear)
}

// Constructors say which parameter is wrong, for the cell file's error
// messages.
func ExampleNewPrism() {
	// A bow tie: edge 0 from (0,0) to (1,1) crosses edge 2 from (1,0) to (0,1).
	_, err := zones.NewPrism([]r2.Vec{{X: 0, Y: 0}, {X: 1, Y: 1}, {X: 1, Y: 0}, {X: 0, Y: 1}}, 0, 2)
	fmt.Println(err)
	// An L-shaped footprint, given clockwise, 1.2 m high.
	l, _ := zones.NewPrism([]r2.Vec{{X: 0, Y: 0}, {X: 0, Y: 1}, {X: 1, Y: 1}, {X: 1, Y: 2}, {X: 2, Y: 2}, {X: 2, Y: 0}}, 0, 1.2)
	fmt.Printf("volume %.2f m³, convex %v\n", l.Volume(), l.Convex())
	fmt.Printf("signed distance from the notch: %.2f m\n", l.SignedDistance(r3.Vec{X: 0.5, Y: 1.5, Z: 0.6}))
	fmt.Printf("inflated by 0.1 m: %.4f m³\n", zones.Inflate(l, 0.1).Volume())
	// Output:
	// footprint: edges 0 and 2 cross: footprint is not a simple polygon
	// volume 3.60 m³, convex false
	// signed distance from the notch: 0.50 m
	// inflated by 0.1 m: 5.3247 m³
}
