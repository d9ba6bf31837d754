package sim

import (
	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// Range is a value drawn uniformly from [Lo, Hi] for each run (a fixed
// value has Lo == Hi). Durations and times are in seconds, lengths in
// metres, angles in radians.
type Range struct{ Lo, Hi float64 }

func fixed(x float64) Range { return Range{x, x} }

// Scenario is a loaded scenario file. Its exported fields may be adjusted
// before Run (for instance a test switching off noise).
type Scenario struct {
	Name   string // the scenario's name (file base name when not given)
	Source string // file name as given to Load
	Cell   string // the cell the scenario is written for ("" when not said)
	// Seed is the scenario's default seed.
	Seed uint64
	// Duration of a run in seconds; 0: until the last movement of any
	// operator ends, plus Tail.
	Duration float64
	Tail     float64 // seconds
	Sensor   Sensor
	Tremor   Tremor

	fitts     Fitts
	stations  map[string]r3.Vec
	operators []*operator
}

// Fitts holds the defaults of Fitts' law, MT = A + B·log2(D/W + 1).
type Fitts struct {
	A     float64 // intercept, seconds
	B     float64 // slope, seconds per bit
	Width float64 // default target width W, metres
}

// DefaultFitts are the defaults of a scenario without a fitts section:
// a = 0.1 s, b = 0.15 s/bit, W = 0.05 m. They are illustrative values from
// memory, of the order reported for aimed arm movements, not taken from a
// published table: set a and b from measurements of your own operators.
var DefaultFitts = Fitts{A: 0.1, B: 0.15, Width: 0.05}

// Tremor is the physiological tremor added to every hand's true position.
type Tremor struct {
	RMS    float64 // per-axis RMS displacement, metres
	Lo, Hi float64 // frequency band, Hz
}

// DefaultTremor: 0.2 mm RMS per axis in the 8–12 Hz band. Both figures are
// from memory (physiological tremor of the outstretched hand is commonly
// described as a low-amplitude 8–12 Hz oscillation); they are illustrative.
var DefaultTremor = Tremor{RMS: 0.0002, Lo: 8, Hi: 12}

// Sensor describes the tracker and its transport.
type Sensor struct {
	Rate  float64 // frames per second
	Noise float64 // Gaussian position noise, standard deviation per axis, metres
	// Latency is the mean delay from a frame's source time to its arrival,
	// Jitter the standard deviation of that delay (seconds). Delays are
	// Gaussian, cut at zero.
	Latency, Jitter float64
	// InOrder keeps each track's samples in source order on arrival, as
	// over one connection: a sample delayed by jitter holds back the ones
	// behind it. Without it, samples of a track may overtake each other.
	InOrder bool
	// DropFraction is the long-run fraction of frames lost at random, in
	// gaps of mean length DropGap seconds (a two-state Markov chain per
	// track; DropGap 0 means single-frame gaps).
	DropFraction float64
	DropGap      float64
	// OutlierRate is the probability that a delivered sample is an outlier:
	// its position is off by OutlierSize metres in a random direction.
	OutlierRate float64
	OutlierSize float64
	// Occluders hide a hand while its true position is inside them.
	Occluders []Occluder
	// Losses are planted tracking losses.
	Losses []Loss
}

// DefaultSensor is the sensor of a scenario without a sensor section: 100
// frames per second, 2 mm noise, 20 ms latency with 3 ms jitter, in order,
// no dropouts or outliers. Illustrative values for an optical tracker, not
// from a data sheet.
var DefaultSensor = Sensor{Rate: 100, Noise: 0.002, Latency: 0.020, Jitter: 0.003, InOrder: true}

// Occluder is a volume that hides any hand inside it from the tracker.
type Occluder struct {
	Name  string
	Shape zones.Shape
}

// Loss is a planted tracking loss: no samples of the matching tracks with
// source times in [At, At+Duration).
type Loss struct {
	// Track is a track ("op1/right"), an operator ("op1": all its hands)
	// or "" for every track.
	Track    string
	At       Range
	Duration Range
}

// operator is one simulated person.
type operator struct {
	name    string
	at      r3.Vec  // floor position at the start (z = 0)
	heading float64 // radians from +x, counter-clockwise
	hands   []hand
	swing   swing
	steps   []*step
}

type hand struct {
	name string
	rest r3.Vec // body frame: x forward, y left, z up from the floor
}

type swing struct {
	amp, freq float64 // metres, Hz
}

// Default arm swing while walking: ±0.15 m along the walking direction at
// 1 Hz, the left and right hands in antiphase. From memory, illustrative
// (arm swing follows the stride, about one stride per second at 1.6 m/s).
var defaultSwing = swing{amp: 0.15, freq: 1.0}

// Default rest offsets of the hands in the body frame (metres): forearms
// forward at working height. Illustrative.
var defaultHands = []hand{
	{name: "left", rest: r3.Vec{X: 0.25, Y: 0.2, Z: 1.0}},
	{name: "right", rest: r3.Vec{X: 0.25, Y: -0.2, Z: 1.0}},
}

// WalkSpeed is the default speed of a walk, m/s: the walking approach
// speed K = 1600 mm/s of ISO 13855.
const WalkSpeed = 1.6

// Step kinds.
const (
	KindWalk      = "walk"
	KindReach     = "reach"
	KindSweep     = "sweep"
	KindPickPlace = "pick_place"
	KindPause     = "pause"
	// Phases of pick_place, as reported in Actions.
	KindPick  = "pick"
	KindPlace = "place"
	KindDwell = "dwell"
)

// target is a point in the cell: a station, a fixed point, or the hand's
// rest position; plus a uniform spread (± per axis).
type target struct {
	station string
	rest    bool
	p       r3.Vec
	spread  r3.Vec
}

// timing is how long a movement takes: a duration, or Fitts' law with a
// target width (the scenario's a and b).
type timing struct {
	dur   *Range
	width float64 // Fitts W when dur is nil, metres
}

type step struct {
	kind     string
	label    string
	at       *Range
	parallel bool
	hand     int // index into the operator's hands; -1 when none

	// reach, pick_place (to), walk (to)
	to     target
	timing timing
	lift   float64
	// walk
	speed    Range
	standoff float64
	// sweep
	center r3.Vec
	angle  Range
	rise   float64
	// pick_place
	from   target
	cycles int
	dwell  Range
	// pause
	pause Range
}
