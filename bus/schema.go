package bus

import (
	"math"
	"strconv"
	"unicode"
	"unicode/utf8"

	"forereach/forecast"
)

// Version is the schema version carried in the "v" field of every MQTT
// payload and every recording line. A reader refuses anything newer.
const Version = 1

// Limits on what the decoders accept. Positions are in the cell frame, so a
// coordinate beyond MaxCoord metres is a fault of the source, not a place.
const (
	MaxCoord       = 1000.0 // metres, per coordinate
	MaxTrackLen    = 64     // bytes of a track id
	MaxBatch       = 1000   // samples in one batch message
	MaxFrames      = 64     // frames in one robot state
	DefaultMaxSize = 65536  // bytes of one MQTT payload (bus.max_payload)
)

// Rejection reasons of the decoders, as counted in metrics and written in
// recordings. The advisory engine's own reasons (policy.RejectReason names,
// such as "implausible-speed") are used as they are.
const (
	ReasonOversize     = "oversize"      // payload larger than bus.max_payload
	ReasonBadJSON      = "bad-json"      // not a JSON object
	ReasonNonFinite    = "non-finite"    // NaN, Infinity or a number beyond float64
	ReasonBadVersion   = "bad-version"   // "v" is not a schema version we read
	ReasonMissingField = "missing-field" // a required field is absent or null
	ReasonBadField     = "bad-field"     // a field of the wrong type or out of range
	ReasonUnknownTrack = "unknown-track" // a track not listed in bus.tracks
)

// Reasons lists the decoders' rejection reasons.
var Reasons = []string{ReasonOversize, ReasonBadJSON, ReasonNonFinite, ReasonBadVersion,
	ReasonMissingField, ReasonBadField, ReasonUnknownTrack}

// PayloadError says what was wrong with one MQTT payload (or one sample of a
// batch). It names the topic, the field (a JSON path such as
// "samples[3].pos"; empty when the payload as a whole is bad) and the reason
// (one of the Reason constants).
type PayloadError struct {
	Topic  string
	Reason string
	Field  string
	Msg    string
}

func (e *PayloadError) Error() string {
	s := "topic " + strconv.Quote(e.Topic) + ": "
	if e.Field != "" {
		s += e.Field + ": "
	}
	return s + e.Msg + " (" + e.Reason + ")"
}

// fieldError is a validation failure before it is attached to a topic or a
// file line.
type fieldError struct {
	reason, field, msg string
}

// SampleRecord is one accepted hand sample as recorded: the sample itself,
// when it arrived (wall clock, Unix seconds; 0 when unknown, as in files
// converted from elsewhere) and the source's quality figure when it sent one.
type SampleRecord struct {
	forecast.Sample
	Arrival    float64
	Quality    float64 // in [0, 1], meaningful when HasQuality
	HasQuality bool
}

// RobotState is the robot's state as published by its controller (or a
// bridge): poses of named frames in the cell frame, the speed of the robot
// towards the operator, and its current stopping time and distance. Fields
// the robot does not send are nil: the configured values apply.
type RobotState struct {
	T        float64    `json:"t"`                   // source time, seconds
	Frames   []FramePos `json:"frames,omitempty"`    // poses of robot frames
	Speed    *float64   `json:"speed,omitempty"`     // m/s towards the operator
	StopTime *float64   `json:"stop_time,omitempty"` // s
	StopDist *float64   `json:"stop_dist,omitempty"` // m
	// Arrival is the wall-clock time (Unix seconds) the state was received;
	// recordings only.
	Arrival float64 `json:"arrival,omitempty"`
}

// FramePos is the pose of one robot frame: position (m, cell frame) and
// orientation as a unit quaternion [w, x, y, z].
type FramePos struct {
	Name string     `json:"name"`
	Pos  [3]float64 `json:"pos"`
	Quat [4]float64 `json:"quat"`
}

// Advisory is one advisory of a cell: the requested level and speed scale,
// the reasons, and the statement that it is advisory only. Seq increases by
// one per advisory published by a service instance.
type Advisory struct {
	Cell    string   `json:"cell"`
	T       float64  `json:"t"`       // time on the samples' axis, seconds
	Seq     uint64   `json:"seq"`     // sequence number
	Level   string   `json:"level"`   // requested level (names defined by the engine)
	Scale   float64  `json:"scale"`   // requested speed scale in [0, 1]; 1: no reduction
	Reasons []Reason `json:"reasons"` // why; empty when clear
	Horizon float64  `json:"horizon"` // seconds the forecast looks ahead
	// Issued is the wall-clock time (Unix seconds) the service issued it;
	// 0 when replayed from a file.
	Issued       float64 `json:"issued,omitempty"`
	AdvisoryOnly string  `json:"advisory_only"` // always safety.Short
}

// Reason is one cause of an advisory: a track's forecast against a zone
// under a rule.
type Reason struct {
	Track string `json:"track"`
	Zone  string `json:"zone"`
	Rule  string `json:"rule,omitempty"`
	// Level and Scale requested by this reason alone.
	Level string   `json:"level,omitempty"`
	Scale *float64 `json:"scale,omitempty"`
	// EntryIn is the forecast time from now until the hand (with its
	// uncertainty radius and the zone's margin) reaches the zone, in
	// seconds; absent when the forecast does not reach it.
	EntryIn *float64 `json:"entry_in,omitempty"`
	// Sep is the distance from the hand's latest measured position to the
	// zone's shape (m, negative inside; the margin is not subtracted).
	Sep *float64 `json:"sep,omitempty"`
	// MinSep is the minimum forecast separation over the horizon: distance
	// to the shape minus uncertainty radius minus margin (m).
	MinSep *float64 `json:"min_sep,omitempty"`
	// Required is the protective separation distance (m) for the
	// protective-separation rule.
	Required *float64 `json:"required,omitempty"`
	// Text says the same in words.
	Text string `json:"text,omitempty"`
}

// Status is the retained status message of a service instance; the broker
// publishes the offline form as the instance's last will.
type Status struct {
	Cell         string `json:"cell"`
	State        string `json:"state"` // "online" or "offline"
	Version      string `json:"version"`
	ConfigDigest string `json:"config_digest"`
	// Since is when the service instance started (RFC 3339, UTC); for an
	// orderly stop, when it stopped.
	Since        string `json:"since"`
	AdvisoryOnly string `json:"advisory_only"`
}

// Status states.
const (
	StateOnline  = "online"
	StateOffline = "offline"
)

// checkTrack validates a track id: 1 to MaxTrackLen bytes of valid UTF-8,
// printable, without spaces.
func checkTrack(s string) string {
	if s == "" {
		return "empty track id"
	}
	if len(s) > MaxTrackLen {
		return "track id longer than " + strconv.Itoa(MaxTrackLen) + " bytes"
	}
	if !utf8.ValidString(s) {
		return "track id is not valid UTF-8"
	}
	for _, r := range s {
		if !unicode.IsPrint(r) || unicode.IsSpace(r) {
			return "track id " + strconv.Quote(s) + " contains a space or control character"
		}
	}
	return ""
}

// checkCoord validates one position coordinate.
func checkCoord(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return "not a finite number"
	}
	if x < -MaxCoord || x > MaxCoord {
		return strconv.FormatFloat(x, 'g', -1, 64) + " m is outside ±1000 m of the cell origin"
	}
	return ""
}

// checkPos validates a position given as a JSON array of numbers.
func checkPos(field string, p []float64) *fieldError {
	if p == nil {
		return &fieldError{ReasonMissingField, field, "missing (want [x, y, z] in metres)"}
	}
	if len(p) != 3 {
		return &fieldError{ReasonBadField, field, "want 3 numbers [x, y, z], got " + strconv.Itoa(len(p))}
	}
	for i, x := range p {
		if m := checkCoord(x); m != "" {
			return &fieldError{ReasonBadField, field + "[" + strconv.Itoa(i) + "]", m}
		}
	}
	return nil
}

// checkTime validates a source time.
func checkTime(field string, t float64) *fieldError {
	if math.IsNaN(t) || math.IsInf(t, 0) {
		return &fieldError{ReasonNonFinite, field, "not a finite number"}
	}
	if t < 0 {
		return &fieldError{ReasonBadField, field, "negative time " + strconv.FormatFloat(t, 'g', -1, 64)}
	}
	return nil
}

// checkQuality validates a quality figure.
func checkQuality(field string, q float64) *fieldError {
	if !(q >= 0 && q <= 1) {
		return &fieldError{ReasonBadField, field, "quality " + strconv.FormatFloat(q, 'g', -1, 64) + " is outside [0, 1]"}
	}
	return nil
}

// checkRobot validates a robot state.
func checkRobot(st *RobotState) *fieldError {
	if fe := checkTime("t", st.T); fe != nil {
		return fe
	}
	if len(st.Frames) > MaxFrames {
		return &fieldError{ReasonBadField, "frames", "more than " + strconv.Itoa(MaxFrames) + " frames"}
	}
	seen := map[string]bool{}
	for i := range st.Frames {
		f := &st.Frames[i]
		at := "frames[" + strconv.Itoa(i) + "]"
		if f.Name == "" {
			return &fieldError{ReasonMissingField, at + ".name", "missing frame name"}
		}
		if seen[f.Name] {
			return &fieldError{ReasonBadField, at + ".name", "frame " + strconv.Quote(f.Name) + " given twice"}
		}
		seen[f.Name] = true
		for k, x := range f.Pos {
			if m := checkCoord(x); m != "" {
				return &fieldError{ReasonBadField, at + ".pos[" + strconv.Itoa(k) + "]", m}
			}
		}
		n := math.Sqrt(f.Quat[0]*f.Quat[0] + f.Quat[1]*f.Quat[1] + f.Quat[2]*f.Quat[2] + f.Quat[3]*f.Quat[3])
		// A unit quaternion to within 1e-3 (rounding of a sender's
		// printout); normalised here so that nothing downstream drifts.
		if !(math.Abs(n-1) <= 1e-3) {
			return &fieldError{ReasonBadField, at + ".quat", "not a unit quaternion [w, x, y, z] (norm " + strconv.FormatFloat(n, 'g', 6, 64) + ")"}
		}
		if math.Abs(n-1) > 1e-12 {
			for k := range f.Quat {
				f.Quat[k] /= n
			}
		}
	}
	if st.Speed != nil && !(math.Abs(*st.Speed) <= 20) {
		return &fieldError{ReasonBadField, "speed", "speed towards the operator must be within ±20 m/s"}
	}
	if st.StopTime != nil && !(*st.StopTime >= 0 && *st.StopTime <= 10) {
		return &fieldError{ReasonBadField, "stop_time", "stopping time must be in [0, 10] s"}
	}
	if st.StopDist != nil && !(*st.StopDist >= 0 && *st.StopDist <= 10) {
		return &fieldError{ReasonBadField, "stop_dist", "stopping distance must be in [0, 10] m"}
	}
	if st.StopDist != nil && st.StopTime == nil {
		return &fieldError{ReasonMissingField, "stop_time", "stop_dist given without stop_time"}
	}
	return nil
}
