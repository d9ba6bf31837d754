package forecast

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// handPath is a smooth, bounded synthetic hand path for benchmarks.
func handPath(t float64) r3.Vec {
	return vec(0.4*math.Sin(2.1*t), 0.3*math.Sin(1.3*t+1), 1+0.2*math.Cos(3.7*t))
}

// benchHorizon gives 25 path points: 20 ms steps out to 480 ms.
var benchHorizon = Horizon{Step: 0.02, Span: 0.48}

func warmForecaster(tb testing.TB, kind string) (Forecaster, float64) {
	f := mustModel(tb, Settings{Kind: kind}).New()
	var p Path
	t := 0.0
	for i := 0; i < 600; i++ {
		t = float64(i) / 120
		f.Update(t, handPath(t))
		f.Predict(&p, benchHorizon)
	}
	return f, t
}

// BenchmarkUpdatePredict measures one state update plus one 25-point path
// prediction, per model.
func BenchmarkUpdatePredict(b *testing.B) {
	for _, kind := range Kinds {
		b.Run(kind, func(b *testing.B) {
			f, t := warmForecaster(b, kind)
			var p Path
			p.Resize(benchHorizon.Points())
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				t += 1.0 / 120
				f.Update(t, handPath(t))
				if !f.Predict(&p, benchHorizon) {
					b.Fatal("no prediction")
				}
			}
		})
	}
}

// The hot path allocates nothing once warmed up, for every model.
func TestUpdatePredictAllocatesNothing(t *testing.T) {
	if testing.Short() {
		t.Skip("allocation counts are checked in the full run")
	}
	for _, kind := range Kinds {
		f, tt := warmForecaster(t, kind)
		var p Path
		p.Resize(benchHorizon.Points())
		allocs := testing.AllocsPerRun(200, func() {
			tt += 1.0 / 120
			f.Update(tt, handPath(tt))
			f.Predict(&p, benchHorizon)
		})
		if allocs != 0 {
			t.Errorf("%s: %v allocations per update+predict, want 0", kind, allocs)
		}
		if p.Len() != 25 {
			t.Errorf("%s: %d points, want 25", kind, p.Len())
		}
	}
}
