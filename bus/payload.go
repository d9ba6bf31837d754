package bus

import (
	"encoding/json"
	"math"
	"strconv"

	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// Hand samples arrive as one sample per message,
//
//	{"v":1,"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97}
//
// or as a batch,
//
//	{"v":1,"samples":[{"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05]},
//	                  {"t":1741072329.512,"track":"op1/left","pos":[0.9,0.30,1.01],"q":0.8}]}
//
// t is the source time in seconds (Unix time when the source's clock is
// synchronised, which is what makes the input latency measurable), track the
// track id, pos the position in metres in the cell frame, q an optional
// quality in [0, 1]. Items of a batch may repeat "v". Unknown fields are
// ignored, so that sources may add their own.

// absent marks a string field the payload did not set.
const absent = "\x00absent"

// sampleMsg is the decoding target of a sample payload, reused from message
// to message. NaN (which JSON cannot carry) marks numbers left out.
type sampleMsg struct {
	V       int          `json:"v"`
	T       float64      `json:"t"`
	Track   string       `json:"track"`
	Pos     []float64    `json:"pos"`
	Q       float64      `json:"q"`
	Samples samplesField `json:"samples"`
}

const noVersion = math.MinInt

func (m *sampleMsg) reset() {
	m.V, m.T, m.Track, m.Q = noVersion, math.NaN(), absent, math.NaN()
	if m.Pos == nil {
		m.Pos = make([]float64, 0, 4)
	}
	m.Pos = m.Pos[:0]
	m.Samples.present = false
	m.Samples.items = m.Samples.items[:0]
}

// samplesField records whether "samples" was present, and keeps the items
// raw so that each is decoded on its own (with its own errors).
type samplesField struct {
	present bool
	items   []json.RawMessage
}

func (s *samplesField) UnmarshalJSON(b []byte) error {
	s.present = true
	return json.Unmarshal(b, &s.items)
}

// SampleDecoder decodes hand-sample payloads. It reuses its buffers, so one
// decoder serves one goroutine; the slices it returns are valid until the
// next call.
type SampleDecoder struct {
	// MaxSize is the largest payload accepted, in bytes (0: DefaultMaxSize).
	MaxSize int
	// Tracks, when not empty, is the set of track ids accepted.
	Tracks map[string]bool

	m     sampleMsg
	item  sampleMsg
	out   []SampleRecord
	errs  []*PayloadError
	track map[string]string // interned track ids
}

// Decode decodes one payload received on topic. It returns the samples it
// accepted and one error per refused payload or batch item; a batch with
// some bad items still yields its good ones.
func (d *SampleDecoder) Decode(topic string, payload []byte) ([]SampleRecord, []*PayloadError) {
	d.out, d.errs = d.out[:0], d.errs[:0]
	max := d.MaxSize
	if max <= 0 {
		max = DefaultMaxSize
	}
	if len(payload) > max {
		d.fail(topic, &fieldError{ReasonOversize, "", "payload of " + strconv.Itoa(len(payload)) + " bytes exceeds the limit of " + strconv.Itoa(max)})
		return d.out, d.errs
	}
	m := &d.m
	m.reset()
	if err := json.Unmarshal(payload, m); err != nil {
		d.fail(topic, jsonError(payload, err))
		return d.out, d.errs
	}
	if m.V == noVersion {
		d.fail(topic, &fieldError{ReasonMissingField, "v", "missing schema version"})
		return d.out, d.errs
	}
	if m.V != Version {
		d.fail(topic, &fieldError{ReasonBadVersion, "v", "schema version " + strconv.Itoa(m.V) + " is not one this forereach reads (" + strconv.Itoa(Version) + ")"})
		return d.out, d.errs
	}
	if !m.Samples.present {
		d.one(topic, m, "")
		return d.out, d.errs
	}
	if m.Track != absent || !math.IsNaN(m.T) || len(m.Pos) > 0 {
		d.fail(topic, &fieldError{ReasonBadField, "samples", "a batch must not also carry t, track or pos at the top level"})
		return d.out, d.errs
	}
	if len(m.Samples.items) == 0 {
		d.fail(topic, &fieldError{ReasonBadField, "samples", "empty batch"})
		return d.out, d.errs
	}
	if len(m.Samples.items) > MaxBatch {
		d.fail(topic, &fieldError{ReasonBadField, "samples", strconv.Itoa(len(m.Samples.items)) + " samples in one batch (at most " + strconv.Itoa(MaxBatch) + ")"})
		return d.out, d.errs
	}
	for i, raw := range m.Samples.items {
		at := "samples[" + strconv.Itoa(i) + "]"
		it := &d.item
		it.reset()
		if err := json.Unmarshal(raw, it); err != nil {
			fe := jsonError(raw, err)
			fe.field = joinField(at, fe.field)
			d.fail(topic, fe)
			continue
		}
		if it.V != noVersion && it.V != Version {
			d.fail(topic, &fieldError{ReasonBadVersion, at + ".v", "schema version " + strconv.Itoa(it.V) + " is not one this forereach reads"})
			continue
		}
		if it.Samples.present {
			d.fail(topic, &fieldError{ReasonBadField, at + ".samples", "batches do not nest"})
			continue
		}
		d.one(topic, it, at+".")
	}
	return d.out, d.errs
}

func joinField(at, f string) string {
	if f == "" {
		return at
	}
	return at + "." + f
}

// one validates a single sample and appends it to d.out.
func (d *SampleDecoder) one(topic string, m *sampleMsg, at string) {
	if math.IsNaN(m.T) {
		d.fail(topic, &fieldError{ReasonMissingField, at + "t", "missing source time (seconds)"})
		return
	}
	if fe := checkTime(at+"t", m.T); fe != nil {
		d.fail(topic, fe)
		return
	}
	if m.Track == absent {
		d.fail(topic, &fieldError{ReasonMissingField, at + "track", "missing track id"})
		return
	}
	if msg := checkTrack(m.Track); msg != "" {
		d.fail(topic, &fieldError{ReasonBadField, at + "track", msg})
		return
	}
	if len(m.Pos) == 0 {
		d.fail(topic, &fieldError{ReasonMissingField, at + "pos", "missing (want [x, y, z] in metres)"})
		return
	}
	if fe := checkPos(at+"pos", m.Pos); fe != nil {
		d.fail(topic, fe)
		return
	}
	hasQ := !math.IsNaN(m.Q)
	if hasQ {
		if fe := checkQuality(at+"q", m.Q); fe != nil {
			d.fail(topic, fe)
			return
		}
	}
	if len(d.Tracks) > 0 && !d.Tracks[m.Track] {
		d.fail(topic, &fieldError{ReasonUnknownTrack, at + "track", "track " + strconv.Quote(m.Track) + " is not listed in bus.tracks"})
		return
	}
	track := d.intern(m.Track)
	s := SampleRecord{Sample: forecast.Sample{Track: track, T: m.T, P: r3.Vec{X: m.Pos[0], Y: m.Pos[1], Z: m.Pos[2]}}, HasQuality: hasQ}
	if hasQ {
		s.Quality = m.Q
	}
	d.out = append(d.out, s)
}

// intern returns a canonical copy of a track id, so that the strings of a
// track seen before are shared (bounded: at most 1024 ids are kept).
func (d *SampleDecoder) intern(s string) string {
	if v, ok := d.track[s]; ok {
		return v
	}
	if d.track == nil {
		d.track = map[string]string{}
	}
	if len(d.track) < 1024 {
		d.track[s] = s
	}
	return s
}

func (d *SampleDecoder) fail(topic string, fe *fieldError) {
	d.errs = append(d.errs, &PayloadError{Topic: topic, Reason: fe.reason, Field: fe.field, Msg: fe.msg})
}

// Robot states arrive as
//
//	{"v":1,"t":1741072329.52,"frames":[{"name":"tool","pos":[1.6,0.2,1.1],"quat":[1,0,0,0]}],
//	 "speed":0.8,"stop_time":0.35,"stop_dist":0.12}
//
// t is the source time (s, on the hand samples' clock), frames the poses of
// named robot frames in the cell frame (pos in metres, quat a unit
// quaternion [w, x, y, z]), speed the robot's speed towards the operator
// (m/s), stop_time and stop_dist its current stopping time (s) and distance
// (m). Everything but v and t is optional.

// DecodeRobot decodes a robot-state payload received on topic.
func DecodeRobot(topic string, payload []byte, maxSize int) (RobotState, *PayloadError) {
	if maxSize <= 0 {
		maxSize = DefaultMaxSize
	}
	perr := func(fe *fieldError) *PayloadError {
		return &PayloadError{Topic: topic, Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	if len(payload) > maxSize {
		return RobotState{}, perr(&fieldError{ReasonOversize, "", "payload of " + strconv.Itoa(len(payload)) + " bytes exceeds the limit of " + strconv.Itoa(maxSize)})
	}
	var w lineWire
	if fe := unmarshal(payload, &w); fe != nil {
		return RobotState{}, perr(fe)
	}
	if fe := checkVersion(w.V); fe != nil {
		return RobotState{}, perr(fe)
	}
	var st RobotState
	if fe := robotFromWire(&w, &st); fe != nil {
		return RobotState{}, perr(fe)
	}
	return st, nil
}

// PolicyRobot converts a robot state for the advisory engine.
func PolicyRobot(st *RobotState) policy.RobotState {
	out := policy.RobotState{T: st.T, Frames: make([]policy.FramePose, len(st.Frames))}
	for i, f := range st.Frames {
		out.Frames[i] = policy.FramePose{Frame: f.Name, Pose: zones.Pose{
			Pos: r3.Vec{X: f.Pos[0], Y: f.Pos[1], Z: f.Pos[2]},
			Rot: r3.Rotation{Real: f.Quat[0], Imag: f.Quat[1], Jmag: f.Quat[2], Kmag: f.Quat[3]},
		}}
	}
	if st.Speed != nil {
		out.HasSpeed, out.Speed = true, *st.Speed
	}
	if st.StopTime != nil {
		out.HasStopping, out.StoppingTime = true, *st.StopTime
		if st.StopDist != nil {
			out.StoppingDistance = *st.StopDist
		}
	}
	return out
}

// FromPolicy turns the engine's advisory into the published form.
func FromPolicy(cell string, a *policy.Advisory) Advisory {
	out := Advisory{Cell: cell, T: a.T, Seq: a.Seq, Level: a.Level.String(), Scale: a.Scale,
		Horizon: a.Horizon, AdvisoryOnly: safety.Short, Reasons: make([]Reason, len(a.Reasons))}
	for i := range a.Reasons {
		out.Reasons[i] = reasonFromPolicy(&a.Reasons[i])
	}
	return out
}

func reasonFromPolicy(r *policy.Reason) Reason {
	f := func(x float64) *float64 {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil
		}
		return &x
	}
	out := Reason{Track: r.Track, Zone: r.Zone, Rule: r.Rule, Level: r.Level.String(), Sep: f(r.Separation)}
	if r.Level == policy.LevelReduce {
		out.Scale = f(r.Scale)
	}
	if r.HasEntry {
		out.EntryIn = f(r.TimeToEntry)
	}
	if r.Rule != policy.RuleTrackingLost {
		out.MinSep = f(r.MinSeparation)
	}
	if r.Required > 0 {
		out.Required = f(r.Required)
	}
	out.Text = ReasonText(&out)
	return out
}

// ReasonText describes a reason in words, e.g. `op1/right: entry into
// "pallet-swing" forecast in 0.21 s (rule approach: reduce)`.
func ReasonText(r *Reason) string {
	s := r.Track + ": "
	switch {
	case r.Rule == policy.RuleTrackingLost:
		s += "tracking lost near " + strconv.Quote(r.Zone)
	case r.Rule == policy.RuleSeparation && r.Sep != nil && r.Required != nil:
		s += "separation " + mm(*r.Sep) + " from " + strconv.Quote(r.Zone) + " is below the protective separation distance " + mm(*r.Required)
	case r.Sep != nil && *r.Sep <= 0:
		s += "inside " + strconv.Quote(r.Zone)
	case r.EntryIn != nil && *r.EntryIn > 0.005:
		s += "entry into " + strconv.Quote(r.Zone) + " forecast in " + strconv.FormatFloat(*r.EntryIn, 'f', 2, 64) + " s"
	case r.EntryIn != nil && r.Sep != nil:
		s += mm(*r.Sep) + " from " + strconv.Quote(r.Zone) + ", within its margin"
	case r.Sep != nil:
		s += mm(*r.Sep) + " from " + strconv.Quote(r.Zone)
	default:
		s += "near " + strconv.Quote(r.Zone)
	}
	if r.Rule != "" {
		s += " (rule " + r.Rule
		if r.Level != "" {
			s += ": " + r.Level
		}
		s += ")"
	}
	return s
}

func mm(m float64) string { return strconv.FormatFloat(m*1000, 'f', 0, 64) + " mm" }

// EncodeSample writes the single-sample payload of s (for sources, the
// simulator and tests).
func EncodeSample(dst []byte, s *SampleRecord) []byte {
	return appendSample(dst, `{"v":1`, s, false)
}

// appendSample appends the JSON object of s after prefix (the object's
// opening and any fields before the sample's): t, arrival when withArrival
// and set, track, pos, q when given. The payload and the recording line
// share it, so that both always spell a sample the same way.
func appendSample(dst []byte, prefix string, s *SampleRecord, withArrival bool) []byte {
	dst = append(dst, prefix...)
	dst = append(dst, `,"t":`...)
	dst = appendFloat(dst, s.T)
	if withArrival && s.Arrival != 0 {
		dst = append(dst, `,"arrival":`...)
		dst = appendFloat(dst, s.Arrival)
	}
	dst = append(dst, `,"track":`...)
	dst = appendString(dst, s.Track)
	dst = append(dst, `,"pos":[`...)
	dst = appendFloat(dst, s.P.X)
	dst = append(dst, ',')
	dst = appendFloat(dst, s.P.Y)
	dst = append(dst, ',')
	dst = appendFloat(dst, s.P.Z)
	dst = append(dst, ']')
	if s.HasQuality {
		dst = append(dst, `,"q":`...)
		dst = appendFloat(dst, s.Quality)
	}
	return append(dst, '}')
}

// EncodeAdvisory returns the advisory payload.
func EncodeAdvisory(a *Advisory) ([]byte, error) {
	return json.Marshal(advisoryWire{V: Version, Advisory: a})
}

type statusWire struct {
	V int `json:"v"`
	*Status
}

// EncodeStatus returns the status payload.
func EncodeStatus(s *Status) ([]byte, error) {
	return json.Marshal(statusWire{Version, s})
}

// DecodeAdvisory decodes an advisory payload (for consumers and tests).
func DecodeAdvisory(payload []byte) (Advisory, error) {
	var w lineWire
	if fe := unmarshal(payload, &w); fe != nil {
		return Advisory{}, &PayloadError{Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	if fe := checkVersion(w.V); fe != nil {
		return Advisory{}, &PayloadError{Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	var a Advisory
	if fe := advisoryFromWire(&w, &a); fe != nil {
		return Advisory{}, &PayloadError{Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	return a, nil
}

// DecodeStatus decodes a status payload (for consumers and tests).
func DecodeStatus(payload []byte) (Status, error) {
	var w struct {
		V *int `json:"v"`
		Status
	}
	if err := json.Unmarshal(payload, &w); err != nil {
		fe := jsonError(payload, err)
		return Status{}, &PayloadError{Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	if fe := checkVersion(w.V); fe != nil {
		return Status{}, &PayloadError{Reason: fe.reason, Field: fe.field, Msg: fe.msg}
	}
	if w.State != StateOnline && w.State != StateOffline {
		return Status{}, &PayloadError{Reason: ReasonBadField, Field: "state", Msg: "want online or offline, got " + strconv.Quote(w.State)}
	}
	return w.Status, nil
}
