package safety

import (
	"errors"
	"fmt"
	"math"
)

// StoppingData are a cell's stopping figures as the margin report uses them
// (every time in seconds, length in metres, speed in m/s; all >= 0).
type StoppingData struct {
	// StoppingTime is the robot's stopping time Ts once a stop is initiated.
	StoppingTime float64
	// SystemLatency is the time from a hand's movement to the initiation of
	// the stop through sensing, transport and forecasting.
	SystemLatency float64
	// ReactionTime is the reaction time Tr of ISO/TS 15066 up to the
	// initiation of the stop, without SystemLatency.
	ReactionTime float64
	// RobotSpeed v_r towards the operator; StoppingDistance Ss when known
	// (0: v_r·Ts).
	RobotSpeed       float64
	StoppingDistance float64
	// Intrusion C, HumanUncertainty Zd, RobotUncertainty Zr (ISO/TS 15066).
	Intrusion        float64
	HumanUncertainty float64
	RobotUncertainty float64
	// DetectionCapability d of the sensing for ISO 13855 (0: not given).
	DetectionCapability float64
}

// Horizon is the time a warning must come ahead of a hand's arrival for the
// robot to be at rest when it arrives: the stopping time plus the system
// latency. It is also the overall stopping performance T used for the
// ISO 13855 minimum distance in References.
func (s StoppingData) Horizon() float64 { return s.StoppingTime + s.SystemLatency }

// References are the standards' distances for one set of stopping data, to
// be shown beside forecast-based advisory margins. A distance that cannot
// be computed has a nil pointer and its reason in the matching Err field.
type References struct {
	// T is the overall stopping performance used for ISO 13855 (Horizon).
	T float64
	// MinDistance is ISO 13855:2010 S = K·T + C for a detection zone
	// orthogonal to the direction of approach (d <= 40 mm).
	MinDistance    *MinimumDistance
	MinDistanceErr string
	// Separation is the ISO/TS 15066 protective separation distance with
	// v_h = WalkingSpeed, Tr = ReactionTime + SystemLatency, Ts, v_r, Ss, C,
	// Zd, Zr.
	Separation    *Separation
	SeparationIn  SeparationInputs
	SeparationErr string
}

// ReferenceDistances computes the ISO 13855 minimum distance (T = stopping
// time + system latency, d = detection capability) and the ISO/TS 15066
// protective separation distance (v_h = 1.6 m/s, Tr = reaction time + system
// latency) for the stopping data. A missing input (no detection capability,
// no stopping time, no robot speed) leaves that distance out with a reason.
func ReferenceDistances(s StoppingData) References {
	r := References{T: s.Horizon()}
	switch {
	case !(s.DetectionCapability > 0):
		r.MinDistanceErr = "no detection capability (robot.detection_capability) given"
	case !(s.StoppingTime > 0):
		r.MinDistanceErr = "no stopping time (robot.stopping_time) given"
	default:
		md, err := MinDistanceOrthogonal(r.T, s.DetectionCapability)
		if err != nil {
			r.MinDistanceErr = err.Error()
		} else {
			r.MinDistance = &md
		}
	}
	r.SeparationIn = SeparationInputs{
		HumanSpeed:       WalkingSpeed,
		RobotSpeed:       s.RobotSpeed,
		ReactionTime:     s.ReactionTime + s.SystemLatency,
		StoppingTime:     s.StoppingTime,
		StoppingDistance: s.StoppingDistance,
		Intrusion:        s.Intrusion,
		HumanUncertainty: s.HumanUncertainty,
		RobotUncertainty: s.RobotUncertainty,
	}
	switch {
	case !(s.StoppingTime > 0):
		r.SeparationErr = "no stopping time (robot.stopping_time) given"
	case !(s.RobotSpeed > 0) && !(s.StoppingDistance > 0):
		r.SeparationErr = "no robot speed (robot.speed) nor stopping distance given"
	default:
		sp, err := ProtectiveSeparation(r.SeparationIn)
		if err != nil {
			r.SeparationErr = err.Error()
		} else {
			r.Separation = &sp
		}
	}
	return r
}

// SweepPoint is one candidate margin of a margin sweep with what it gives
// on the recordings.
type SweepPoint struct {
	Margin float64 `json:"margin_m"`
	// Detected of Entries were warned at least the horizon ahead.
	Detected int `json:"detected"`
	Entries  int `json:"entries"`
	// FalseAlarms of Warnings (warning episodes) were followed by no entry
	// or near miss within the false-alarm window.
	FalseAlarms int `json:"false_alarms"`
	Warnings    int `json:"warnings"`
	// Hours of recording the counts come from.
	Hours float64 `json:"hours"`
}

// Detection is Detected/Entries (NaN without entries).
func (p SweepPoint) Detection() float64 {
	if p.Entries == 0 {
		return math.NaN()
	}
	return float64(p.Detected) / float64(p.Entries)
}

// FalseAlarmsPerHour is FalseAlarms per hour of recording (NaN without
// recording time).
func (p SweepPoint) FalseAlarmsPerHour() float64 {
	if !(p.Hours > 0) {
		return math.NaN()
	}
	return float64(p.FalseAlarms) / p.Hours
}

// ErrNoEntries says a sweep has no entries to size a margin from.
var ErrNoEntries = errors.New("no zone entries in the recordings: detection cannot be measured")

// RecommendMargin returns the smallest margin of the sweep (sorted by
// increasing margin) whose detection rate reaches target (0 < target <= 1).
// When no margin of the sweep reaches it, it returns the largest margin
// with ok false; without entries it returns ErrNoEntries.
func RecommendMargin(sweep []SweepPoint, target float64) (p SweepPoint, ok bool, err error) {
	if !(target > 0 && target <= 1) {
		return SweepPoint{}, false, fmt.Errorf("target detection rate %v: must be in (0, 1]", target)
	}
	if len(sweep) == 0 {
		return SweepPoint{}, false, errors.New("empty margin sweep")
	}
	for i := 1; i < len(sweep); i++ {
		if !(sweep[i].Margin > sweep[i-1].Margin) {
			return SweepPoint{}, false, fmt.Errorf("margin sweep not in increasing order at %d", i)
		}
	}
	if sweep[0].Entries == 0 {
		return SweepPoint{}, false, ErrNoEntries
	}
	for _, q := range sweep {
		// Detected/Entries >= target, in integers to avoid 0.99 rounding:
		// Detected >= ceil(target·Entries) up to 1e-9 of an entry.
		if float64(q.Detected) >= target*float64(q.Entries)-1e-9 {
			return q, true, nil
		}
	}
	return sweep[len(sweep)-1], false, nil
}
