// Package policy is the advisory engine of one cell. It is fed timestamped
// hand samples of any number of tracks; for each sample it forecasts the
// track's path, sweeps that path (with its growing uncertainty radius and each
// zone's margin) through the cell's zones, applies the configured rules with
// hysteresis and the fail-safe rules, and keeps the cell's current advisory
// (clear, reduce with a speed scale, or hold) together with events for review
// (zone entries and exits, near misses, advisory changes, rejected samples,
// tracking loss).
//
// The advisory is ADVISORY ONLY (see safety.Notice): it is not a protective
// function.
//
// The package is pure and single-threaded: no I/O, no goroutines, no wall
// clock. Time comes from the samples (and from Advance and robot states), so
// the same input gives byte-identical events. The per-sample path allocates
// nothing once every track has been seen.
package policy

import "strconv"

// Level is the severity of an advisory. Larger is more severe.
type Level uint8

const (
	// LevelClear: no request; the robot may run at its programmed speed.
	LevelClear Level = iota
	// LevelReduce: request to scale the robot's speed by Advisory.Scale.
	LevelReduce
	// LevelHold: request to hold the robot (speed scale 0).
	LevelHold
)

var levelNames = [...]string{"clear", "reduce", "hold"}

// String returns "clear", "reduce" or "hold".
func (l Level) String() string {
	if int(l) < len(levelNames) {
		return levelNames[l]
	}
	return "level(" + strconv.Itoa(int(l)) + ")"
}

// MarshalText implements encoding.TextMarshaler.
func (l Level) MarshalText() ([]byte, error) {
	if int(l) >= len(levelNames) {
		return nil, errUnknownLevel(l.String())
	}
	return []byte(levelNames[l]), nil
}

// UnmarshalText implements encoding.TextUnmarshaler.
func (l *Level) UnmarshalText(b []byte) error {
	v, ok := ParseLevel(string(b))
	if !ok {
		return errUnknownLevel(string(b))
	}
	*l = v
	return nil
}

// ParseLevel parses "clear", "reduce" or "hold".
func ParseLevel(s string) (Level, bool) {
	for i, n := range levelNames {
		if n == s {
			return Level(i), true
		}
	}
	return 0, false
}

type errUnknownLevel string

func (e errUnknownLevel) Error() string {
	return "unknown advisory level " + strconv.Quote(string(e)) + " (want clear, reduce or hold)"
}

// Names of the built-in rules, as they appear in Reason.Rule. Configured rule
// names must differ from them.
const (
	// RuleTrackingLost: a track that was near a zone (or requesting reduce or
	// hold) went silent for longer than stale_after; it requests hold.
	RuleTrackingLost = "tracking-lost"
	// RuleSeparation: the hand is closer to a robot-attached zone than the
	// ISO/TS 15066 protective separation distance; it requests hold.
	RuleSeparation = "protective-separation"
)

// Reason says why one track requests a level for one zone. All lengths are in
// metres, all times in seconds; no field is ever NaN or infinite.
type Reason struct {
	Track string // track id, e.g. "op1/right"
	Zone  string // zone name
	Rule  string // configured rule name, RuleTrackingLost or RuleSeparation
	Level Level  // level the rule requests
	Scale float64
	// HasEntry is true when the forecast path touches the zone (with its
	// uncertainty radius and the zone's margin); TimeToEntry is then the
	// time from the forecast's start ("now") to the first touch, >= 0.
	// Otherwise TimeToEntry is -1.
	HasEntry    bool
	TimeToEntry float64
	// Separation is the distance from the hand's latest measured position to
	// the zone's shape (negative inside; the margin is not subtracted).
	Separation float64
	// MinSeparation is the minimum forecast separation over the path:
	// distance to the shape minus uncertainty radius minus margin (negative
	// when the forecast touches the zone), reported up to the engine's
	// sweep cutoff, the largest distance its rules need (the largest of
	// near_track, 1.25·near_miss and the sep_below values; 0.5 m with the
	// defaults): a value equal to the cutoff means at least that far.
	MinSeparation float64
	// Required is the protective separation distance Sp for
	// RuleSeparation, 0 for other rules.
	Required float64
}

// Advisory is the cell's current advisory: the most severe request over all
// tracks and zones, released only after the release time.
type Advisory struct {
	T     float64 // time of the latest evaluation (samples' time axis)
	Seq   uint64  // incremented at every change of Level or Scale
	Level Level
	// Scale is the requested speed scale in [0,1]: 1 for clear, 0 for hold,
	// the smallest scale of the reduce rules in force for reduce.
	Scale float64
	// Since is the time the current Level and Scale started.
	Since float64
	// Held is true when the requests have dropped below Level and the
	// advisory is kept only until the release time has passed; Reasons are
	// then those of the last evaluation that requested this level.
	Held bool
	// Reasons are the requests that set Level and Scale, in a deterministic
	// order (tracks in order of first appearance, then zones in zone-set
	// order). The slice belongs to the engine: it is valid until the next
	// call to a method that feeds the engine (Sample, Robot, Advance,
	// SetLatency, Flush); use Clone to keep it.
	Reasons []Reason
	// Horizon is the forecast horizon in seconds (span of the forecast
	// after its lead).
	Horizon float64
}

// Clone returns a copy of a whose Reasons do not alias engine memory.
func (a Advisory) Clone() Advisory {
	a.Reasons = append([]Reason(nil), a.Reasons...)
	return a
}

// EventKind says what an Event reports.
type EventKind uint8

const (
	// EventEntry: the hand's measured position entered the zone's shape.
	// Lead/HasLead/Missed report the advisory lead time.
	EventEntry EventKind = iota + 1
	// EventExit: the hand's measured position left the zone's shape.
	EventExit
	// EventNearMiss: the hand came closer than near_miss to the zone without
	// entering it; reported once per approach, when the separation has grown
	// again past the re-arm distance (or the track was lost, or on Flush),
	// with the minimum separation and its time (MinT).
	EventNearMiss
	// EventAdvisory: the cell's advisory changed (Level, Scale, Reasons).
	EventAdvisory
	// EventRejected: a sample (or robot state) was rejected (Reject says
	// why); it was counted and not used.
	EventRejected
	// EventTrackingLost: a track went silent longer than stale_after.
	// Zone is the nearest zone when the track was near one (it then
	// requests hold), "" otherwise.
	EventTrackingLost
	// EventTrackingRegained: a lost track sent a sample again.
	EventTrackingRegained
)

var eventKindNames = [...]string{"", "entry", "exit", "near-miss", "advisory", "rejected", "tracking-lost", "tracking-regained"}

// String returns the kind's name: "entry", "exit", "near-miss", "advisory",
// "rejected", "tracking-lost", "tracking-regained".
func (k EventKind) String() string {
	if k > 0 && int(k) < len(eventKindNames) {
		return eventKindNames[k]
	}
	return "event(" + strconv.Itoa(int(k)) + ")"
}

// MarshalText implements encoding.TextMarshaler.
func (k EventKind) MarshalText() ([]byte, error) { return []byte(k.String()), nil }

// RejectReason says why a sample was rejected.
type RejectReason uint8

const (
	RejectNone RejectReason = iota
	// RejectNonFinite: time or a coordinate is NaN or infinite.
	RejectNonFinite
	// RejectBackwards: time earlier than the track's previous sample.
	RejectBackwards
	// RejectDuplicate: time equal to the track's previous sample.
	RejectDuplicate
	// RejectSpeed: the displacement from the track's previous accepted
	// sample implies a speed above max_speed.
	RejectSpeed
	// RejectNoTrack: the sample has an empty track id.
	RejectNoTrack
	// RejectTooManyTracks: a new track beyond Options.MaxTracks.
	RejectTooManyTracks
	// RejectRobotState: a robot state with a non-finite value, a negative
	// speed or time, an unknown frame, or time going backwards.
	RejectRobotState
	numRejectReasons
)

var rejectNames = [...]string{"", "non-finite", "time-backwards", "duplicate-time", "implausible-speed", "no-track", "too-many-tracks", "bad-robot-state"}

// String returns the reason's name, e.g. "implausible-speed".
func (r RejectReason) String() string {
	if int(r) < len(rejectNames) {
		return rejectNames[r]
	}
	return "reject(" + strconv.Itoa(int(r)) + ")"
}

// MarshalText implements encoding.TextMarshaler.
func (r RejectReason) MarshalText() ([]byte, error) { return []byte(r.String()), nil }

// RejectReasons lists every reason, in counter order, for reports.
func RejectReasons() []RejectReason {
	out := make([]RejectReason, 0, numRejectReasons-1)
	for r := RejectNone + 1; r < numRejectReasons; r++ {
		out = append(out, r)
	}
	return out
}

// Event is one thing that happened, for review. Fields not listed for a kind
// are zero. Times are on the samples' axis (seconds), lengths in metres.
type Event struct {
	Kind  EventKind
	T     float64
	Track string
	Zone  string

	// Entry: Lead = entry time − start of the warning episode of this
	// track for this zone (HasLead): its requests of reduce or hold, none
	// of them more than the release time after the previous one. A
	// tracking loss ends the episode; the fail-safe hold starts a new one
	// at the loss for the zones the track was near (see Engine.Advance).
	// Missed when there was none or the lead is not positive.
	Lead    float64
	HasLead bool
	Missed  bool

	// Entry, exit, near miss: Separation is the separation at T (for a near
	// miss the minimum separation of the approach, reached at MinT).
	Separation float64
	MinT       float64

	// Advisory: the new level, scale and reasons. Reasons belong to the
	// engine and stay valid until the next call to Engine.Events; Clone to
	// keep them longer.
	Level   Level
	Scale   float64
	Seq     uint64
	Reasons []Reason

	// Rejected: why. Value is the offending quantity when there is one
	// (implied speed in m/s for RejectSpeed, the previous time for
	// RejectBackwards/RejectDuplicate).
	Reject RejectReason
	Value  float64
}

// Clone returns a copy of e whose Reasons do not alias engine memory.
func (e Event) Clone() Event {
	if e.Reasons != nil {
		e.Reasons = append([]Reason(nil), e.Reasons...)
	}
	return e
}

// Stats are the engine's counters since it was made.
type Stats struct {
	Samples  uint64 // samples offered to Sample
	Accepted uint64 // samples used
	// Rejected counts rejections by reason (index RejectReason).
	Rejected [numRejectReasons]uint64
	// Changes counts advisory changes into each level (index Level).
	Changes      [3]uint64
	RobotStates  uint64 // robot states accepted
	Entries      uint64
	Missed       uint64 // entries without a positive lead time
	NearMisses   uint64
	TrackingLost uint64
}

// RejectedTotal is the sum of Rejected.
func (s Stats) RejectedTotal() uint64 {
	var n uint64
	for _, v := range s.Rejected {
		n += v
	}
	return n
}
