package c3d

import (
	"encoding/binary"
	"math"
)

// A small C3D writer for the tests: it builds synthetic files in any of the
// three processor formats, with int16 or real storage, written from the
// format's definition independently of the decoder's code paths (only the
// processor's integer byte order is shared, through putU16).

func (p Processor) putU16(b []byte, v uint16) {
	if p == MIPS {
		binary.BigEndian.PutUint16(b, v)
		return
	}
	binary.LittleEndian.PutUint16(b, v)
}

// putF32 writes v in the processor's real format. DEC: the IEEE bits of 4v
// with the two 16-bit words swapped, each little-endian.
func (p Processor) putF32(b []byte, v float32) {
	switch p {
	case MIPS:
		binary.BigEndian.PutUint32(b, math.Float32bits(v))
	case DEC:
		if v == 0 {
			b[0], b[1], b[2], b[3] = 0, 0, 0, 0
			return
		}
		bits := math.Float32bits(v * 4)
		binary.LittleEndian.PutUint16(b, uint16(bits>>16))
		binary.LittleEndian.PutUint16(b[2:], uint16(bits))
	default:
		binary.LittleEndian.PutUint32(b, math.Float32bits(v))
	}
}

// wParam is one parameter to write. Data is []int (int16 or byte),
// []float32 or []string (char: padded to dims[0]).
type wParam struct {
	group, name string
	typ         int
	dims        []int
	data        any
	desc        string
}

// wPoint is one stored point: coordinates (raw int16 values for integer
// storage, reals otherwise) and the residual word.
type wPoint struct {
	X, Y, Z, W float32
}

type synth struct {
	proc      Processor
	float     bool
	scale     float32 // magnitude; the sign is set from float
	rate      float32
	units     string
	labels    []string
	first     int
	frames    [][]wPoint  // [frame][point]
	analogCh  int         // channels
	analogSpf int         // samples per point frame
	analog    [][]float32 // [frame][sample*ch+c] raw values
	aScale    []float32
	aOffset   []int
	genScale  float32
	extra     []wParam        // written after the standard parameters
	omit      map[string]bool // "GROUP:NAME" of standard parameters to leave out
	hdrLast   int             // header last frame override (0: computed)
}

// newSynth returns an Intel int16 file of nFrames frames of two points
// "RFIN" and "LFIN" in mm, 100 Hz, with 2 analog channels at 2 samples per
// frame; point 1 has a gap in frame index 2.
func newSynth(proc Processor, float bool, nFrames int) *synth {
	s := &synth{proc: proc, float: float, scale: 0.1, rate: 100, units: "mm", labels: []string{"RFIN", "LFIN"}, first: 1,
		analogCh: 2, analogSpf: 2, aScale: []float32{0.5, -2}, aOffset: []int{10, -3}, genScale: 0.25}
	for i := 0; i < nFrames; i++ {
		fr := []wPoint{
			{X: float32(100 + i), Y: float32(-200 - 3*i), Z: float32(3000 + 7*i), W: float32(0x1200 | (i % 200))},
			{X: float32(-5 * i), Y: 42, Z: float32(i * i), W: float32(0x0103)},
		}
		if i == 2 {
			fr[1] = wPoint{W: -1}
		}
		s.frames = append(s.frames, fr)
		s.analog = append(s.analog, []float32{float32(i), float32(-i), float32(2 * i), 7})
	}
	return s
}

func (s *synth) params() []wParam {
	n := len(s.labels)
	if len(s.frames) > 0 {
		n = len(s.frames[0])
	}
	scale := s.scale
	if s.float {
		scale = -scale
	}
	nf := len(s.frames)
	ps := []wParam{
		{"POINT", "USED", TypeInt, nil, []int{n}, "points"},
		{"POINT", "SCALE", TypeFloat, nil, []float32{scale}, ""},
		{"POINT", "RATE", TypeFloat, nil, []float32{s.rate}, ""},
		{"POINT", "DATA_START", TypeInt, nil, []int{0}, ""}, // patched in bytes()
		{"POINT", "FRAMES", TypeInt, nil, []int{nf}, ""},
		{"POINT", "UNITS", TypeChar, []int{len(s.units)}, []string{s.units}, ""},
	}
	if len(s.labels) > 0 {
		w := 1
		for _, l := range s.labels {
			w = max(w, len(l))
		}
		ps = append(ps, wParam{"POINT", "LABELS", TypeChar, []int{w, len(s.labels)}, s.labels, "labels"})
	}
	ps = append(ps, wParam{"ANALOG", "USED", TypeInt, nil, []int{s.analogCh}, ""})
	if s.analogCh > 0 {
		lab := make([]string, s.analogCh)
		for i := range lab {
			lab[i] = "A" + string(rune('0'+i%10))
		}
		ps = append(ps,
			wParam{"ANALOG", "RATE", TypeFloat, nil, []float32{s.rate * float32(s.analogSpf)}, ""},
			wParam{"ANALOG", "LABELS", TypeChar, []int{2, s.analogCh}, lab, ""},
			wParam{"ANALOG", "SCALE", TypeFloat, []int{len(s.aScale)}, s.aScale, ""},
			wParam{"ANALOG", "OFFSET", TypeInt, []int{len(s.aOffset)}, s.aOffset, ""},
			wParam{"ANALOG", "GEN_SCALE", TypeFloat, nil, []float32{s.genScale}, ""},
		)
	}
	var out []wParam
	for _, p := range ps {
		if !s.omit[p.group+":"+p.name] {
			out = append(out, p)
		}
	}
	return append(out, s.extra...)
}

// paramRecords encodes the parameter records (without the 4-byte section
// header), groups first in order of first use, POINT:DATA_START set to
// dataStart.
func (s *synth) paramRecords(dataStart int) []byte {
	p := s.proc
	var b []byte
	ids := map[string]int{}
	var order []string
	for _, q := range s.params() {
		if _, ok := ids[q.group]; !ok {
			ids[q.group] = len(ids) + 1
			order = append(order, q.group)
		}
	}
	u16 := func(v int) []byte { var x [2]byte; p.putU16(x[:], uint16(int16(v))); return x[:] }
	record := func(name string, id int, body []byte, last bool) {
		b = append(b, byte(len(name)), byte(int8(id)))
		b = append(b, name...)
		next := 2 + len(body)
		if last {
			next = 0
		}
		b = append(b, u16(next)...)
		b = append(b, body...)
	}
	for _, g := range order {
		record(g, -ids[g], []byte{0}, false)
	}
	ps := s.params()
	for i, q := range ps {
		body := []byte{byte(int8(q.typ)), byte(len(q.dims))}
		for _, d := range q.dims {
			body = append(body, byte(d))
		}
		switch v := q.data.(type) {
		case []int:
			for _, x := range v {
				if q.name == "DATA_START" {
					x = dataStart
				}
				if q.typ == TypeByte {
					body = append(body, byte(x))
				} else {
					body = append(body, u16(x)...)
				}
			}
		case []float32:
			for _, x := range v {
				var f [4]byte
				p.putF32(f[:], x)
				body = append(body, f[:]...)
			}
		case []string:
			w := 1
			if len(q.dims) > 0 {
				w = q.dims[0]
			}
			for _, x := range v {
				for j := 0; j < w; j++ {
					c := byte(' ')
					if j < len(x) {
						c = x[j]
					}
					body = append(body, c)
				}
			}
		case []byte:
			body = append(body, v...)
		}
		body = append(body, byte(len(q.desc)))
		body = append(body, q.desc...)
		record(q.name, ids[q.group], body, i == len(ps)-1)
	}
	return b
}

// bytes encodes the whole file: header block, parameter section from block
// 2, data section right after it, ending exactly at the last frame.
func (s *synth) bytes() []byte {
	p := s.proc
	// The parameter section length does not depend on the data start value.
	recs := s.paramRecords(0)
	pblocks := (4 + len(recs) + BlockSize - 1) / BlockSize
	dataStart := 2 + pblocks
	recs = s.paramRecords(dataStart)

	out := make([]byte, BlockSize*(1+pblocks))
	h := out[:BlockSize]
	w := func(word, v int) { p.putU16(h[2*(word-1):], uint16(v)) }
	h[0], h[1] = 2, 0x50
	n := len(s.labels)
	if len(s.frames) > 0 {
		n = len(s.frames[0])
	}
	w(2, n)
	w(3, s.analogCh*s.analogSpf)
	w(4, s.first)
	last := s.first + len(s.frames) - 1
	if s.hdrLast != 0 {
		last = s.hdrLast
	}
	w(5, last)
	w(6, 10)
	scale := s.scale
	if s.float {
		scale = -scale
	}
	p.putF32(h[12:], scale)
	w(9, dataStart)
	w(10, s.analogSpf)
	p.putF32(h[20:], s.rate)
	sec := out[BlockSize:]
	sec[0], sec[1], sec[2], sec[3] = 1, 0x50, byte(pblocks), byte(p)
	copy(sec[4:], recs)

	for i, fr := range s.frames {
		for _, q := range fr {
			out = s.appendWord(out, q.X)
			out = s.appendWord(out, q.Y)
			out = s.appendWord(out, q.Z)
			out = s.appendWord(out, q.W)
		}
		if s.analogCh > 0 {
			for _, v := range s.analog[i] {
				out = s.appendWord(out, v)
			}
		}
	}
	return out
}

func (s *synth) appendWord(b []byte, v float32) []byte {
	if s.float {
		var x [4]byte
		s.proc.putF32(x[:], v)
		return append(b, x[:]...)
	}
	var x [2]byte
	s.proc.putU16(x[:], uint16(int16(v)))
	return append(b, x[:]...)
}
