package bus

import (
	"bufio"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"time"
	"unicode/utf8"
)

// The JSONL recording: one JSON object per line, each with the schema
// version "v" and a "kind":
//
//	{"v":1,"kind":"header","cell":"pl3-palletiser","config_digest":"9f2c…","forereach":"0.1.0","start":"2025-03-04T07:12:09.5Z","part":0,"source":"tcp://127.0.0.1:1883"}
//	{"v":1,"kind":"sample","t":1741072329.512,"arrival":1741072329.514,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97}
//	{"v":1,"kind":"reject","arrival":1741072329.6,"topic":"forereach/pl3-palletiser/hands","reason":"bad-json","error":"…","payload":"{\"t\":","size":5}
//	{"v":1,"kind":"robot","t":1741072329.52,"arrival":1741072329.521,"frames":[{"name":"tool","pos":[1.6,0.2,1.1],"quat":[1,0,0,0]}],"speed":0.8,"stop_time":0.35,"stop_dist":0.12}
//	{"v":1,"kind":"advisory","cell":"pl3-palletiser","t":1741072329.512,"seq":7,"level":"reduce","scale":0.5,"reasons":[…],"horizon":0.5,"issued":1741072329.515,"advisory_only":"advisory only: …"}
//
// A header is the first line of every file (each rotated part starts with
// its own). Times "t" are source times in seconds; "arrival" and "issued"
// are wall-clock Unix seconds. Lengths are metres, speeds m/s.

// Kind is the kind of a recording line.
type Kind string

// Line kinds.
const (
	KindHeader   Kind = "header"
	KindSample   Kind = "sample"
	KindReject   Kind = "reject"
	KindRobot    Kind = "robot"
	KindAdvisory Kind = "advisory"
)

// MaxRecordedPayload is how many bytes of a rejected payload a recording
// keeps.
const MaxRecordedPayload = 512

// Header opens every recording file.
type Header struct {
	Cell         string
	ConfigDigest string    // hex SHA-256 of the cell configuration file
	Version      string    // forereach version that wrote the file
	Start        time.Time // when the recording began (all parts share it)
	Part         int       // 0 for the first file, then 1, 2, … after rotation
	Source       string    // where the data came from (broker URL, "demo", …)
}

// Reject is a message the service refused.
type Reject struct {
	Arrival float64 // wall clock, Unix seconds
	Topic   string
	Reason  string // one of the Reason constants
	Error   string // the full error message
	Payload []byte // the first MaxRecordedPayload bytes at most
	Size    int    // the payload's full size in bytes
}

// Record is one line of a recording. Kind says which of the pointers is set.
type Record struct {
	Kind     Kind
	Line     int // 1-based line in the file
	Header   *Header
	Sample   *SampleRecord
	Reject   *Reject
	Robot    *RobotState
	Advisory *Advisory
}

// Recorder appends lines to a JSONL recording. It is safe for concurrent
// use, although the live service writes from one goroutine. Write errors
// are sticky: the first one is returned by every later call.
type Recorder struct {
	mu       sync.Mutex
	w        *bufio.Writer
	f        io.WriteCloser // the current file when the recorder owns it
	n        int64          // bytes in the current file
	maxBytes int64          // rotate when a file reaches this; 0: never
	open     func(part int) (io.WriteCloser, string, error)
	files    []string
	h        Header
	buf      []byte
	err      error
}

// NewRecorder writes the header line to w and returns a recorder appending
// to it. Nothing is flushed to w until Flush or Close.
func NewRecorder(w io.Writer, h Header) (*Recorder, error) {
	r := &Recorder{w: bufio.NewWriterSize(w, 64<<10), h: h}
	r.writeHeader()
	return r, r.err
}

// CreateRecording starts a recording in directory dir (created if needed):
// files named <cell>_<start>_<part>.jsonl, a new part begun whenever the
// current one reaches maxBytes (0: no rotation). Each part starts with a
// header line, so each can be read on its own.
func CreateRecording(dir string, h Header, maxBytes int64) (*Recorder, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("recording: %w", err)
	}
	if h.Start.IsZero() {
		h.Start = time.Now()
	}
	cell := h.Cell
	if cell == "" {
		cell = "cell"
	}
	cell = strings.Map(func(r rune) rune {
		if r == '/' || r == '\\' || r == os.PathSeparator || r < ' ' {
			return '_'
		}
		return r
	}, cell)
	stamp := h.Start.UTC().Format("20060102T150405.000Z")
	r := &Recorder{maxBytes: maxBytes, h: h}
	r.open = func(part int) (io.WriteCloser, string, error) {
		name := filepath.Join(dir, fmt.Sprintf("%s_%s_%03d.jsonl", cell, stamp, part))
		f, err := os.OpenFile(name, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
		if err != nil {
			return nil, "", fmt.Errorf("recording: %w", err)
		}
		return f, name, nil
	}
	f, name, err := r.open(h.Part)
	if err != nil {
		return nil, err
	}
	r.f = f
	r.files = append(r.files, name)
	r.w = bufio.NewWriterSize(f, 64<<10)
	r.writeHeader()
	if r.err != nil {
		f.Close()
		return nil, r.err
	}
	return r, nil
}

// Files lists the files written so far, in order (empty for NewRecorder).
func (r *Recorder) Files() []string {
	r.mu.Lock()
	defer r.mu.Unlock()
	return append([]string(nil), r.files...)
}

// Err returns the first write error, if any.
func (r *Recorder) Err() error {
	r.mu.Lock()
	defer r.mu.Unlock()
	return r.err
}

type headerWire struct {
	V            int    `json:"v"`
	Kind         Kind   `json:"kind"`
	Cell         string `json:"cell"`
	ConfigDigest string `json:"config_digest"`
	Forereach    string `json:"forereach"`
	Start        string `json:"start"`
	Part         int    `json:"part"`
	Source       string `json:"source,omitempty"`
}

func (r *Recorder) writeHeader() {
	start := ""
	if !r.h.Start.IsZero() {
		start = r.h.Start.UTC().Format(time.RFC3339Nano)
	}
	r.writeJSON(headerWire{V: Version, Kind: KindHeader, Cell: r.h.Cell, ConfigDigest: r.h.ConfigDigest,
		Forereach: r.h.Version, Start: start, Part: r.h.Part, Source: r.h.Source})
}

func (r *Recorder) writeJSON(v any) {
	b, err := json.Marshal(v)
	if err != nil {
		r.err = fmt.Errorf("recording: %w", err)
		return
	}
	r.buf = append(append(r.buf[:0], b...), '\n')
	r.writeLine()
}

// writeLine writes r.buf (a complete line) and rotates when due.
func (r *Recorder) writeLine() {
	if r.err != nil {
		return
	}
	n, err := r.w.Write(r.buf)
	r.n += int64(n)
	if err != nil {
		r.err = fmt.Errorf("recording: %w", err)
		return
	}
	if r.maxBytes > 0 && r.open != nil && r.n >= r.maxBytes {
		r.rotate()
	}
}

func (r *Recorder) rotate() {
	if err := r.w.Flush(); err != nil {
		r.err = fmt.Errorf("recording: %w", err)
		return
	}
	if err := r.f.Close(); err != nil {
		r.err = fmt.Errorf("recording: %w", err)
		return
	}
	r.h.Part++
	f, name, err := r.open(r.h.Part)
	if err != nil {
		r.f = nil
		r.err = err
		return
	}
	r.f, r.n = f, 0
	r.files = append(r.files, name)
	r.w.Reset(f)
	r.writeHeader()
}

// Sample appends an accepted sample. It allocates nothing in steady state.
func (r *Recorder) Sample(s *SampleRecord) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.err != nil {
		return r.err
	}
	r.buf = append(appendSample(r.buf[:0], `{"v":1,"kind":"sample"`, s, true), '\n')
	r.writeLine()
	return r.err
}

type rejectWire struct {
	V          int     `json:"v"`
	Kind       Kind    `json:"kind"`
	Arrival    float64 `json:"arrival,omitempty"`
	Topic      string  `json:"topic"`
	Reason     string  `json:"reason"`
	Error      string  `json:"error,omitempty"`
	Payload    *string `json:"payload,omitempty"`
	PayloadB64 []byte  `json:"payload_b64,omitempty"`
	Size       int     `json:"size"`
}

// Reject appends a refused message. Payload is cut to MaxRecordedPayload
// bytes; it is kept as text when it is valid UTF-8 and as base64 otherwise.
func (r *Recorder) Reject(j *Reject) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.err != nil {
		return r.err
	}
	w := rejectWire{V: Version, Kind: KindReject, Arrival: finiteOr0(j.Arrival), Topic: j.Topic,
		Reason: j.Reason, Error: j.Error, Size: j.Size}
	p := j.Payload
	text := p
	if len(p) > MaxRecordedPayload {
		p = p[:MaxRecordedPayload]
		text = validPrefix(p) // do not keep half a character
	}
	if len(p) == 0 {
		// nothing to keep
	} else if utf8.Valid(text) {
		s := string(text)
		w.Payload = &s
	} else {
		w.PayloadB64 = p
	}
	if w.Size < len(j.Payload) {
		w.Size = len(j.Payload)
	}
	r.writeJSON(w)
	return r.err
}

// validPrefix drops an incomplete UTF-8 sequence at the end of p.
func validPrefix(p []byte) []byte {
	for i := len(p) - 1; i >= 0 && i >= len(p)-utf8.UTFMax; i-- {
		if utf8.RuneStart(p[i]) {
			if !utf8.FullRune(p[i:]) {
				return p[:i]
			}
			break
		}
	}
	return p
}

type robotWire struct {
	V    int  `json:"v"`
	Kind Kind `json:"kind"`
	*RobotState
}

// Robot appends a robot state.
func (r *Recorder) Robot(st *RobotState) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.err != nil {
		return r.err
	}
	r.writeJSON(robotWire{Version, KindRobot, st})
	return r.err
}

type advisoryWire struct {
	V    int  `json:"v"`
	Kind Kind `json:"kind,omitempty"`
	*Advisory
}

// Advisory appends an advisory.
func (r *Recorder) Advisory(a *Advisory) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.err != nil {
		return r.err
	}
	r.writeJSON(advisoryWire{Version, KindAdvisory, a})
	return r.err
}

// Flush writes buffered lines to the file (or writer).
func (r *Recorder) Flush() error {
	r.mu.Lock()
	defer r.mu.Unlock()
	if r.err != nil {
		return r.err
	}
	if err := r.w.Flush(); err != nil {
		r.err = fmt.Errorf("recording: %w", err)
	}
	return r.err
}

// Close flushes and, for CreateRecording, syncs and closes the current
// file. Further writes fail.
func (r *Recorder) Close() error {
	r.mu.Lock()
	defer r.mu.Unlock()
	err := r.err
	if err == nil {
		if e := r.w.Flush(); e != nil {
			err = fmt.Errorf("recording: %w", e)
		}
	}
	if r.f != nil {
		if f, ok := r.f.(*os.File); ok && err == nil {
			if e := f.Sync(); e != nil {
				err = fmt.Errorf("recording: %w", e)
			}
		}
		if e := r.f.Close(); e != nil && err == nil {
			err = fmt.Errorf("recording: %w", e)
		}
		r.f = nil
	}
	if r.err == nil {
		r.err = errors.New("recording: closed")
	}
	return err
}

func finiteOr0(x float64) float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return 0
	}
	return x
}

// appendFloat writes x in the shortest form that reads back exactly, as
// encoding/json does. Non-finite values (which no decoder lets through) are
// written as 0 so that the line stays valid JSON.
func appendFloat(b []byte, x float64) []byte {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return append(b, '0')
	}
	abs := math.Abs(x)
	f := byte('f')
	if abs != 0 && (abs < 1e-6 || abs >= 1e21) {
		f = 'e'
	}
	return strconv.AppendFloat(b, x, f, -1, 64)
}

// appendString writes s as a JSON string; invalid UTF-8 becomes U+FFFD.
func appendString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			switch {
			case c == '"' || c == '\\':
				b = append(b, '\\', c)
			case c < 0x20:
				b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
			default:
				b = append(b, c)
			}
			i++
			continue
		}
		r, size := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && size == 1 {
			b = append(b, `\ufffd`...)
		} else {
			b = append(b, s[i:i+size]...)
		}
		i += size
	}
	return append(b, '"')
}
