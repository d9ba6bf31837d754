package sim

import (
	"bytes"
	"math"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// FuzzLoad feeds arbitrary bytes to the scenario loader. Whatever the
// input, Load returns a scenario or an error and never panics; a scenario
// that loads runs, and its first measurements are finite and in arrival
// order. The seed corpus is in testdata/fuzz/FuzzLoad (the example
// scenarios, their stations inlined, and broken variants).
func FuzzLoad(f *testing.F) {
	f.Add([]byte(longRun))
	f.Fuzz(func(t *testing.T, data []byte) {
		sc, err := Load(bytes.NewReader(data), "fuzz.yaml", nil)
		if err != nil {
			if err.Error() == "" {
				t.Fatal("empty error message")
			}
			if sc != nil {
				t.Fatal("a scenario returned with an error")
			}
			return
		}
		r := sc.Run(sc.Seed)
		if r.Frames() > 100_000 {
			// A run may lose every frame (a loss or an occluder covering
			// it all); keep the fuzzer's runs short.
			sc.Duration = 1e5 / sc.Sensor.Rate
			r = sc.Run(sc.Seed)
		}
		prev := math.Inf(-1)
		for i := 0; i < 2000; i++ {
			m, ok := r.Next()
			if !ok {
				break
			}
			for _, x := range []float64{m.T, m.Arrival, m.P.X, m.P.Y, m.P.Z} {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Fatalf("measurement %+v not finite", m)
				}
			}
			if m.Arrival < prev || m.Arrival < m.T {
				t.Fatalf("measurement %+v out of arrival order (previous arrival %g)", m, prev)
			}
			prev = m.Arrival
		}
		if r.Duration() < 30 {
			box, _ := zones.NewBox(r3.Vec{}, r3.Vec{X: 1, Y: 1, Z: 1})
			r.Truth([]Zone{{Name: "box", Volume: box}}, 0.1)
		}
	})
}
