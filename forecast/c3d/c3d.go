// Package c3d decodes C3D files, the binary format in which motion-capture
// and biomechanics labs export marker trajectories and analog channels.
//
// Decode reads the header and the parameter section (groups and their
// parameters, in any of the three processor formats: Intel, DEC, MIPS) from
// an io.ReaderAt and derives what is needed to read the data: point count
// and labels, POINT:UNITS as metres per unit, point rate, first frame and
// frame count, storage (scaled 16-bit integers or 32-bit reals) and the
// analog layout. File.NewReader then streams the data section frame by
// frame through one reused buffer, so memory stays the same whatever the
// length of the file.
//
// Every refusal is an *Error naming the section (header, parameter section,
// a group or parameter, or a data frame) and the byte offset in the file.
// No input makes the decoder panic; what it allocates is bounded by the
// file's size or by the format's 16-bit counts (a few MB at most), never by
// a product of declared dimensions.
//
// The package does no I/O of its own beyond the io.ReaderAt it is given.
package c3d

import (
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// BlockSize is the size of a C3D block: the header is one block, the
// parameter section and the data section start on block boundaries.
const BlockSize = 512

// Error reports what is wrong with a file and where.
type Error struct {
	// Section is the part of the file: "header", "parameter section",
	// `group 2 "POINT"`, `parameter "POINT:LABELS"`, "data section frame
	// 12 point 3", ...
	Section string
	Offset  int64 // byte offset in the file (0-based)
	Msg     string
	Err     error // underlying read error, if any
}

func (e *Error) Error() string {
	s := "c3d: " + e.Section + " at byte " + strconv.FormatInt(e.Offset, 10) + ": " + e.Msg
	if e.Err != nil {
		s += ": " + e.Err.Error()
	}
	return s
}

func (e *Error) Unwrap() error { return e.Err }

// Event is one time event stored in the header.
type Event struct {
	Label   string  // up to 4 characters
	Time    float64 // seconds
	Display bool
}

// Header holds the fields of the header block. Words are numbered from 1
// as in the format's definition; integers are read as unsigned 16-bit.
type Header struct {
	ParamBlock      int     // word 1 low byte: first block of the parameter section (1-based)
	Key             byte    // word 1 high byte: 0x50
	Points          int     // word 2: points per frame
	AnalogPerFrame  int     // word 3: analog values per point frame, all channels
	FirstFrame      int     // word 4
	LastFrame       int     // word 5
	MaxGap          int     // word 6: maximum interpolation gap, frames
	Scale           float64 // words 7-8: point scale (negative: real storage)
	DataStart       int     // word 9: first block of the data section (1-based)
	AnalogSamples   int     // word 10: analog samples per point frame
	Rate            float64 // words 11-12: point frames per second
	LabelRangeKey   int     // word 148: 12345 when a label and range section exists
	LabelRangeBlock int     // word 149
	EventKey        int     // word 150: 12345 when the header holds events
	// Events are the time events of words 151-234, read only when
	// EventKey is 12345 (at most 18).
	Events []Event
}

// File is a decoded header and parameter section, and the data layout
// derived from them. The fields below Groups are derived from the
// parameters (which take precedence over the header, as the format
// intends), falling back to the header where a parameter is absent.
type File struct {
	Header    Header
	Processor Processor
	Groups    []*Group // in file order

	Points        int      // points per frame (POINT:USED)
	Labels        []string // one per point (POINT:LABELS, LABELS2, ...); "" when the file names none
	Units         string   // POINT:UNITS, e.g. "mm"
	MetresPerUnit float64  // from Units: 0.001 for "mm"
	Rate          float64  // point frames per second (POINT:RATE)
	FirstFrame    int      // number of the first frame
	Frames        int      // number of frames
	Scale         float64  // POINT:SCALE
	Float         bool     // storage is 32-bit reals (Scale < 0), else scaled int16
	DataStart     int64    // byte offset of the first frame
	FrameSize     int      // bytes per frame, points and analog

	AnalogChannels int      // ANALOG:USED
	AnalogSamples  int      // analog samples per channel per point frame
	AnalogRate     float64  // analog samples per second (Rate × AnalogSamples)
	AnalogLabels   []string // one per channel; "" when the file names none
	AnalogUnsigned bool     // ANALOG:FORMAT "UNSIGNED": integer samples are 0..65535

	analogOffset []float64 // per channel
	analogScale  []float64 // per channel, times ANALOG:GEN_SCALE

	params map[string]*Param
	r      io.ReaderAt
	size   int64
}

// Param returns the parameter group:name (case-insensitive), or nil.
func (f *File) Param(group, name string) *Param {
	return f.params[strings.ToUpper(group+":"+name)]
}

// Group returns the group of that name (case-insensitive), or nil.
func (f *File) Group(name string) *Group {
	for _, g := range f.Groups {
		if strings.EqualFold(g.Name, name) {
			return g
		}
	}
	return nil
}

// Duration is the time covered by the frames, Frames / Rate seconds.
func (f *File) Duration() float64 { return float64(f.Frames) / f.Rate }

// Decode reads the header and parameter section of the C3D file held by r
// (size bytes long) and checks that the data section they describe is
// consistent. The data itself is read by NewReader.
func Decode(r io.ReaderAt, size int64) (*File, error) {
	f := &File{r: r, size: size, FirstFrame: 1}
	var hdr [BlockSize]byte
	if n, err := r.ReadAt(hdr[:], 0); n < BlockSize {
		return nil, &Error{Section: "header", Offset: int64(n), Msg: fmt.Sprintf("file ends after %d bytes; the header is %d", n, BlockSize), Err: ioErr(err)}
	}
	h := &f.Header
	h.ParamBlock, h.Key = int(hdr[0]), hdr[1]
	if h.Key != 0x50 {
		return nil, &Error{Section: "header", Offset: 1, Msg: fmt.Sprintf("key byte is 0x%02x, want 0x50: not a C3D file", h.Key)}
	}
	if h.ParamBlock < 2 {
		return nil, &Error{Section: "header", Offset: 0, Msg: fmt.Sprintf("parameter section block %d (must be 2 or more)", h.ParamBlock)}
	}

	// The processor format is in the parameter section; it governs the
	// header too.
	pbase := int64(h.ParamBlock-1) * BlockSize
	var ph [4]byte
	if n, err := r.ReadAt(ph[:], pbase); n < 4 {
		return nil, &Error{Section: "parameter section", Offset: pbase, Msg: fmt.Sprintf("the section starts at block %d but the file ends at byte %d", h.ParamBlock, pbase+int64(n)), Err: ioErr(err)}
	}
	proc := Processor(ph[3])
	if !proc.valid() {
		return nil, &Error{Section: "parameter section", Offset: pbase + 3, Msg: fmt.Sprintf("processor type %d unknown (want 84 Intel, 85 DEC or 86 MIPS)", ph[3])}
	}
	f.Processor = proc
	decodeHeader(h, hdr[:], proc)

	nblocks := int(ph[2])
	if nblocks == 0 {
		return nil, &Error{Section: "parameter section", Offset: pbase + 2, Msg: "block count is 0"}
	}
	end := pbase + int64(nblocks)*BlockSize
	if end > size {
		return nil, &Error{Section: "parameter section", Offset: size, Msg: fmt.Sprintf("file ends at byte %d; the section's %d blocks end at byte %d", size, nblocks, end)}
	}
	sec := make([]byte, end-pbase)
	if n, err := r.ReadAt(sec, pbase); n < len(sec) {
		return nil, &Error{Section: "parameter section", Offset: pbase + int64(n), Msg: "short read", Err: ioErr(err)}
	}
	groups, params, err := parseParams(sec, pbase, proc)
	if err != nil {
		return nil, err
	}
	f.Groups, f.params = groups, params
	if err := f.derive(); err != nil {
		return nil, err
	}
	return f, nil
}

func ioErr(err error) error {
	if err == nil || errors.Is(err, io.EOF) {
		return nil
	}
	return err
}

// decodeHeader fills h from the 512-byte header block b. Word w (1-based)
// is at byte 2(w-1).
func decodeHeader(h *Header, b []byte, p Processor) {
	word := func(w int) int { return int(p.u16(b[2*(w-1):])) }
	h.Points = word(2)
	h.AnalogPerFrame = word(3)
	h.FirstFrame = word(4)
	h.LastFrame = word(5)
	h.MaxGap = word(6)
	h.Scale = p.f32(b[12:])
	h.DataStart = word(9)
	h.AnalogSamples = word(10)
	h.Rate = p.f32(b[20:])
	h.LabelRangeKey = word(148)
	h.LabelRangeBlock = word(149)
	h.EventKey = word(150)
	if h.EventKey == 12345 {
		n := min(word(151), 18)
		for i := 0; i < n; i++ {
			h.Events = append(h.Events, Event{
				Label:   strings.TrimRight(string(b[396+4*i:400+4*i]), " \x00"),
				Time:    p.f32(b[304+4*i:]),
				Display: b[376+i] != 0,
			})
		}
	}
}

// unitScale gives metres per unit for the units POINT:UNITS may hold.
var unitScale = map[string]float64{
	"mm": 0.001, "cm": 0.01, "dm": 0.1, "m": 1,
	"in": 0.0254, "ft": 0.3048, // exact by definition of the inch
}

// derive computes the data layout from the parameters, falling back to the
// header where a parameter is absent.
func (f *File) derive() error {
	h := &f.Header
	count := func(g, n string, def int) (int, error) {
		if p := f.Param(g, n); p != nil {
			return p.Count()
		}
		return def, nil
	}
	realParam := func(g, n string, def float64) (float64, error) {
		if p := f.Param(g, n); p != nil {
			return p.Float()
		}
		return def, nil
	}
	var err error
	if f.Points, err = count("POINT", "USED", h.Points); err != nil {
		return err
	}
	if f.Points > 0xffff {
		return f.paramErr("POINT", "USED", 2, fmt.Sprintf("%d points (at most 65535)", f.Points))
	}
	if f.Scale, err = realParam("POINT", "SCALE", h.Scale); err != nil {
		return err
	}
	f.Float = f.Scale < 0
	if f.Rate, err = realParam("POINT", "RATE", h.Rate); err != nil {
		return err
	}
	if math.IsNaN(f.Rate) || math.IsInf(f.Rate, 0) || f.Rate <= 0 {
		return f.paramErr("POINT", "RATE", 20, fmt.Sprintf("point rate %v (must be a positive number)", f.Rate))
	}
	if math.IsNaN(f.Scale) || math.IsInf(f.Scale, 0) || (f.Scale == 0 && f.Points > 0) {
		return f.paramErr("POINT", "SCALE", 12, fmt.Sprintf("point scale %v (must be a non-zero number)", f.Scale))
	}
	start, err := count("POINT", "DATA_START", h.DataStart)
	if err != nil {
		return err
	}
	if start < 2 {
		return f.paramErr("POINT", "DATA_START", 16, fmt.Sprintf("data section block %d (must be 2 or more)", start))
	}
	if start <= h.ParamBlock {
		return f.paramErr("POINT", "DATA_START", 16, fmt.Sprintf("data section block %d is not after the parameter section (block %d)", start, h.ParamBlock))
	}
	f.DataStart = int64(start-1) * BlockSize

	if err := f.deriveLabels(); err != nil {
		return err
	}
	if f.Points > 0 {
		p := f.Param("POINT", "UNITS")
		if p == nil {
			return &Error{Section: `parameter "POINT:UNITS"`, Offset: int64(h.ParamBlock-1) * BlockSize, Msg: "missing; the file has points, so their length unit must be given"}
		}
		u, err := p.String()
		if err != nil {
			return err
		}
		f.Units = strings.TrimSpace(u)
		k, ok := unitScale[strings.ToLower(f.Units)]
		if !ok {
			return p.errf("unknown length unit %q (want mm, cm, dm, m, in or ft)", f.Units)
		}
		f.MetresPerUnit = k
	}
	if err := f.deriveAnalog(); err != nil {
		return err
	}
	word := 2
	if f.Float {
		word = 4
	}
	f.FrameSize = (4*f.Points + f.AnalogChannels*f.AnalogSamples) * word

	// Frames: header words 4-5, unless POINT:FRAMES or the 32-bit
	// TRIAL:ACTUAL_START_FIELD/END_FIELD give more frames that the file
	// actually holds (the 16-bit header words overflow after 65535).
	f.FirstFrame = h.FirstFrame
	if h.LastFrame >= h.FirstFrame {
		f.Frames = h.LastFrame - h.FirstFrame + 1
	}
	fits := func(n int) bool {
		return f.FrameSize > 0 && int64(n) <= (f.size-f.DataStart)/int64(f.FrameSize)
	}
	if p := f.Param("POINT", "FRAMES"); p != nil {
		if n, err := p.Count(); err == nil && n > f.Frames && fits(n) {
			f.Frames = n
		}
	}
	if s, e := f.trialField("ACTUAL_START_FIELD"), f.trialField("ACTUAL_END_FIELD"); s > 0 && e >= s && e-s+1 > f.Frames && fits(e-s+1) {
		f.FirstFrame, f.Frames = s, e-s+1
	}
	if f.FrameSize == 0 {
		f.Frames = 0 // nothing stored per frame: nothing to read
	}
	if f.Frames > 0 && f.DataStart+int64(f.FrameSize) > f.size {
		return &Error{Section: "data section", Offset: f.DataStart, Msg: fmt.Sprintf("file ends at byte %d, before the end of the first frame (%d bytes)", f.size, f.FrameSize)}
	}
	return nil
}

// paramErr reports a bad derived value at the parameter that gave it, or at
// the header byte when the parameter is absent.
func (f *File) paramErr(group, name string, headerByte int64, msg string) error {
	if p := f.Param(group, name); p != nil {
		return p.errf("%s", msg)
	}
	return &Error{Section: "header", Offset: headerByte, Msg: msg}
}

// trialField reads a TRIAL frame number stored as two int16 words (low,
// high); 0 when absent or malformed.
func (f *File) trialField(name string) int {
	p := f.Param("TRIAL", name)
	if p == nil || p.Type != TypeInt || p.Len() != 2 {
		return 0
	}
	lo, hi := int(p.proc.u16(p.Data)), int(p.proc.u16(p.Data[2:]))
	return hi<<16 | lo
}

// deriveLabels collects the point labels: POINT:LABELS, then LABELS2,
// LABELS3, ... until there is one per point.
func (f *File) deriveLabels() error {
	f.Labels = make([]string, f.Points)
	have := 0
	for i := 1; have < f.Points; i++ {
		name := "LABELS"
		if i > 1 {
			name += strconv.Itoa(i)
		}
		p := f.Param("POINT", name)
		if p == nil {
			break
		}
		s, err := p.Strings()
		if err != nil {
			return err
		}
		for _, l := range s {
			if have == f.Points {
				break
			}
			f.Labels[have] = strings.TrimSpace(l)
			have++
		}
	}
	return nil
}

// deriveAnalog works out the analog layout: ANALOG:USED channels, and
// samples per point frame from header word 3 (values per frame) or, when
// that does not divide, from ANALOG:RATE / POINT:RATE.
func (f *File) deriveAnalog() error {
	h := &f.Header
	ch := 0
	if p := f.Param("ANALOG", "USED"); p != nil {
		n, err := p.Count()
		if err != nil {
			return err
		}
		if n > 0xffff {
			return p.errf("%d channels (at most 65535)", n)
		}
		ch = n
	} else if h.AnalogPerFrame > 0 {
		// No ANALOG group: split the header's values per frame with its
		// samples per frame.
		s := max(h.AnalogSamples, 1)
		if h.AnalogPerFrame%s != 0 {
			s = 1
		}
		ch = h.AnalogPerFrame / s
	}
	if ch == 0 {
		return nil
	}
	spf := 0
	switch {
	case h.AnalogPerFrame > 0 && h.AnalogPerFrame%ch == 0:
		spf = h.AnalogPerFrame / ch
	case f.Param("ANALOG", "RATE") != nil:
		ar, err := f.Param("ANALOG", "RATE").Float()
		if err != nil {
			return err
		}
		if q := math.Round(ar / f.Rate); q >= 1 && q <= 1<<16 {
			spf = int(q)
		}
	}
	if spf <= 0 || spf > 1<<16 {
		return &Error{Section: "header", Offset: 4, Msg: fmt.Sprintf("analog values per frame (%d) do not fit ANALOG:USED = %d channels", h.AnalogPerFrame, ch)}
	}
	f.AnalogChannels, f.AnalogSamples = ch, spf
	f.AnalogRate = f.Rate * float64(spf)

	if p := f.Param("ANALOG", "FORMAT"); p != nil {
		if s, err := p.String(); err == nil && strings.EqualFold(strings.TrimSpace(s), "UNSIGNED") {
			f.AnalogUnsigned = true
		}
	}
	f.AnalogLabels = make([]string, ch)
	if p := f.Param("ANALOG", "LABELS"); p != nil {
		if s, err := p.Strings(); err == nil {
			for i := 0; i < ch && i < len(s); i++ {
				f.AnalogLabels[i] = strings.TrimSpace(s[i])
			}
		}
	}
	gen := 1.0
	if p := f.Param("ANALOG", "GEN_SCALE"); p != nil {
		v, err := p.Float()
		if err != nil {
			return err
		}
		gen = v
	}
	f.analogScale = make([]float64, ch)
	f.analogOffset = make([]float64, ch)
	var scale, off []float64
	if p := f.Param("ANALOG", "SCALE"); p != nil {
		v, err := p.Floats()
		if err != nil {
			return err
		}
		scale = v
	}
	if p := f.Param("ANALOG", "OFFSET"); p != nil {
		v, err := p.Ints()
		if err != nil {
			return err
		}
		for _, o := range v {
			if f.AnalogUnsigned && p.Type == TypeInt && o < 0 {
				o += 1 << 16
			}
			off = append(off, float64(o))
		}
	}
	for c := 0; c < ch; c++ {
		s := 1.0 // a channel without a scale is read raw
		if c < len(scale) {
			s = scale[c]
		}
		f.analogScale[c] = s * gen
		if c < len(off) {
			f.analogOffset[c] = off[c]
		}
	}
	return nil
}
