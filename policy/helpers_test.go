package policy

import (
	"math"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// minJerk is the minimum-jerk point-to-point movement of Flash & Hogan
// (1985), J. Neurosci. 5(7):1688–1703: from a to b in duration d starting at
// t0, x(τ) = a + (b − a)(10τ³ − 15τ⁴ + 6τ⁵), τ = (t − t0)/d clamped to
// [0,1]. Its peak speed is 1.875·|b − a|/d at τ = 1/2.
type minJerk struct {
	a, b  r3.Vec
	t0, d float64
}

func (m minJerk) at(t float64) r3.Vec {
	tau := (t - m.t0) / m.d
	tau = math.Max(0, math.Min(1, tau))
	s := tau * tau * tau * (10 - 15*tau + 6*tau*tau)
	return r3.Add(m.a, r3.Scale(s, r3.Sub(m.b, m.a)))
}

// motion is a hand trajectory as a function of time.
type motion func(t float64) r3.Vec

// oracleModel forecasts from the exact trajectory (R = 0): with it the
// engine's levels and lead times can be predicted from the closed form.
type oracleModel struct{ f motion }

func (m oracleModel) Name() string                     { return "oracle" }
func (m oracleModel) New() forecast.Forecaster         { return &oracleForecaster{f: m.f} }
func (o *oracleForecaster) Update(t float64, _ r3.Vec) { o.t, o.ok = t, true }
func (o *oracleForecaster) Reset()                     { o.ok = false }

type oracleForecaster struct {
	f  motion
	t  float64
	ok bool
}

func (o *oracleForecaster) Predict(dst *forecast.Path, h forecast.Horizon) bool {
	if !o.ok {
		dst.Resize(0)
		return false
	}
	n := h.Points()
	dst.Resize(n)
	for k := 0; k < n; k++ {
		t := o.t + h.Lead + float64(k)*h.Step
		dst.T[k], dst.P[k], dst.R[k] = t, o.f(t), 0
	}
	return true
}

// The zone-set double: spheres and axis-aligned boxes with margins,
// optionally attached to a frame (translation only). Its sweep samples every
// path segment finely and refines the first touch by bisection, to 1e-7 s.
type dzone struct {
	name   string
	frame  string
	rules  []string
	margin float64
	sphere bool
	c      r3.Vec  // sphere centre (frame coordinates)
	r      float64 // sphere radius
	lo, hi r3.Vec  // box corners (frame coordinates)
	off    r3.Vec  // frame position
}

func (z *dzone) sd(p r3.Vec) float64 {
	p = r3.Sub(p, z.off)
	if z.sphere {
		return r3.Norm(r3.Sub(p, z.c)) - z.r
	}
	dx := math.Max(z.lo.X-p.X, p.X-z.hi.X)
	dy := math.Max(z.lo.Y-p.Y, p.Y-z.hi.Y)
	dz := math.Max(z.lo.Z-p.Z, p.Z-z.hi.Z)
	out := r3.Norm(r3.Vec{X: math.Max(dx, 0), Y: math.Max(dy, 0), Z: math.Max(dz, 0)})
	in := math.Min(math.Max(dx, math.Max(dy, dz)), 0)
	return out + in
}

type doubleSet struct{ zs []*dzone }

func (d *doubleSet) count() int { return len(d.zs) }
func (d *doubleSet) info(i int) (string, string, []string) {
	return d.zs[i].name, d.zs[i].frame, d.zs[i].rules
}
func (d *doubleSet) distances(p r3.Vec, out []float64) {
	for i, z := range d.zs {
		out[i] = z.sd(p)
	}
}
func (d *doubleSet) setFrame(f string, pose zones.Pose) error {
	for _, z := range d.zs {
		if z.frame == f {
			z.off = pose.Pos
		}
	}
	return nil
}

func pathAt(path zones.PathView, t float64) (r3.Vec, float64) {
	k := 0
	for k+2 < len(path.T) && path.T[k+1] < t {
		k++
	}
	if k+1 >= len(path.T) {
		return path.P[k], path.R[k]
	}
	u := (t - path.T[k]) / (path.T[k+1] - path.T[k])
	return r3.Add(path.P[k], r3.Scale(u, r3.Sub(path.P[k+1], path.P[k]))), path.R[k] + u*(path.R[k+1]-path.R[k])
}

func (d *doubleSet) sweep(path zones.PathView, cutoff float64, out []zones.SweepResult, skip []bool) {
	const sub = 16
	for i, z := range d.zs {
		if i < len(skip) && skip[i] {
			continue
		}
		g := func(t float64) float64 {
			p, r := pathAt(path, t)
			return z.sd(p) - r - z.margin
		}
		res := zones.SweepResult{MinSep: math.Inf(1)}
		prev := path.T[0]
		for k := range path.T {
			n := sub
			if k+1 == len(path.T) {
				n = 1
			}
			for j := 0; j < n; j++ {
				t := path.T[k]
				if j > 0 {
					t += float64(j) / sub * (path.T[k+1] - path.T[k])
				}
				v := g(t)
				if v < res.MinSep {
					res.MinSep, res.MinSepT = v, t
				}
				if v <= 0 && !res.Touch {
					res.Touch = true
					lo, hi := prev, t
					for hi-lo > 1e-7 {
						m := (lo + hi) / 2
						if g(m) <= 0 {
							hi = m
						} else {
							lo = m
						}
					}
					res.TouchT = hi
				}
				prev = t
			}
		}
		res.Far = res.MinSep >= cutoff
		out[i] = res
	}
}

// cellConfig is the policy part of a test cell.
func cellConfig() *zones.Config {
	return &zones.Config{
		Cell: "pl3-palletiser",
		Forecast: zones.ForecastConfig{
			Step:    zones.Duration(20e6),
			Horizon: zones.Duration(500e6),
		},
		Policy: zones.PolicyConfig{
			Release:    zones.Duration(1e9),
			StaleAfter: zones.Duration(300e6),
			NearMiss:   0.10,
		},
	}
}

// run feeds samples of f every dt from t0 to t1 (inclusive) for one track and
// returns the events.
func run(e *Engine, trackID string, f motion, t0, t1, dt float64) []Event {
	var evs []Event
	n := int(math.Round((t1 - t0) / dt))
	for i := 0; i <= n; i++ {
		t := t0 + float64(i)*dt
		e.Sample(forecast.Sample{Track: trackID, T: t, P: f(t)})
		evs = e.Events(evs)
	}
	return evs
}

func ofKind(evs []Event, k EventKind) []Event {
	var out []Event
	for _, e := range evs {
		if e.Kind == k {
			out = append(out, e.Clone())
		}
	}
	return out
}
