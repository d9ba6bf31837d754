package sim

import (
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"
)

// Action is one movement of a run as it was actually performed (after
// randomisation): the exact ground truth of when it started and ended.
type Action struct {
	Operator string
	// Track is the hand that moved ("op1/right"); "" for a walk or a pause
	// (the whole operator).
	Track string
	// Kind is walk, reach, sweep, pause, or for pick_place its phases pick,
	// place and dwell.
	Kind  string
	Label string // the step's label, "" when none
	Step  int    // index of the step in the operator's timeline
	Cycle int    // pick_place cycle, from 0
	// Start and End are seconds on the run's time axis.
	Start, End float64
	// From and To are the hand's positions (the operator's floor positions
	// for a walk), metres.
	From, To r3.Vec
}

// Random streams. Every random choice of a run comes from a stream keyed by
// the seed, the run index, the purpose and an item number, so that changing
// one operator's timeline or the sensor leaves the other draws alone.
const (
	streamMotion = 1 + iota
	streamTremor
	streamSensor
	streamLoss
)

func splitmix(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

func newStream(seed uint64, index int, purpose, item uint64) *rand.Rand {
	a := splitmix(seed ^ splitmix(uint64(index)))
	b := splitmix(splitmix(purpose<<32|item) ^ a)
	return rand.New(rand.NewPCG(a, b))
}

func (r Range) draw(rng *rand.Rand) float64 {
	u := rng.Float64() // always drawn, so that fixing a range keeps the stream
	return r.Lo + u*(r.Hi-r.Lo)
}

// trackPlan is the true trajectory of one hand.
type trackPlan struct {
	name   string
	op     int
	segs   []segment // contiguous, the last one open-ended
	starts []float64 // start time of each segment, for search
	tremor tremor
}

// position returns the true position (tremor included) at time t.
func (tp *trackPlan) position(t float64, cursor *int) r3.Vec {
	i := 0
	if cursor != nil {
		i = *cursor
		if i >= len(tp.starts) || tp.starts[i] > t {
			i = 0
		}
		for i+1 < len(tp.starts) && tp.starts[i+1] <= t {
			i++
		}
		*cursor = i
	} else {
		i = sort.SearchFloat64s(tp.starts, t)
		if i == len(tp.starts) || tp.starts[i] > t {
			i--
		}
		if i < 0 {
			i = 0
		}
	}
	return r3.Add(tp.segs[i].at(t), tp.tremor.at(t))
}

// planner lays out one operator's timeline for one run.
type planner struct {
	sc      *Scenario
	op      *operator
	rng     *rand.Rand
	body    r3.Vec
	heading float64
	hands   []r3.Vec  // current (end of laid segments) hand positions, cell frame
	handEnd []float64 // time up to which each hand's segments are laid
	segs    [][]segment
	actions []Action
}

func (p *planner) addSeg(h int, s segment) {
	t0, t1 := s.span()
	if t0 > p.handEnd[h] {
		p.segs[h] = append(p.segs[h], &holdSeg{p.handEnd[h], t0, p.hands[h]})
	}
	p.segs[h] = append(p.segs[h], s)
	p.handEnd[h] = t1
	p.hands[h] = s.final()
}

func (p *planner) track(h int) string { return p.op.name + "/" + p.op.hands[h].name }

// point resolves a target for hand h (for rest) with its spread.
func (p *planner) point(t target, h int) r3.Vec {
	q := t.p
	if t.rest {
		q = bodyToCell(p.body, p.heading, p.op.hands[h].rest)
	}
	q.X += t.spread.X * (2*p.rng.Float64() - 1)
	q.Y += t.spread.Y * (2*p.rng.Float64() - 1)
	q.Z += t.spread.Z * (2*p.rng.Float64() - 1)
	return q
}

// moveTime is the duration of a movement over distance dist.
func (p *planner) moveTime(tm timing, dist float64) float64 {
	if tm.dur != nil {
		return tm.dur.draw(p.rng)
	}
	p.rng.Float64() // keep the stream aligned with a drawn duration
	mt := FittsDuration(p.sc.fitts.A, p.sc.fitts.B, dist, tm.width)
	return math.Max(mt, 1e-3)
}

// run lays out every step; it returns the time the timeline ends.
func (p *planner) run() float64 {
	var groupStart, groupEnd float64
	for i, st := range p.op.steps {
		if !st.parallel {
			groupStart = groupEnd
			if st.at != nil {
				groupStart = math.Max(groupStart, st.at.draw(p.rng))
			}
		}
		end := p.step(i, st, groupStart)
		groupEnd = math.Max(groupEnd, end)
	}
	return groupEnd
}

func (p *planner) step(i int, st *step, t0 float64) (end float64) {
	act := Action{Operator: p.op.name, Kind: st.kind, Label: st.label, Step: i, Start: t0}
	switch st.kind {
	case KindPause:
		act.End = t0 + st.pause.draw(p.rng)
		act.From, act.To = p.body, p.body
		p.actions = append(p.actions, act)
		return act.End

	case KindWalk:
		dest := st.to.p
		dest.Z = 0
		dest.X += st.to.spread.X * (2*p.rng.Float64() - 1)
		dest.Y += st.to.spread.Y * (2*p.rng.Float64() - 1)
		speed := st.speed.draw(p.rng)
		dir := r3.Sub(dest, p.body)
		dist := r3.Norm(dir)
		act.From = p.body
		if dist <= st.standoff || dist < 1e-9 {
			act.End, act.To = t0, p.body
			p.actions = append(p.actions, act)
			return t0
		}
		heading := math.Atan2(dir.Y, dir.X)
		dest = r3.Add(p.body, r3.Scale((dist-st.standoff)/dist, dir))
		w := &walkPlan{t0: t0, dur: (dist - st.standoff) / speed, from: p.body, to: dest, heading: heading}
		blend := math.Min(0.6, w.dur/2)
		for h, hd := range p.op.hands {
			phase := 0.0
			if h%2 == 1 {
				phase = math.Pi
			}
			p.addSeg(h, &walkSeg{w: w, start: cellToBody(p.body, heading, p.hands[h]), rest: hd.rest,
				blend: blend, amp: p.op.swing.amp, freq: p.op.swing.freq, phase: phase})
		}
		p.body, p.heading = dest, heading
		act.End, act.To = t0+w.dur, dest
		p.actions = append(p.actions, act)
		return act.End

	case KindReach:
		h := st.hand
		from := p.hands[h]
		to := p.point(st.to, h)
		dur := p.moveTime(st.timing, r3.Norm(r3.Sub(to, from)))
		p.addSeg(h, &reachSeg{m: MinJerk{From: from, To: to, Start: t0, Duration: dur}, lift: st.lift})
		act.Track, act.End, act.From, act.To = p.track(h), t0+dur, from, p.hands[h]
		p.actions = append(p.actions, act)
		return act.End

	case KindSweep:
		h := st.hand
		from := p.hands[h]
		angle := st.angle.draw(p.rng)
		r := math.Hypot(from.X-st.center.X, from.Y-st.center.Y)
		dur := p.moveTime(st.timing, math.Hypot(math.Abs(angle)*r, st.rise))
		p.addSeg(h, &sweepSeg{t0: t0, dur: dur, cx: st.center.X, cy: st.center.Y, from: from, angle: angle, rise: st.rise})
		act.Track, act.End, act.From, act.To = p.track(h), t0+dur, from, p.hands[h]
		p.actions = append(p.actions, act)
		return act.End

	case KindPickPlace:
		h := st.hand
		t := t0
		for c := 0; c < st.cycles; c++ {
			for _, ph := range [2]struct {
				kind string
				tg   target
			}{{KindPick, st.from}, {KindPlace, st.to}} {
				from := p.hands[h]
				to := p.point(ph.tg, h)
				dur := p.moveTime(st.timing, r3.Norm(r3.Sub(to, from)))
				p.addSeg(h, &reachSeg{m: MinJerk{From: from, To: to, Start: t, Duration: dur}, lift: st.lift})
				p.actions = append(p.actions, Action{Operator: p.op.name, Track: p.track(h), Kind: ph.kind,
					Label: st.label, Step: i, Cycle: c, Start: t, End: t + dur, From: from, To: p.hands[h]})
				t += dur
				dwell := st.dwell.draw(p.rng)
				if dwell > 0 {
					p.addSeg(h, &holdSeg{t, t + dwell, p.hands[h]})
					p.actions = append(p.actions, Action{Operator: p.op.name, Track: p.track(h), Kind: KindDwell,
						Label: st.label, Step: i, Cycle: c, Start: t, End: t + dwell, From: p.hands[h], To: p.hands[h]})
					t += dwell
				}
			}
		}
		return t
	}
	return t0
}
