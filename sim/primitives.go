package sim

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// MinJerk is a minimum-jerk point-to-point movement (Flash & Hogan, 1985):
// the path that minimises the integrated squared jerk between rest at From
// and rest at To over Duration seconds starting at Start. It is a straight
// line travelled with the progress s(τ) = 10τ³ − 15τ⁴ + 6τ⁵, τ = (t−Start)/T.
// Before Start it is at From, after the end at To.
type MinJerk struct {
	From, To r3.Vec
	Start    float64 // seconds
	Duration float64 // seconds, > 0
}

// MinJerkProgress returns s(τ), ds/dτ and d²s/dτ² of the minimum-jerk
// profile: the polynomial on [0, 1], at rest (0 before, 1 after) outside.
func MinJerkProgress(tau float64) (s, ds, dds float64) {
	if tau < 0 || math.IsNaN(tau) {
		return 0, 0, 0
	}
	if tau > 1 {
		return 1, 0, 0
	}
	t2 := tau * tau
	t3 := t2 * tau
	s = t3 * (10 + tau*(-15+6*tau))
	ds = t2 * (30 + tau*(-60+30*tau))
	dds = tau * (60 + tau*(-180+120*tau))
	return s, ds, dds
}

func (m MinJerk) tau(t float64) float64 { return (t - m.Start) / m.Duration }

// Position at time t. It is exactly To from the end on.
func (m MinJerk) Position(t float64) r3.Vec {
	tau := m.tau(t)
	if tau >= 1 {
		return m.To
	}
	s, _, _ := MinJerkProgress(tau)
	return r3.Add(m.From, r3.Scale(s, r3.Sub(m.To, m.From)))
}

// Velocity at time t, metres per second.
func (m MinJerk) Velocity(t float64) r3.Vec {
	_, ds, _ := MinJerkProgress(m.tau(t))
	return r3.Scale(ds/m.Duration, r3.Sub(m.To, m.From))
}

// Acceleration at time t, metres per second squared.
func (m MinJerk) Acceleration(t float64) r3.Vec {
	_, _, dds := MinJerkProgress(m.tau(t))
	return r3.Scale(dds/(m.Duration*m.Duration), r3.Sub(m.To, m.From))
}

// FittsDuration returns the movement time of Fitts' law in its Shannon form,
// MT = a + b·log2(D/W + 1) (MacKenzie, 1992), for intercept a (seconds),
// slope b (seconds per bit), distance d and target width w (same length
// unit, w > 0).
func FittsDuration(a, b, d, w float64) float64 {
	return a + b*math.Log2(d/w+1)
}

// segment is one piece of a hand's true trajectory in the cell frame,
// valid on [t0, t1].
type segment interface {
	span() (t0, t1 float64)
	at(t float64) r3.Vec
	// final is the position at the end, exactly (at(t1) may differ by
	// rounding of t1 − t0).
	final() r3.Vec
}

// holdSeg keeps the hand still at p.
type holdSeg struct {
	t0, t1 float64
	p      r3.Vec
}

func (h *holdSeg) span() (float64, float64) { return h.t0, h.t1 }
func (h *holdSeg) at(float64) r3.Vec        { return h.p }
func (h *holdSeg) final() r3.Vec            { return h.p }

// reachSeg is a minimum-jerk reach, optionally lifted: the vertical offset
// lift·4·s(1−s) (s the minimum-jerk progress) raises the middle of the path
// by lift and keeps zero velocity and acceleration at both ends.
type reachSeg struct {
	m    MinJerk
	lift float64
}

func (r *reachSeg) span() (float64, float64) { return r.m.Start, r.m.Start + r.m.Duration }
func (r *reachSeg) final() r3.Vec            { return r.m.To }
func (r *reachSeg) at(t float64) r3.Vec {
	if r.lift == 0 {
		return r.m.Position(t)
	}
	tau := r.m.tau(t)
	if tau >= 1 {
		return r.m.To
	}
	s, _, _ := MinJerkProgress(tau)
	p := r3.Add(r.m.From, r3.Scale(s, r3.Sub(r.m.To, r.m.From)))
	p.Z += r.lift * 4 * s * (1 - s)
	return p
}

// sweepSeg turns the hand about the vertical axis through (cx, cy) by angle
// radians with a minimum-jerk angle profile, rising by rise metres.
type sweepSeg struct {
	t0, dur float64
	cx, cy  float64
	from    r3.Vec
	angle   float64
	rise    float64
}

func (w *sweepSeg) span() (float64, float64) { return w.t0, w.t0 + w.dur }
func (w *sweepSeg) final() r3.Vec            { return w.at(math.Inf(1)) }
func (w *sweepSeg) at(t float64) r3.Vec {
	s, _, _ := MinJerkProgress((t - w.t0) / w.dur)
	a := s * w.angle
	sin, cos := math.Sincos(a)
	dx, dy := w.from.X-w.cx, w.from.Y-w.cy
	return r3.Vec{
		X: w.cx + cos*dx - sin*dy,
		Y: w.cy + sin*dx + cos*dy,
		Z: w.from.Z + s*w.rise,
	}
}

// body is the operator's floor position and heading during a walk.
type walkPlan struct {
	t0, dur  float64
	from, to r3.Vec  // floor points (z = 0)
	heading  float64 // radians from +x, counter-clockwise; the walking direction
}

func (w *walkPlan) pos(t float64) r3.Vec {
	if w.dur <= 0 {
		return w.to
	}
	u := (t - w.t0) / w.dur
	u = math.Max(0, math.Min(1, u))
	return r3.Add(w.from, r3.Scale(u, r3.Sub(w.to, w.from)))
}

// walkSeg carries a hand along with a walking operator. The hand's offset in
// the body frame (x forward, y left, z up) blends with a minimum-jerk profile
// from where the hand was at the start to its rest offset over the first
// blend seconds, and an arm swing along the walking direction,
// amp·sin(2π·freq·(t−t0) + phase), fades in over the first blend seconds and
// out over the last, so that position is continuous at both ends.
type walkSeg struct {
	w           *walkPlan
	start, rest r3.Vec // body-frame offsets
	blend       float64
	amp, freq   float64
	phase       float64
}

func (s *walkSeg) span() (float64, float64) { return s.w.t0, s.w.t0 + s.w.dur }
func (s *walkSeg) final() r3.Vec            { return bodyToCell(s.w.to, s.w.heading, s.rest) }
func (s *walkSeg) at(t float64) r3.Vec {
	dt := t - s.w.t0
	b, _, _ := MinJerkProgress(dt / s.blend)
	off := r3.Add(s.start, r3.Scale(b, r3.Sub(s.rest, s.start)))
	fadeIn, _, _ := MinJerkProgress(dt / s.blend)
	fadeOut, _, _ := MinJerkProgress((s.w.dur - dt) / s.blend)
	off.X += fadeIn * fadeOut * s.amp * math.Sin(2*math.Pi*s.freq*dt+s.phase)
	return bodyToCell(s.w.pos(t), s.w.heading, off)
}

// bodyToCell maps an offset in the body frame (x forward, y left, z up) of
// an operator standing at floor point at with the given heading to the cell
// frame.
func bodyToCell(at r3.Vec, heading float64, off r3.Vec) r3.Vec {
	sin, cos := math.Sincos(heading)
	return r3.Vec{
		X: at.X + cos*off.X - sin*off.Y,
		Y: at.Y + sin*off.X + cos*off.Y,
		Z: at.Z + off.Z,
	}
}

// cellToBody is the inverse of bodyToCell.
func cellToBody(at r3.Vec, heading float64, p r3.Vec) r3.Vec {
	sin, cos := math.Sincos(heading)
	d := r3.Sub(p, at)
	return r3.Vec{
		X: cos*d.X + sin*d.Y,
		Y: -sin*d.X + cos*d.Y,
		Z: d.Z,
	}
}

// tremor is physiological tremor of one hand: per axis, a sum of three
// sinusoids with frequencies in the band and random phases, each of
// amplitude rms/√1.5 so that the axis' RMS is rms.
type tremor struct {
	amp   float64
	freq  [3][3]float64 // [axis][component], radians per second
	phase [3][3]float64
}

func (tr *tremor) at(t float64) r3.Vec {
	if tr.amp == 0 {
		return r3.Vec{}
	}
	var v [3]float64
	for a := range 3 {
		for k := range 3 {
			v[a] += math.Sin(tr.freq[a][k]*t + tr.phase[a][k])
		}
		v[a] *= tr.amp
	}
	return r3.Vec{X: v[0], Y: v[1], Z: v[2]}
}
