package forecast

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

// polyPath is an exact polynomial path p(t) = sum c[k] t^k.
func polyPath(c []r3.Vec, t float64) r3.Vec {
	var r r3.Vec
	for k := len(c) - 1; k >= 0; k-- {
		r = r3.Add(r3.Scale(t, r), c[k])
	}
	return r
}

// irregularTimes returns n increasing times with steps drawn in [0.5, 1.5]·dt.
func irregularTimes(rng *rand.Rand, n int, dt float64) []float64 {
	ts := make([]float64, n)
	t := 1.3
	for i := range ts {
		ts[i] = t
		t += dt * (0.5 + rng.Float64())
	}
	return ts
}

func mustModel(t testing.TB, s Settings) Model {
	t.Helper()
	m, err := NewModel(s)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// On exact polynomial paths, a predictor whose process model contains the
// path's polynomial reproduces the future exactly (closed form: the least
// squares fit of a polynomial to exact samples of a polynomial of no higher
// degree is that polynomial). Tolerance 1e-9 m.
func TestExactPolynomialPaths(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	quad := []r3.Vec{{X: 0.4, Y: -1.2, Z: 0.9}, {X: 1.1, Y: 0.3, Z: -0.7}, {X: -2.5, Y: 1.5, Z: 0.8}}
	line := quad[:2]
	cubic := append(append([]r3.Vec{}, quad...), r3.Vec{X: 3, Y: -1, Z: 2})
	h := Horizon{Step: 0.02, Span: 0.5, Lead: 0.03}
	cases := []struct {
		s    Settings
		path []r3.Vec
	}{
		{Settings{Kind: KindHold}, quad[:1]},
		{Settings{Kind: KindCV, Window: 0.05}, line},
		{Settings{Kind: KindCV, Window: 0.2}, line},
		{Settings{Kind: KindCA, Window: 0.1}, quad},
		{Settings{Kind: KindCA, Window: 0.3}, quad},
	}
	for _, c := range cases {
		for _, dt := range []float64{1.0 / 30, 1.0 / 120, 1.0 / 500} {
			f := mustModel(t, c.s).New()
			var path Path
			for _, ti := range irregularTimes(rng, 200, dt) {
				f.Update(ti, polyPath(c.path, ti))
				if !f.Predict(&path, h) {
					continue
				}
				if path.Len() != h.Points() {
					t.Fatalf("%s: path has %d points, want %d", c.s.Kind, path.Len(), h.Points())
				}
				if got := path.T[0] - ti; math.Abs(got-h.Lead) > 1e-12 {
					t.Fatalf("%s: point 0 at %g after the sample, want the lead %g", c.s.Kind, got, h.Lead)
				}
				for k := range path.T {
					want := polyPath(c.path, path.T[k])
					if d := r3.Norm(r3.Sub(path.P[k], want)); d > 1e-9 {
						t.Fatalf("%s dt=%g: point %d off by %g m", c.s.Kind, dt, k, d)
					}
				}
			}
		}
	}
	// The cubic local fit reproduces a cubic path, derivatives included.
	hs := newHistory(1, 8)
	var fit polyFit
	for _, ti := range irregularTimes(rng, 50, 1.0/120) {
		hs.push(ti, polyPath(cubic, ti))
		if !hs.fit(&fit, 3, 0.1, 5) {
			continue
		}
		for _, tau := range []float64{0, 0.1, 0.3} {
			want := polyPath(cubic, ti+tau)
			if d := r3.Norm(r3.Sub(fit.eval(tau), want)); d > 1e-9 {
				t.Fatalf("cubic fit at +%g s off by %g m", tau, d)
			}
		}
		// velocity: derivative of the cubic.
		dv := []r3.Vec{cubic[1], r3.Scale(2, cubic[2]), r3.Scale(3, cubic[3])}
		if d := r3.Norm(r3.Sub(fit.D[1], polyPath(dv, ti))); d > 1e-7 {
			t.Fatalf("cubic fit velocity off by %g m/s", d)
		}
	}
}
