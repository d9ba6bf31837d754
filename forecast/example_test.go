package forecast_test

import (
	"fmt"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/forecast"
)

// A hand at the pl3-palletiser infeed moves at 0.5 m/s along x, tracked at
// 100 Hz with 30 ms of input latency. The constant-velocity model forecasts
// its path in wall-clock time.
func ExampleNewModel() {
	m, err := forecast.NewModel(forecast.Settings{Kind: forecast.KindCV})
	if err != nil {
		fmt.Println(err)
		return
	}
	tr := forecast.NewTrack(m, forecast.DefaultGapReset)
	for i := 0; i <= 20; i++ {
		t := float64(i) / 100
		tr.Add(t, r3.Vec{X: 1.2 + 0.5*t, Y: -0.4, Z: 0.95})
	}
	var path forecast.Path
	h := forecast.Horizon{Step: 0.1, Span: 0.3, Lead: 0.03}
	if tr.F.Predict(&path, h) {
		for k := range path.T {
			fmt.Printf("t=%.2f s  x=%.3f m  radius=%.3f m\n", path.T[k], path.P[k].X, path.R[k])
		}
	}
	// Output:
	// t=0.23 s  x=1.315 m  radius=0.000 m
	// t=0.33 s  x=1.365 m  radius=0.000 m
	// t=0.43 s  x=1.415 m  radius=0.000 m
	// t=0.53 s  x=1.465 m  radius=0.000 m
}
