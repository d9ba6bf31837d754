package sim

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/spatial/r3"
)

// Measurement is one sample as the tracker delivered it.
type Measurement struct {
	Track   string  // "operator/hand"
	T       float64 // source time: the frame's time, seconds
	Arrival float64 // when it arrived (T plus latency), seconds on the same axis
	P       r3.Vec  // measured position, metres, cell frame
	Truth   r3.Vec  // true position at T (tremor included), metres
	Outlier bool    // P is an outlier, not Truth plus noise

	ti int // track index, for ordering
}

// Counts are what happened to the frames of one track (or of all tracks).
type Counts struct {
	Frames    int // frames in the run
	Delivered int // samples delivered
	Lost      int // frames inside a planted tracking loss
	Occluded  int // frames with the hand inside an occluder (and not lost)
	Dropped   int // frames dropped at random (and neither lost nor occluded)
	Outliers  int // delivered samples that are outliers
	// LatencySum and LatencySq sum the delays (Arrival − T) of delivered
	// samples and their squares, seconds and s².
	LatencySum, LatencySq float64
}

func (c *Counts) add(o Counts) {
	c.Frames += o.Frames
	c.Delivered += o.Delivered
	c.Lost += o.Lost
	c.Occluded += o.Occluded
	c.Dropped += o.Dropped
	c.Outliers += o.Outliers
	c.LatencySum += o.LatencySum
	c.LatencySq += o.LatencySq
}

// LossWindow is a planted tracking loss of one track as it fell in a run:
// no sample with source time in [Start, End).
type LossWindow struct {
	Track      string
	Start, End float64
}

// Run is one simulated run of a scenario. Next streams its measurements in
// arrival order; the ground truth (Actions, Losses, Position, Truth) is
// available at any time and does not disturb the stream.
type Run struct {
	Seed  uint64
	Index int

	sc       *Scenario
	plans    []*trackPlan
	sensors  []sensorState
	actions  []Action
	losses   []LossWindow
	duration float64
	nFrames  int
	frame    int
	heap     []Measurement
	counts   []Counts
}

// sensorState is the per-track state of the sensor effects.
type sensorState struct {
	rng         *rand.Rand
	cursor      int
	inGap       bool
	lastArrival float64
	losses      []LossWindow
}

// Run starts run 0 of the scenario with the given seed.
func (sc *Scenario) Run(seed uint64) *Run { return sc.RunN(seed, 0) }

// RunN starts run number index (from 0) of a series of randomised runs with
// the given seed. Each (seed, index) gives the same run every time.
func (sc *Scenario) RunN(seed uint64, index int) *Run {
	r := &Run{Seed: seed, Index: index, sc: sc}
	var end float64
	for oi, op := range sc.operators {
		p := &planner{sc: sc, op: op, rng: newStream(seed, index, streamMotion, uint64(oi)),
			body: op.at, heading: op.heading}
		p.body.Z = 0
		p.hands = make([]r3.Vec, len(op.hands))
		p.handEnd = make([]float64, len(op.hands))
		p.segs = make([][]segment, len(op.hands))
		for h, hd := range op.hands {
			p.hands[h] = bodyToCell(p.body, p.heading, hd.rest)
		}
		end = math.Max(end, p.run())
		r.actions = append(r.actions, p.actions...)
		for h := range op.hands {
			// hold the last position for ever
			p.segs[h] = append(p.segs[h], &holdSeg{p.handEnd[h], math.Inf(1), p.hands[h]})
			tp := &trackPlan{name: p.track(h), op: oi, segs: p.segs[h]}
			tp.starts = make([]float64, len(tp.segs))
			for i, s := range tp.segs {
				tp.starts[i], _ = s.span()
			}
			tp.starts[0] = math.Inf(-1) // the first segment also covers earlier times
			tp.tremor = newTremor(sc.Tremor, newStream(seed, index, streamTremor, uint64(len(r.plans))))
			r.plans = append(r.plans, tp)
		}
	}
	r.duration = sc.Duration
	if r.duration == 0 {
		r.duration = end + sc.Tail
	}
	rate := sc.Sensor.Rate
	if !(rate > 0) {
		rate = DefaultSensor.Rate
	}
	r.nFrames = int(math.Floor(r.duration*rate+1e-9)) + 1

	r.sensors = make([]sensorState, len(r.plans))
	r.counts = make([]Counts, len(r.plans))
	for i := range r.sensors {
		r.sensors[i].rng = newStream(seed, index, streamSensor, uint64(i))
	}
	lrng := newStream(seed, index, streamLoss, 0)
	for _, l := range sc.Sensor.Losses {
		at := l.At.draw(lrng)
		dur := l.Duration.draw(lrng)
		for i, tp := range r.plans {
			if l.Track == "" || l.Track == tp.name || l.Track == sc.operators[tp.op].name {
				w := LossWindow{Track: tp.name, Start: at, End: at + dur}
				r.sensors[i].losses = append(r.sensors[i].losses, w)
				r.losses = append(r.losses, w)
			}
		}
	}
	return r
}

func newTremor(t Tremor, rng *rand.Rand) tremor {
	tr := tremor{amp: t.RMS / math.Sqrt(1.5)}
	for a := range 3 {
		for k := range 3 {
			tr.freq[a][k] = 2 * math.Pi * (t.Lo + rng.Float64()*(t.Hi-t.Lo))
			tr.phase[a][k] = 2 * math.Pi * rng.Float64()
		}
	}
	return tr
}

// Duration is the run's length in seconds: frames are at k/rate for
// k = 0 … Frames()−1, all within [0, Duration].
func (r *Run) Duration() float64 { return r.duration }

// Frames is the number of frames of the run.
func (r *Run) Frames() int { return r.nFrames }

// Tracks lists the run's tracks ("operator/hand") in scenario order.
func (r *Run) Tracks() []string {
	out := make([]string, len(r.plans))
	for i, tp := range r.plans {
		out[i] = tp.name
	}
	return out
}

// Actions lists every movement as performed, operator by operator, in
// timeline order.
func (r *Run) Actions() []Action { return append([]Action(nil), r.actions...) }

// Losses lists the planted tracking losses as they fell in this run.
func (r *Run) Losses() []LossWindow { return append([]LossWindow(nil), r.losses...) }

// Position returns the true position (tremor included) of a track at time
// t; false for an unknown track.
func (r *Run) Position(track string, t float64) (r3.Vec, bool) {
	for _, tp := range r.plans {
		if tp.name == track {
			return tp.position(t, nil), true
		}
	}
	return r3.Vec{}, false
}

// Counts returns what happened to the frames so far, per track in Tracks
// order, and in total.
func (r *Run) Counts() (perTrack []Counts, total Counts) {
	perTrack = append([]Counts(nil), r.counts...)
	for _, c := range perTrack {
		total.add(c)
	}
	return perTrack, total
}

func (r *Run) frameTime(k int) float64 {
	rate := r.sc.Sensor.Rate
	if !(rate > 0) {
		rate = DefaultSensor.Rate
	}
	return float64(k) / rate
}

// Next returns the next measurement in arrival order (ties: source time,
// then track order), and false after the last one. It allocates nothing.
func (r *Run) Next() (Measurement, bool) {
	for {
		if len(r.heap) > 0 && (r.frame >= r.nFrames || r.heap[0].Arrival <= r.frameTime(r.frame)) {
			return r.pop(), true
		}
		if r.frame >= r.nFrames {
			return Measurement{}, false
		}
		r.genFrame()
	}
}

// genFrame simulates frame r.frame for every track. Each track draws the
// same random numbers every frame whatever happens to the frame, so that
// one effect never shifts the draws of another.
func (r *Run) genFrame() {
	t := r.frameTime(r.frame)
	r.frame++
	s := &r.sc.Sensor
	rate := s.Rate
	if !(rate > 0) {
		rate = DefaultSensor.Rate
	}
	// Dropout chain: enter a gap with probability p, leave it with q, so
	// that the stationary loss fraction is p/(p+q) = f and the mean gap is
	// 1/q frames. A gap shorter than f/(1−f) frames cannot reach f: the
	// gap is lengthened then.
	f := s.DropFraction
	var p, q float64
	if f > 0 {
		q = 1 / math.Max(1, s.DropGap*rate)
		q = math.Min(q, (1-f)/f)
		p = f * q / (1 - f)
	}
	for i, tp := range r.plans {
		ss := &r.sensors[i]
		c := &r.counts[i]
		rng := ss.rng
		truth := tp.position(t, &ss.cursor)
		nx, ny, nz := rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
		lat := rng.NormFloat64()
		uDrop := rng.Float64()
		uOut := rng.Float64()
		ox, oy, oz := rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()

		if r.frame == 1 {
			ss.inGap = f > 0 && uDrop < f
		} else if ss.inGap {
			ss.inGap = uDrop >= q
		} else {
			ss.inGap = uDrop < p
		}
		c.Frames++
		if lost(ss.losses, t) {
			c.Lost++
			continue
		}
		if occluded(s.Occluders, truth) {
			c.Occluded++
			continue
		}
		if ss.inGap {
			c.Dropped++
			continue
		}
		m := Measurement{Track: tp.name, T: t, Truth: truth, ti: i}
		if uOut < s.OutlierRate {
			dir := r3.Vec{X: ox, Y: oy, Z: oz}
			n := r3.Norm(dir)
			if n < 1e-12 {
				dir, n = r3.Vec{X: 1}, 1
			}
			m.P = r3.Add(truth, r3.Scale(s.OutlierSize/n, dir))
			m.Outlier = true
			c.Outliers++
		} else {
			m.P = r3.Vec{X: truth.X + s.Noise*nx, Y: truth.Y + s.Noise*ny, Z: truth.Z + s.Noise*nz}
		}
		d := math.Max(0, s.Latency+s.Jitter*lat)
		m.Arrival = t + d
		if s.InOrder && m.Arrival < ss.lastArrival {
			m.Arrival = ss.lastArrival
		}
		ss.lastArrival = m.Arrival
		d = m.Arrival - t
		c.Delivered++
		c.LatencySum += d
		c.LatencySq += d * d
		r.push(m)
	}
}

func lost(ws []LossWindow, t float64) bool {
	for _, w := range ws {
		if t >= w.Start && t < w.End {
			return true
		}
	}
	return false
}

func occluded(os []Occluder, p r3.Vec) bool {
	for _, o := range os {
		if o.Shape.Contains(p) {
			return true
		}
	}
	return false
}

// The heap of pending measurements, ordered by arrival, source time, track.

func less(a, b *Measurement) bool {
	if a.Arrival != b.Arrival {
		return a.Arrival < b.Arrival
	}
	if a.T != b.T {
		return a.T < b.T
	}
	return a.ti < b.ti
}

func (r *Run) push(m Measurement) {
	h := append(r.heap, m)
	i := len(h) - 1
	for i > 0 {
		parent := (i - 1) / 2
		if !less(&h[i], &h[parent]) {
			break
		}
		h[i], h[parent] = h[parent], h[i]
		i = parent
	}
	r.heap = h
}

func (r *Run) pop() Measurement {
	h := r.heap
	top := h[0]
	n := len(h) - 1
	h[0] = h[n]
	h = h[:n]
	i := 0
	for {
		l := 2*i + 1
		if l >= n {
			break
		}
		m := l
		if rr := l + 1; rr < n && less(&h[rr], &h[l]) {
			m = rr
		}
		if !less(&h[m], &h[i]) {
			break
		}
		h[i], h[m] = h[m], h[i]
		i = m
	}
	r.heap = h
	return top
}
