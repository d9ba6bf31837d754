package sim

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// load parses a scenario held in a string, failing the test on error.
func load(t testing.TB, src string) *Scenario {
	t.Helper()
	sc, err := Load(strings.NewReader(src), "test.yaml", nil)
	if err != nil {
		t.Fatalf("load: %v", err)
	}
	return sc
}

// Minimum-jerk reference values (Flash & Hogan, 1985, J. Neurosci. 5(7),
// 1688–1703): for a point-to-point movement of distance D in time T the
// speed profile is bell-shaped with its peak 1.875·D/T at mid-movement, and
// velocity and acceleration are zero at both ends.
func TestMinJerkFlashHogan(t *testing.T) {
	const tol = 1e-9
	cases := []MinJerk{
		{From: r3.Vec{X: 0.2, Y: 0.1, Z: 0.9}, To: r3.Vec{X: 0.8, Y: -0.3, Z: 1.2}, Start: 1.5, Duration: 0.6},
		{From: r3.Vec{X: 1.4, Y: 3.9, Z: 0.95}, To: r3.Vec{X: 2.3, Y: 3.9, Z: 1.05}, Start: 2.8375, Duration: 0.35},
		{From: r3.Vec{}, To: r3.Vec{X: 0.05}, Start: 0, Duration: 2},
	}
	for _, m := range cases {
		D := r3.Norm(r3.Sub(m.To, m.From))
		T := m.Duration
		mid := m.Start + T/2
		if got, want := r3.Norm(m.Velocity(mid)), 1.875*D/T; math.Abs(got-want) > tol {
			t.Errorf("%+v: peak speed %.15g, want 1.875·D/T = %.15g (Flash & Hogan, 1985)", m, got, want)
		}
		// The peak is the maximum: no speed on a fine grid exceeds it.
		for k := 0; k <= 1000; k++ {
			tt := m.Start + T*float64(k)/1000
			if v := r3.Norm(m.Velocity(tt)); v > 1.875*D/T+tol {
				t.Errorf("%+v: speed %.15g at t=%g exceeds the mid-movement peak", m, v, tt)
			}
		}
		// The peak from the positions alone (central difference, error
		// O(h²) ≈ 1e-8 relative for h = 1e-5 s): independent of the
		// analytic derivative.
		const h = 1e-5
		fd := r3.Norm(r3.Sub(m.Position(mid+h), m.Position(mid-h))) / (2 * h)
		if want := 1.875 * D / T; math.Abs(fd-want) > 1e-6*want+1e-9 {
			t.Errorf("%+v: finite-difference peak speed %.12g, want %.12g", m, fd, want)
		}
		for _, end := range []float64{m.Start, m.Start + T} {
			if v := r3.Norm(m.Velocity(end)); v > tol {
				t.Errorf("%+v: speed %g at t=%g, want 0", m, v, end)
			}
			if a := r3.Norm(m.Acceleration(end)); a > tol {
				t.Errorf("%+v: acceleration %g at t=%g, want 0", m, a, end)
			}
		}
		if d := r3.Norm(r3.Sub(m.Position(m.Start), m.From)); d > tol {
			t.Errorf("%+v: starts %g m from From", m, d)
		}
		if d := r3.Norm(r3.Sub(m.Position(m.Start+T), m.To)); d > tol {
			t.Errorf("%+v: ends %g m from To", m, d)
		}
		// Half-way in time is half-way in space (the profile is symmetric).
		if d := r3.Norm(r3.Sub(m.Position(mid), r3.Scale(0.5, r3.Add(m.From, m.To)))); d > tol {
			t.Errorf("%+v: mid-movement position %g m off the midpoint", m, d)
		}
	}
}

// The analytic velocity and acceleration agree with finite differences of
// the position everywhere (central differences, h = 1e-5 s; tolerance set
// by the O(h²) truncation error and rounding).
func TestMinJerkDerivatives(t *testing.T) {
	m := MinJerk{From: r3.Vec{X: -0.3, Y: 0.4, Z: 1}, To: r3.Vec{X: 0.5, Y: 0.1, Z: 0.8}, Start: 0.25, Duration: 0.8}
	const h = 1e-5
	for k := 1; k < 100; k++ {
		tt := m.Start + m.Duration*float64(k)/100
		v := r3.Scale(1/(2*h), r3.Sub(m.Position(tt+h), m.Position(tt-h)))
		if d := r3.Norm(r3.Sub(v, m.Velocity(tt))); d > 1e-7 {
			t.Errorf("t=%g: velocity off finite difference by %g m/s", tt, d)
		}
		a := r3.Scale(1/(2*h), r3.Sub(m.Velocity(tt+h), m.Velocity(tt-h)))
		if d := r3.Norm(r3.Sub(a, m.Acceleration(tt))); d > 1e-5 {
			t.Errorf("t=%g: acceleration off finite difference by %g m/s²", tt, d)
		}
	}
}

// Fitts' law, Shannon form MT = a + b·log2(D/W + 1) (MacKenzie, 1992,
// Human–Computer Interaction 7, 91–139). The expected values are worked by
// hand with distances chosen so that D/W + 1 is a power of two.
func TestFittsDuration(t *testing.T) {
	cases := []struct{ a, b, d, w, want float64 }{
		{0.1, 0.15, 0.30, 0.02, 0.7},  // log2(15+1) = 4: 0.1 + 0.15·4
		{0.05, 0.2, 0.75, 0.05, 0.85}, // log2(15+1) = 4: 0.05 + 0.2·4
		{0, 0.1, 0.7, 0.1, 0.3},       // log2(7+1) = 3: 0 + 0.1·3
		{0.2, 0.12, 0.04, 0.04, 0.32}, // log2(1+1) = 1: 0.2 + 0.12
		{0.1, 0.15, 0, 0.05, 0.1},     // no distance: the intercept
		{0.08, 0.1, 0.62, 0.02, 0.58}, // log2(31+1) = 5: 0.08 + 0.1·5
		{0.1, 0.15, 1.26, 0.02, 1.0},  // log2(63+1) = 6: 0.1 + 0.9
	}
	for _, c := range cases {
		if got := FittsDuration(c.a, c.b, c.d, c.w); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("FittsDuration(a=%g, b=%g, D=%g, W=%g) = %.15g, want %g", c.a, c.b, c.d, c.w, got, c.want)
		}
	}
}

// A reach without a duration takes the Fitts time of its distance and
// width; with the scenario's a and b.
func TestReachUsesFitts(t *testing.T) {
	sc := load(t, `
fitts: {a: 50ms, b: 200ms, width: 0.05}
tremor: {rms: 0}
stations:
  - {name: far, at: [0.75, 0.0, 1.0]}
operators:
  - name: op1
    at: [0, 0]
    hands:
      - {name: right, rest: [0, 0, 1.0]}
    timeline:
      - reach: {hand: right, to: far}                  # D = 0.75, W = 0.05
      - reach: {hand: right, to: [0.75, 0.7, 1.0], width: 0.1} # D = 0.7, W = 0.1
      - reach: {hand: right, to: [0.75, 0.7, 1.0]}     # D = 0: a
`)
	acts := sc.Run(1).Actions()
	want := []float64{
		0.05 + 0.2*4, // log2(0.75/0.05 + 1) = log2 16
		0.05 + 0.2*3, // log2(0.7/0.1 + 1) = log2 8
		0.05,         // log2(0 + 1) = 0
	}
	if len(acts) != len(want) {
		t.Fatalf("%d actions, want %d", len(acts), len(want))
	}
	for i, a := range acts {
		if got := a.End - a.Start; math.Abs(got-want[i]) > 1e-12 {
			t.Errorf("reach %d: %.15g s, want %g s", i, got, want[i])
		}
	}
}

// Walking carries the hands at the set speed: the walk takes distance /
// speed, the body moves at that speed, and the hands end at rest in front
// of the body, facing the walking direction.
func TestWalk(t *testing.T) {
	sc := load(t, `
tremor: {rms: 0}
operators:
  - name: op1
    at: [1.0, 0.5]
    heading: 0
    hands:
      - {name: left, rest: [0.3, 0.2, 1.0]}
      - {name: right, rest: [0.3, -0.2, 1.0]}
    timeline:
      - walk: {to: [1.0, 4.5], standoff: 0.8}   # 3.2 m north at 1.6 m/s (ISO 13855)
      - walk: {to: [4.0, 3.7], speed: 1.2}      # 3.0 m east at 1.2 m/s
`)
	r := sc.Run(1)
	acts := r.Actions()
	if len(acts) != 2 {
		t.Fatalf("%d actions, want 2", len(acts))
	}
	if got := acts[0].End - acts[0].Start; math.Abs(got-2.0) > 1e-12 {
		t.Errorf("first walk takes %g s, want 3.2/1.6 = 2", got)
	}
	if got := acts[1].End - acts[1].Start; math.Abs(got-2.5) > 1e-12 {
		t.Errorf("second walk takes %g s, want 3.0/1.2 = 2.5", got)
	}
	if d := r3.Norm(r3.Sub(acts[0].To, r3.Vec{X: 1, Y: 3.7})); d > 1e-12 {
		t.Errorf("first walk stops at %v, want 0.8 m short of (1, 4.5)", acts[0].To)
	}
	// Facing north after the first walk: forward is +y, left is −x.
	left, _ := r.Position("op1/left", 2.0)
	if d := r3.Norm(r3.Sub(left, r3.Vec{X: 0.8, Y: 4.0, Z: 1.0})); d > 1e-9 {
		t.Errorf("left hand at %v after the first walk, want (0.8, 4.0, 1.0)", left)
	}
	// Facing east after the second: forward +x, right is −y.
	right, _ := r.Position("op1/right", 4.5)
	if d := r3.Norm(r3.Sub(right, r3.Vec{X: 4.3, Y: 3.5, Z: 1.0})); d > 1e-9 {
		t.Errorf("right hand at %v after the second walk, want (4.3, 3.5, 1.0)", right)
	}
	// Mid-walk, past the blend, the hands' mean moves with the body at the
	// walking speed along the walk (swing is antiphase, so it cancels in
	// the mean of the two hands).
	mean := func(t float64) r3.Vec {
		l, _ := r.Position("op1/left", t)
		rr, _ := r.Position("op1/right", t)
		return r3.Scale(0.5, r3.Add(l, rr))
	}
	v := r3.Scale(1/0.4, r3.Sub(mean(1.2), mean(0.8)))
	if math.Abs(v.Y-1.6) > 1e-9 || math.Abs(v.X) > 1e-9 {
		t.Errorf("hands' mean velocity mid-walk %v, want (0, 1.6, 0)", v)
	}
}

// A sweep turns the hand about the vertical axis through the centre by the
// given angle: the end is the start rotated, the radius stays.
func TestSweep(t *testing.T) {
	sc := load(t, `
tremor: {rms: 0}
operators:
  - name: op1
    at: [0, 0]
    hands:
      - {name: right, rest: [0.5, 0, 1.0]}
    timeline:
      - sweep: {hand: right, center: [0.0, 0.0], angle: 90, rise: 0.1, duration: 1s}
`)
	r := sc.Run(1)
	end, _ := r.Position("op1/right", 1.0)
	if d := r3.Norm(r3.Sub(end, r3.Vec{X: 0, Y: 0.5, Z: 1.1})); d > 1e-12 {
		t.Errorf("sweep ends at %v, want (0, 0.5, 1.1)", end)
	}
	for k := 0; k <= 100; k++ {
		p, _ := r.Position("op1/right", float64(k)/100)
		if rad := math.Hypot(p.X, p.Y); math.Abs(rad-0.5) > 1e-12 {
			t.Fatalf("radius %g at t=%g, want 0.5", rad, float64(k)/100)
		}
	}
	mid, _ := r.Position("op1/right", 0.5)
	if ang := math.Atan2(mid.Y, mid.X); math.Abs(ang-math.Pi/4) > 1e-12 {
		t.Errorf("half-way angle %g rad, want π/4 (symmetric minimum-jerk profile)", ang)
	}
}

// Pick-and-place: each cycle is pick, dwell, place, dwell, and the hand is
// at the stations at the ends of the moves.
func TestPickPlace(t *testing.T) {
	sc := load(t, `
tremor: {rms: 0}
stations:
  - {name: tote, at: [0.5, 0.3, 0.8]}
  - {name: bench, at: [0.5, -0.3, 0.9]}
operators:
  - name: op1
    at: [0, 0]
    timeline:
      - pick_place: {hand: right, from: tote, to: bench, cycles: 3, dwell: 250ms, duration: 600ms, lift: 0.1}
`)
	r := sc.Run(1)
	acts := r.Actions()
	if len(acts) != 12 {
		t.Fatalf("%d actions, want 12 (3 cycles of pick, dwell, place, dwell)", len(acts))
	}
	kinds := []string{KindPick, KindDwell, KindPlace, KindDwell}
	for i, a := range acts {
		if a.Kind != kinds[i%4] || a.Cycle != i/4 {
			t.Errorf("action %d: %s cycle %d, want %s cycle %d", i, a.Kind, a.Cycle, kinds[i%4], i/4)
		}
		wantStart := float64(i/2)*0.85 + float64(i%2)*0.6
		if math.Abs(a.Start-wantStart) > 1e-9 {
			t.Errorf("action %d starts at %g, want %g", i, a.Start, wantStart)
		}
		if a.Kind == KindPick || a.Kind == KindPlace {
			p, _ := r.Position("op1/right", a.End)
			want := r3.Vec{X: 0.5, Y: 0.3, Z: 0.8}
			if a.Kind == KindPlace {
				want = r3.Vec{X: 0.5, Y: -0.3, Z: 0.9}
			}
			if d := r3.Norm(r3.Sub(p, want)); d > 1e-12 {
				t.Errorf("action %d (%s) ends at %v, want %v", i, a.Kind, p, want)
			}
			// the lift raises the middle of the move by 0.1 m
			m, _ := r.Position("op1/right", (a.Start+a.End)/2)
			if mz := (a.From.Z+a.To.Z)/2 + 0.1; math.Abs(m.Z-mz) > 1e-12 {
				t.Errorf("action %d: mid-move height %g, want %g", i, m.Z, mz)
			}
		}
	}
}

// The true trajectories of the demo scenario are continuous: no jump
// between samples 0.1 ms apart larger than a hand moving at 20 m/s would
// make.
func TestTrajectoriesContinuous(t *testing.T) {
	sc := loadFile(t, "demo.yaml")
	r := sc.Run(3)
	const dt = 1e-4
	for _, tr := range r.Tracks() {
		prev, _ := r.Position(tr, 0)
		for k := 1; float64(k)*dt <= r.Duration(); k++ {
			p, _ := r.Position(tr, float64(k)*dt)
			if d := r3.Norm(r3.Sub(p, prev)); d > 20*dt {
				t.Fatalf("%s: jump of %g m at t=%g", tr, d, float64(k)*dt)
			}
			prev = p
		}
	}
}

// Parallel steps start together; a step with at waits for its time.
func TestParallelAndAt(t *testing.T) {
	sc := load(t, `
operators:
  - name: op1
    at: [0, 0]
    timeline:
      - reach: {hand: right, to: [0.6, -0.2, 1.0], duration: 500ms}
      - parallel: true
        reach: {hand: left, to: [0.6, 0.2, 1.0], duration: 800ms}
      - at: 2s
        pause: 1s
      - at: 1s              # already past: starts when the pause ends
        reach: {hand: left, to: rest, duration: 400ms}
`)
	acts := sc.Run(1).Actions()
	want := [][2]float64{{0, 0.5}, {0, 0.8}, {2, 3}, {3, 3.4}}
	for i, a := range acts {
		if math.Abs(a.Start-want[i][0]) > 1e-12 || math.Abs(a.End-want[i][1]) > 1e-12 {
			t.Errorf("action %d (%s %s): [%g, %g], want %v", i, a.Kind, a.Track, a.Start, a.End, want[i])
		}
	}
}
