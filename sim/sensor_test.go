package sim

import (
	"bytes"
	"math"
	"sort"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat"
)

// A long run with every random sensor effect on. Two still hands for 600 s
// at 100 Hz: 2 × 60 001 frames.
const longRun = `
scenario: long
duration: 600s
sensor:
  rate: 100
  noise: 0.003
  latency: 30ms
  jitter: 6ms
  in_order: false
  dropout: {fraction: 0.05, gap: 40ms}
  outliers: {rate: 0.002, size: 0.5}
operators:
  - name: op1
    at: [0, 0]
    timeline:
      - pause: 1s
`

// Measured sensor statistics against the configured values. Every
// tolerance is four standard errors of the estimate for the sample size
// at hand (computed below, not hard-coded), so a correct simulator fails
// a check with probability about 6e-5; the seed is fixed, so the test is
// deterministic either way.
func TestSensorStatistics(t *testing.T) {
	sc := load(t, longRun)
	s := sc.Sensor
	r := sc.Run(12345)

	var noise, lat []float64
	frames := map[string][]float64{} // delivered source times per track
	var n, outliers int
	for {
		m, ok := r.Next()
		if !ok {
			break
		}
		n++
		frames[m.Track] = append(frames[m.Track], m.T)
		lat = append(lat, m.Arrival-m.T)
		if m.Outlier {
			outliers++
			if d := r3.Norm(r3.Sub(m.P, m.Truth)); math.Abs(d-s.OutlierSize) > 1e-9 {
				t.Errorf("outlier %g m from the truth, want %g", d, s.OutlierSize)
			}
			continue
		}
		noise = append(noise, m.P.X-m.Truth.X, m.P.Y-m.Truth.Y, m.P.Z-m.Truth.Z)
	}
	_, c := r.Counts()
	if c.Delivered != n || c.Outliers != outliers {
		t.Fatalf("counts %+v disagree with the stream (%d samples, %d outliers)", c, n, outliers)
	}
	N := float64(c.Frames)
	if c.Frames != 2*60001 {
		t.Fatalf("%d frames, want 2 × 60001", c.Frames)
	}

	// Noise: sample standard deviation of ~3.4e5 values; SE(s) ≈ σ/√(2n).
	sd := stat.StdDev(noise, nil)
	if tol := 4 * s.Noise / math.Sqrt(2*float64(len(noise))); math.Abs(sd-s.Noise) > tol {
		t.Errorf("noise s.d. %.6g m, want %g ± %.2g", sd, s.Noise, tol)
	} else {
		t.Logf("noise s.d. %.6g m (configured %g, tolerance ±%.2g, n = %d)", sd, s.Noise, tol, len(noise))
	}
	if mean, tol := stat.Mean(noise, nil), 4*s.Noise/math.Sqrt(float64(len(noise))); math.Abs(mean) > tol {
		t.Errorf("noise mean %.3g m, want 0 ± %.2g", mean, tol)
	}

	// Dropouts: the loss indicator is a two-state Markov chain with
	// p = f·q/(1−f), q = 1/(mean gap in frames); its lag-1 correlation
	// λ = 1 − p − q inflates the variance of the mean by (1+λ)/(1−λ).
	f := s.DropFraction
	q := 1 / (s.DropGap * s.Rate)
	p := f * q / (1 - f)
	lam := 1 - p - q
	measured := float64(c.Dropped) / N
	if tol := 4 * math.Sqrt(f*(1-f)/N*(1+lam)/(1-lam)); math.Abs(measured-f) > tol {
		t.Errorf("dropout fraction %.5f, want %g ± %.2g", measured, f, tol)
	} else {
		t.Logf("dropout fraction %.5f (configured %g, tolerance ±%.2g)", measured, f, tol)
	}
	// Gap lengths are geometric with mean 1/q frames and s.d. √(1−q)/q.
	var gaps []float64
	for _, ts := range frames {
		sort.Float64s(ts) // the stream is in arrival order
		for i := 1; i < len(ts); i++ {
			if k := math.Round((ts[i] - ts[i-1]) * s.Rate); k > 1 {
				gaps = append(gaps, k-1)
			}
		}
	}
	meanGap := stat.Mean(gaps, nil)
	if tol := 4 * math.Sqrt(1-q) / q / math.Sqrt(float64(len(gaps))); math.Abs(meanGap-1/q) > tol {
		t.Errorf("mean gap %.3f frames, want %g ± %.2g (%d gaps)", meanGap, 1/q, tol, len(gaps))
	} else {
		t.Logf("mean gap %.3f frames (configured %g, tolerance ±%.2g, %d gaps)", meanGap, 1/q, tol, len(gaps))
	}

	// Latency: mean and s.d. of the delays; SE(mean) = σ/√n,
	// SE(s.d.) ≈ σ/√(2n). At 5 standard deviations from zero the cut at
	// zero changes nothing measurable.
	lm, ls := stat.MeanStdDev(lat, nil)
	nl := float64(len(lat))
	if tol := 4 * s.Jitter / math.Sqrt(nl); math.Abs(lm-s.Latency) > tol {
		t.Errorf("latency mean %.6g s, want %g ± %.2g", lm, s.Latency, tol)
	} else {
		t.Logf("latency mean %.6g s (configured %g, tolerance ±%.2g)", lm, s.Latency, tol)
	}
	if tol := 4 * s.Jitter / math.Sqrt(2*nl); math.Abs(ls-s.Jitter) > tol {
		t.Errorf("latency s.d. %.6g s, want %g ± %.2g", ls, s.Jitter, tol)
	} else {
		t.Logf("jitter %.6g s (configured %g, tolerance ±%.2g)", ls, s.Jitter, tol)
	}
	if math.Abs(c.LatencySum/float64(c.Delivered)-lm) > 1e-12 {
		t.Errorf("Counts latency mean %g disagrees with the stream's %g", c.LatencySum/float64(c.Delivered), lm)
	}

	// Outliers: binomial proportion among delivered samples.
	ro := float64(outliers) / float64(n)
	if tol := 4 * math.Sqrt(s.OutlierRate*(1-s.OutlierRate)/float64(n)); math.Abs(ro-s.OutlierRate) > tol {
		t.Errorf("outlier rate %.5f, want %g ± %.2g", ro, s.OutlierRate, tol)
	} else {
		t.Logf("outlier rate %.5f (configured %g, tolerance ±%.2g)", ro, s.OutlierRate, tol)
	}
}

// The stream is in arrival order; with in_order each track's samples also
// arrive in source order, even when jitter exceeds the frame period, and
// no sample arrives before its source time.
func TestArrivalOrder(t *testing.T) {
	for _, inOrder := range []bool{true, false} {
		sc := load(t, longRun)
		sc.Duration = 20
		sc.Sensor.Jitter = 0.015 // 1.5 frame periods
		sc.Sensor.InOrder = inOrder
		r := sc.Run(7)
		last := map[string]float64{}
		prevArrival := math.Inf(-1)
		overtaken := 0
		for {
			m, ok := r.Next()
			if !ok {
				break
			}
			if m.Arrival < prevArrival {
				t.Fatalf("in_order %v: arrival %g after %g", inOrder, m.Arrival, prevArrival)
			}
			if m.Arrival < m.T {
				t.Fatalf("arrival %g before source time %g", m.Arrival, m.T)
			}
			prevArrival = m.Arrival
			if lt, seen := last[m.Track]; seen && m.T <= lt {
				overtaken++
			}
			last[m.Track] = math.Max(last[m.Track], m.T)
		}
		if inOrder && overtaken > 0 {
			t.Errorf("in_order: %d samples arrived after a later one of their track", overtaken)
		}
		if !inOrder && overtaken == 0 {
			t.Errorf("without in_order and with 15 ms jitter at 100 Hz, no sample was overtaken")
		}
	}
}

// The same seed gives byte-identical output; another seed does not; run i
// of a series is the same whether or not runs 0 … i−1 were made first.
func TestReproducible(t *testing.T) {
	sc := loadFile(t, "demo.yaml")
	sc.Sensor.DropFraction, sc.Sensor.DropGap = 0.02, 0.05
	sc.Sensor.OutlierRate, sc.Sensor.OutlierSize = 0.01, 0.3
	record := func(r *Run) []byte {
		var b bytes.Buffer
		w := NewCSVWriter(&b)
		for {
			m, ok := r.Next()
			if !ok {
				break
			}
			if err := w.Write(&m); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	a, b := record(sc.Run(42)), record(sc.Run(42))
	if !bytes.Equal(a, b) {
		t.Fatal("seed 42 twice: outputs differ")
	}
	if len(a) < 100_000 {
		t.Fatalf("only %d bytes of output", len(a))
	}
	if c := record(sc.Run(43)); bytes.Equal(a, c) {
		t.Error("seeds 42 and 43 give the same output")
	}
	if c := record(sc.RunN(42, 1)); bytes.Equal(a, c) {
		t.Error("runs 0 and 1 of seed 42 give the same output")
	}
	sc2 := loadFile(t, "demo.yaml")
	sc2.Sensor = sc.Sensor
	if !bytes.Equal(record(sc.RunN(42, 3)), record(sc2.RunN(42, 3))) {
		t.Error("run 3 of seed 42 differs between two loads of the scenario")
	}
}

// Randomised ranges are drawn per run, within their bounds, and the same
// (seed, index) gives the same draws.
func TestRandomisation(t *testing.T) {
	sc := load(t, `
stations:
  - {name: infeed, at: [1.4, 3.9, 0.95]}
operators:
  - name: op1
    at: [1.0, 3.7]
    heading: 90
    timeline:
      - at: [0.5s, 1.5s]
        reach: {hand: right, spread: [0.1, 0.05, 0], to: infeed, duration: [400ms, 800ms]}   # spread before to
`)
	seen, spreadX := map[float64]bool{}, map[float64]bool{}
	for i := range 50 {
		a := sc.RunN(9, i).Actions()[0]
		if a.Start < 0.5 || a.Start > 1.5 {
			t.Errorf("run %d: start %g outside [0.5, 1.5]", i, a.Start)
		}
		if d := a.End - a.Start; d < 0.4 || d > 0.8 {
			t.Errorf("run %d: duration %g outside [0.4, 0.8]", i, d)
		}
		if math.Abs(a.To.X-1.4) > 0.1 || math.Abs(a.To.Y-3.9) > 0.05 || a.To.Z != 0.95 {
			t.Errorf("run %d: target %v outside the spread", i, a.To)
		}
		seen[a.Start] = true
		spreadX[a.To.X] = true
		if b := sc.RunN(9, i).Actions()[0]; b != a {
			t.Errorf("run %d drawn twice: %+v then %+v", i, a, b)
		}
	}
	if len(seen) < 50 || len(spreadX) < 50 {
		t.Errorf("50 runs gave only %d distinct start times and %d distinct targets", len(seen), len(spreadX))
	}
}

// Planted losses and occluders remove exactly the frames they cover.
func TestLossAndOcclusion(t *testing.T) {
	sc := load(t, `
tremor: {rms: 0}
sensor:
  rate: 100
  latency: 0s
  jitter: 0s
  occluders:
    - name: stack
      box: {min: [0.9, -1, 0], max: [2, 1, 2]}
  losses:
    - {track: op1/left, at: 1s, duration: 500ms}
operators:
  - name: op1
    at: [0, 0]
    heading: 0
    hands:
      - {name: left, rest: [0.3, 0.2, 1.0]}
      - {name: right, rest: [0.3, -0.2, 1.0]}
    timeline:
      - at: 2s
        reach: {hand: right, to: [1.5, -0.2, 1.0], duration: 1s}   # inside the stack from the crossing of x = 0.9
      - reach: {hand: right, to: rest, duration: 1s}
`)
	r := sc.Run(1)
	got := map[string]map[int]bool{"op1/left": {}, "op1/right": {}}
	for {
		m, ok := r.Next()
		if !ok {
			break
		}
		got[m.Track][int(math.Round(m.T*100))] = true
	}
	// The left hand: frames 100 … 149 lost, all others delivered.
	for k := 0; k < r.Frames(); k++ {
		if want := k < 100 || k >= 150; got["op1/left"][k] != want {
			t.Errorf("left hand frame %d delivered %v, want %v", k, got["op1/left"][k], want)
		}
	}
	// The right hand: hidden exactly while its true x >= 0.9. Minimum-jerk
	// progress s(τ) = 0.5 at τ = 0.5, so x = 0.3 + 1.2·s crosses 0.9 at
	// t = 2.5 on the way in and, by symmetry, at t = 3.5 on the way out.
	hidden := 0
	for k := 0; k < r.Frames(); k++ {
		tt := float64(k) / 100
		p, _ := r.Position("op1/right", tt)
		if want := p.X < 0.9; got["op1/right"][k] != want {
			t.Errorf("right hand frame %d (x = %.4f) delivered %v, want %v", k, p.X, got["op1/right"][k], want)
		}
		if p.X >= 0.9 {
			hidden++
			if k < 250 || k > 350 {
				t.Errorf("right hand inside the stack at frame %d, outside [2.5 s, 3.5 s]", k)
			}
		}
	}
	_, c := r.Counts()
	if c.Lost != 50 {
		t.Errorf("%d frames lost, want 50", c.Lost)
	}
	// frames 251 … 349 for certain, 250 and 350 within rounding of x = 0.9
	if c.Occluded != hidden || hidden < 99 || hidden > 101 {
		t.Errorf("%d frames occluded, %d with the hand inside; want 99 to 101", c.Occluded, hidden)
	}
	if ws := r.Losses(); len(ws) != 1 || ws[0] != (LossWindow{"op1/left", 1, 1.5}) {
		t.Errorf("losses %+v, want one of op1/left over [1, 1.5)", ws)
	}
}
