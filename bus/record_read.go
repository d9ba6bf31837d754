package bus

import (
	"bufio"
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"reflect"
	"strconv"
	"strings"
	"time"

	"forereach/forecast"
)

// MaxLine is the longest recording line a reader accepts (bytes).
const MaxLine = 1 << 20

// RecordReader reads a JSONL recording line by line.
type RecordReader struct {
	r    *bufio.Reader
	name string
	line int
	long []byte
}

// NewRecordReader reads the recording in r; name is used in error messages
// (usually the file name).
func NewRecordReader(r io.Reader, name string) *RecordReader {
	return &RecordReader{r: bufio.NewReaderSize(r, 64<<10), name: name}
}

// Next returns the next record. Blank lines are skipped. A bad line gives a
// *forecast.RowError naming file:line:field; the reader stays usable and the
// caller may go on. io.EOF follows the last line. Any other error is fatal.
func (rr *RecordReader) Next() (Record, error) {
	for {
		b, err := rr.readLine()
		if err != nil {
			return Record{}, err
		}
		b = bytes.TrimSpace(b)
		if len(b) == 0 {
			continue
		}
		rec, fe := decodeRecordLine(b)
		if fe != nil {
			return Record{}, rr.rowError(fe)
		}
		rec.Line = rr.line
		return rec, nil
	}
}

func (rr *RecordReader) rowError(fe *fieldError) *forecast.RowError {
	return &forecast.RowError{File: rr.name, Line: rr.line, Field: fe.field, Msg: fe.msg}
}

// errLongLine marks a line beyond MaxLine; it has been skipped.
var errLongLine = errors.New("long line")

// readLine returns the next line without its newline. A line longer than
// MaxLine is skipped and reported as a RowError.
func (rr *RecordReader) readLine() ([]byte, error) {
	rr.line++
	b, err := rr.r.ReadSlice('\n')
	if err == nil || (err == io.EOF && len(b) > 0) {
		return b, nil
	}
	if err != bufio.ErrBufferFull {
		return nil, err
	}
	rr.long = append(rr.long[:0], b...)
	for {
		b, err = rr.r.ReadSlice('\n')
		if len(rr.long) <= MaxLine {
			rr.long = append(rr.long, b...)
		}
		if err == bufio.ErrBufferFull {
			continue
		}
		if err != nil && err != io.EOF {
			return nil, err
		}
		break
	}
	if len(rr.long) > MaxLine {
		return nil, &forecast.RowError{File: rr.name, Line: rr.line, Msg: "line longer than " + strconv.Itoa(MaxLine) + " bytes; skipped"}
	}
	return rr.long, nil
}

// lineWire is every field any line kind (or MQTT payload) may carry. Pointer
// fields tell absent from zero.
type lineWire struct {
	V    *int    `json:"v"`
	Kind *string `json:"kind"`

	// header
	Cell         *string `json:"cell"`
	ConfigDigest string  `json:"config_digest"`
	Forereach    string  `json:"forereach"`
	Start        string  `json:"start"`
	Part         int     `json:"part"`
	Source       string  `json:"source"`

	// sample, robot, advisory
	T       *float64  `json:"t"`
	Arrival float64   `json:"arrival"`
	Track   *string   `json:"track"`
	Pos     []float64 `json:"pos"`
	Q       *float64  `json:"q"`

	// reject
	Topic      *string `json:"topic"`
	Reason     *string `json:"reason"`
	Error      string  `json:"error"`
	Payload    *string `json:"payload"`
	PayloadB64 []byte  `json:"payload_b64"`
	Size       int     `json:"size"`

	// robot
	Frames   []frameWire `json:"frames"`
	Speed    *float64    `json:"speed"`
	StopTime *float64    `json:"stop_time"`
	StopDist *float64    `json:"stop_dist"`

	// advisory
	Seq          *uint64  `json:"seq"`
	Level        *string  `json:"level"`
	Scale        *float64 `json:"scale"`
	Reasons      []Reason `json:"reasons"`
	Horizon      *float64 `json:"horizon"`
	Issued       float64  `json:"issued"`
	AdvisoryOnly *string  `json:"advisory_only"`
}

type frameWire struct {
	Name string    `json:"name"`
	Pos  []float64 `json:"pos"`
	Quat []float64 `json:"quat"`
}

// decodeRecordLine decodes one recording line (without its newline).
func decodeRecordLine(b []byte) (Record, *fieldError) {
	var w lineWire
	if fe := unmarshal(b, &w); fe != nil {
		return Record{}, fe
	}
	if fe := checkVersion(w.V); fe != nil {
		return Record{}, fe
	}
	if w.Kind == nil {
		return Record{}, &fieldError{ReasonMissingField, "kind", "missing line kind"}
	}
	switch k := Kind(*w.Kind); k {
	case KindHeader:
		h := &Header{ConfigDigest: w.ConfigDigest, Version: w.Forereach, Part: w.Part, Source: w.Source}
		if w.Cell == nil {
			return Record{}, &fieldError{ReasonMissingField, "cell", "missing cell name"}
		}
		h.Cell = *w.Cell
		if w.Start != "" {
			t, err := time.Parse(time.RFC3339Nano, w.Start)
			if err != nil {
				return Record{}, &fieldError{ReasonBadField, "start", "not an RFC 3339 time: " + strconv.Quote(w.Start)}
			}
			h.Start = t
		}
		if w.Part < 0 {
			return Record{}, &fieldError{ReasonBadField, "part", "negative part number"}
		}
		return Record{Kind: k, Header: h}, nil
	case KindSample:
		s := &SampleRecord{}
		if fe := sampleFromWire(&w, s, ""); fe != nil {
			return Record{}, fe
		}
		if fe := checkArrival(w.Arrival); fe != nil {
			return Record{}, fe
		}
		s.Arrival = w.Arrival
		return Record{Kind: k, Sample: s}, nil
	case KindReject:
		if w.Topic == nil {
			return Record{}, &fieldError{ReasonMissingField, "topic", "missing topic"}
		}
		if w.Reason == nil || *w.Reason == "" {
			return Record{}, &fieldError{ReasonMissingField, "reason", "missing reason"}
		}
		if fe := checkArrival(w.Arrival); fe != nil {
			return Record{}, fe
		}
		j := &Reject{Arrival: w.Arrival, Topic: *w.Topic, Reason: *w.Reason, Error: w.Error, Size: w.Size}
		switch {
		case w.Payload != nil && *w.Payload != "":
			j.Payload = []byte(*w.Payload)
		case len(w.PayloadB64) > 0:
			j.Payload = w.PayloadB64
		}
		if j.Size < len(j.Payload) {
			return Record{}, &fieldError{ReasonBadField, "size", "smaller than the recorded payload"}
		}
		return Record{Kind: k, Reject: j}, nil
	case KindRobot:
		st := &RobotState{}
		if fe := robotFromWire(&w, st); fe != nil {
			return Record{}, fe
		}
		if fe := checkArrival(w.Arrival); fe != nil {
			return Record{}, fe
		}
		st.Arrival = w.Arrival
		return Record{Kind: k, Robot: st}, nil
	case KindAdvisory:
		a := &Advisory{}
		if fe := advisoryFromWire(&w, a); fe != nil {
			return Record{}, fe
		}
		return Record{Kind: k, Advisory: a}, nil
	default:
		return Record{}, &fieldError{ReasonBadField, "kind", "unknown line kind " + strconv.Quote(*w.Kind)}
	}
}

func checkArrival(a float64) *fieldError {
	if a < 0 {
		return &fieldError{ReasonBadField, "arrival", "negative time"}
	}
	return nil
}

func checkVersion(v *int) *fieldError {
	if v == nil {
		return &fieldError{ReasonMissingField, "v", "missing schema version"}
	}
	if *v != Version {
		return &fieldError{ReasonBadVersion, "v", "schema version " + strconv.Itoa(*v) + " is not one this forereach reads (" + strconv.Itoa(Version) + ")"}
	}
	return nil
}

// unmarshal decodes a JSON object and turns encoding/json's errors into a
// reason, a field and a message.
func unmarshal(b []byte, v any) *fieldError {
	err := json.Unmarshal(b, v)
	if err == nil {
		return nil
	}
	return jsonError(b, err)
}

func jsonError(b []byte, err error) *fieldError {
	var se *json.SyntaxError
	var te *json.UnmarshalTypeError
	switch {
	case errors.As(err, &se):
		msg := "invalid JSON at byte " + strconv.FormatInt(se.Offset, 10) + ": " + se.Error()
		if bytes.Contains(b, []byte("NaN")) || bytes.Contains(b, []byte("Infinity")) {
			return &fieldError{ReasonNonFinite, "", "NaN and Infinity are not JSON numbers (" + msg + ")"}
		}
		return &fieldError{ReasonBadJSON, "", msg}
	case errors.As(err, &te):
		if te.Field == "" {
			return &fieldError{ReasonBadJSON, "", "want a JSON object, got " + te.Value}
		}
		if strings.HasPrefix(te.Value, "number") && (te.Type.Kind() == reflect.Float64 || te.Type.Kind() == reflect.Float32) {
			return &fieldError{ReasonNonFinite, te.Field, te.Value + " is beyond the range of float64"}
		}
		return &fieldError{ReasonBadField, te.Field, "want " + typeName(te.Type.String()) + ", got " + te.Value}
	default:
		return &fieldError{ReasonBadJSON, "", err.Error()}
	}
}

func typeName(t string) string {
	switch {
	case t == "float64" || t == "float32":
		return "a number"
	case t == "string":
		return "a string"
	case strings.HasPrefix(t, "int") || strings.HasPrefix(t, "uint"):
		return "a whole number"
	case strings.HasPrefix(t, "[]") || strings.HasPrefix(t, "["):
		return "an array"
	case t == "bool":
		return "true or false"
	default:
		return "an object"
	}
}

// sampleFromWire validates a sample's fields; at prefixes field names
// (e.g. "samples[2].").
func sampleFromWire(w *lineWire, s *SampleRecord, at string) *fieldError {
	if w.T == nil {
		return &fieldError{ReasonMissingField, at + "t", "missing source time (seconds)"}
	}
	if fe := checkTime(at+"t", *w.T); fe != nil {
		return fe
	}
	if w.Track == nil {
		return &fieldError{ReasonMissingField, at + "track", "missing track id"}
	}
	if m := checkTrack(*w.Track); m != "" {
		return &fieldError{ReasonBadField, at + "track", m}
	}
	if fe := checkPos(at+"pos", w.Pos); fe != nil {
		return fe
	}
	s.Track = *w.Track
	s.T = *w.T
	s.P.X, s.P.Y, s.P.Z = w.Pos[0], w.Pos[1], w.Pos[2]
	s.HasQuality = w.Q != nil
	s.Quality = 0
	if w.Q != nil {
		if fe := checkQuality(at+"q", *w.Q); fe != nil {
			return fe
		}
		s.Quality = *w.Q
	}
	return nil
}

func robotFromWire(w *lineWire, st *RobotState) *fieldError {
	if w.T == nil {
		return &fieldError{ReasonMissingField, "t", "missing source time (seconds)"}
	}
	st.T = *w.T
	st.Speed, st.StopTime, st.StopDist = w.Speed, w.StopTime, w.StopDist
	if len(w.Frames) > MaxFrames {
		return &fieldError{ReasonBadField, "frames", "more than " + strconv.Itoa(MaxFrames) + " frames"}
	}
	st.Frames = make([]FramePos, len(w.Frames))
	for i, f := range w.Frames {
		at := "frames[" + strconv.Itoa(i) + "]"
		if f.Pos == nil {
			return &fieldError{ReasonMissingField, at + ".pos", "missing frame position"}
		}
		if len(f.Pos) != 3 {
			return &fieldError{ReasonBadField, at + ".pos", "want 3 numbers [x, y, z], got " + strconv.Itoa(len(f.Pos))}
		}
		if f.Quat == nil {
			return &fieldError{ReasonMissingField, at + ".quat", "missing frame orientation"}
		}
		if len(f.Quat) != 4 {
			return &fieldError{ReasonBadField, at + ".quat", "want 4 numbers [w, x, y, z], got " + strconv.Itoa(len(f.Quat))}
		}
		st.Frames[i].Name = f.Name
		copy(st.Frames[i].Pos[:], f.Pos)
		copy(st.Frames[i].Quat[:], f.Quat)
	}
	return checkRobot(st)
}

func advisoryFromWire(w *lineWire, a *Advisory) *fieldError {
	if w.Cell == nil {
		return &fieldError{ReasonMissingField, "cell", "missing cell name"}
	}
	if w.T == nil {
		return &fieldError{ReasonMissingField, "t", "missing time"}
	}
	if fe := checkTime("t", *w.T); fe != nil {
		return fe
	}
	if w.Seq == nil {
		return &fieldError{ReasonMissingField, "seq", "missing sequence number"}
	}
	if w.Level == nil || *w.Level == "" {
		return &fieldError{ReasonMissingField, "level", "missing level"}
	}
	if w.Scale == nil {
		return &fieldError{ReasonMissingField, "scale", "missing speed scale"}
	}
	if !(*w.Scale >= 0 && *w.Scale <= 1) {
		return &fieldError{ReasonBadField, "scale", "speed scale must be in [0, 1]"}
	}
	if w.Horizon == nil {
		return &fieldError{ReasonMissingField, "horizon", "missing horizon"}
	}
	if !(*w.Horizon >= 0) {
		return &fieldError{ReasonBadField, "horizon", "negative horizon"}
	}
	if w.AdvisoryOnly == nil || *w.AdvisoryOnly == "" {
		return &fieldError{ReasonMissingField, "advisory_only", "missing advisory-only statement"}
	}
	if w.Issued < 0 {
		return &fieldError{ReasonBadField, "issued", "negative time"}
	}
	for i, r := range w.Reasons {
		if r.Zone == "" && r.Track == "" && r.Text == "" {
			return &fieldError{ReasonBadField, "reasons[" + strconv.Itoa(i) + "]", "empty reason"}
		}
	}
	*a = Advisory{Cell: *w.Cell, T: *w.T, Seq: *w.Seq, Level: *w.Level, Scale: *w.Scale,
		Reasons: w.Reasons, Horizon: *w.Horizon, Issued: w.Issued, AdvisoryOnly: *w.AdvisoryOnly}
	if a.Reasons == nil {
		a.Reasons = []Reason{}
	}
	return nil
}
