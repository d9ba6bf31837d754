package policy

import (
	"math"
	"testing"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// benchCell is a cell with 10 zones of mixed shapes (two attached to the
// robot's tool frame), a 25-point forecast (20 ms steps over 480 ms) and
// stopping data, so that every rule, including the protective separation
// distance, is evaluated.
func benchCell(b *testing.B) (*zones.Config, *zones.ZoneSet) {
	cfg := cellConfig()
	cfg.Forecast.Horizon = zones.Duration(480e6)
	cfg.Robot = zones.RobotConfig{Frames: []zones.FrameConfig{{Name: "tool"}},
		StoppingTime: zones.Duration(300e6), StoppingDistance: 0.15, ReactionTime: zones.Duration(100e6), Speed: 1}
	must := func(s zones.Shape, err error) zones.Shape {
		if err != nil {
			b.Fatal(err)
		}
		return s
	}
	v := func(x, y, z float64) r3.Vec { return r3.Vec{X: x, Y: y, Z: z} }
	zs := []zones.Zone{
		{Name: "pallet-a", Margin: 0.15, Shape: must(zones.NewBox(v(4.8, 0.6, 0), v(6.0, 1.4, 2.0)))},
		{Name: "pallet-b", Margin: 0.15, Shape: must(zones.NewBox(v(4.8, 2.6, 0), v(6.0, 3.4, 2.0)))},
		{Name: "infeed-pick", Margin: 0.15, Shape: must(zones.NewBox(v(1.9, 3.5, 0), v(3.1, 4.3, 1.3)))},
		{Name: "pedestal", Margin: 0.1, Shape: must(zones.NewCylinder(v(3.6, 2.4, 0), v(3.6, 2.4, 0.8), 0.45))},
		{Name: "column-c4", Margin: 0.1, Shape: must(zones.NewCylinder(v(6.55, 2.6, 0), v(6.55, 2.6, 3.5), 0.2))},
		{Name: "magazine", Margin: 0.1, Shape: must(zones.NewOBox(v(5.2, 3.7, 0.6), v(1.25, 0.85, 1.2), zones.RotationRPY(0, 0, -25)))},
		{Name: "exit", Margin: 0.1, Shape: must(zones.NewBox(v(6.2, 0.5, 0), v(6.8, 1.5, 1.6)))},
		{Name: "wrapper", Margin: 0.1, Shape: must(zones.NewSphere(v(1.0, 1.0, 1.0), 0.4))},
		{Name: "tool-gripper", Margin: 0.15, Frame: "tool", Shape: must(zones.NewCapsule(v(0, 0, 0.05), v(0, 0, 0.45), 0.35))},
		{Name: "tool-wrist", Margin: 0.1, Frame: "tool", Shape: must(zones.NewSphere(v(0, 0, -0.25), 0.3))},
	}
	for i := range zs {
		if zs[i].Frame != "" {
			zs[i].Pose = zones.Pose{Pos: v(3.0, 3.4, 2.1), Rot: zones.RotationRPY(180, 0, 0)}
		}
	}
	set, err := zones.NewZoneSet(zs)
	if err != nil {
		b.Fatal(err)
	}
	return cfg, set
}

// BenchmarkSample measures the steady-state cost of one sample with 4
// tracks, 10 zones and a 25-point forecast: forecast, sweep, rules,
// hysteresis, events. The hands reach back and forth (minimum-jerk, 1 s
// each way) between the walkway and points next to the pallet station, the
// infeed and the wrapper, so that some zones are near and some far.
func BenchmarkSample(b *testing.B) {
	for _, kind := range []string{forecast.KindCV, forecast.KindKalmanCV, forecast.KindFitted} {
		b.Run(kind, func(b *testing.B) {
			cfg, zs := benchCell(b)
			m, err := forecast.NewModel(forecast.Settings{Kind: kind})
			if err != nil {
				b.Fatal(err)
			}
			e, err := NewEngine(cfg, zs, m, Options{})
			if err != nil {
				b.Fatal(err)
			}
			tracks := []string{"op1/left", "op1/right", "op2/left", "op2/right"}
			targets := []r3.Vec{{X: 4.6, Y: 1.0, Z: 1.0}, {X: 2.5, Y: 3.3, Z: 1.0}, {X: 1.0, Y: 1.6, Z: 1.0}, {X: 4.0, Y: 2.9, Z: 1.2}}
			home := r3.Vec{X: 1.5, Y: 0.6, Z: 1.0}
			const period = 2.0 // s, there and back
			const n = 2000     // samples per track per period cycle at 1 kHz total rate
			pos := make([][]r3.Vec, len(tracks))
			for k := range tracks {
				pos[k] = make([]r3.Vec, n)
				there := minJerk{a: home, b: targets[k], t0: 0, d: period / 2}
				back := minJerk{a: targets[k], b: home, t0: period / 2, d: period / 2}
				for i := 0; i < n; i++ {
					t := float64(i) * period / n
					if t < period/2 {
						pos[k][i] = there.at(t)
					} else {
						pos[k][i] = back.at(t)
					}
				}
			}
			sampleDT := period / n
			var evs []Event
			step := func(i int) {
				k := i % len(tracks)
				j := i / len(tracks)
				t := float64(j)*sampleDT + float64(k)*1e-4
				e.Sample(forecast.Sample{Track: tracks[k], T: t, P: pos[k][j%n]})
				evs = e.Events(evs[:0])
			}
			// Warm up: every track seen, buffers grown, a full cycle.
			for i := 0; i < 4*n; i++ {
				step(i)
			}
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				step(4*n + i)
			}
			b.StopTimer()
			if s := e.Stats(); s.RejectedTotal() != 0 || s.Accepted != s.Samples || math.IsNaN(e.Advisory().Scale) {
				b.Fatalf("stats %+v", s)
			}
		})
	}
}

// TestSampleAllocatesNothing checks the hot path's zero allocations in the
// normal test run (the benchmark reports them too).
func TestSampleAllocatesNothing(t *testing.T) {
	res := testing.Benchmark(func(b *testing.B) {
		cfg, zs := benchCell(b)
		e, err := NewEngine(cfg, zs, forecastModel(b, forecast.KindCV), Options{})
		if err != nil {
			b.Fatal(err)
		}
		reach := minJerk{a: r3.Vec{X: 1.5, Y: 0.6, Z: 1}, b: r3.Vec{X: 4.6, Y: 1.0, Z: 1.0}, d: 1}
		var evs []Event
		for i := 0; i < 300; i++ {
			tt := float64(i) * dt
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: reach.at(math.Mod(tt, 1))})
			evs = e.Events(evs[:0])
		}
		b.ReportAllocs()
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			tt := float64(300+i) * dt
			e.Sample(forecast.Sample{Track: "op1/right", T: tt, P: reach.at(math.Mod(tt, 2))})
			evs = e.Events(evs[:0])
		}
	})
	if a := res.AllocsPerOp(); a != 0 {
		t.Errorf("%d allocs per sample, want 0", a)
	}
}
