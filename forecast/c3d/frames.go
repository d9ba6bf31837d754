package c3d

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
)

// Point is one point of one frame.
type Point struct {
	// P is the position as stored, in File.Units: the stored real, or the
	// stored int16 times POINT:SCALE. Gaps keep what is stored (normally
	// zeros); only Valid tells a gap from a point at the origin.
	P [3]float64
	// M is P in metres (P × File.MetresPerUnit).
	M [3]float64
	// Word is the fourth, residual word as stored: an int16, or in real
	// files a real holding the same value. Negative marks a gap.
	Word float64
	// Valid is false for a gap (Word negative) and for a point whose
	// stored values are not finite numbers (then Bad is set too).
	Valid bool
	// Bad reports a real-storage point with a NaN or infinite coordinate or
	// residual word: unreadable rather than missing.
	Bad bool
	// Cameras is the camera mask, bits 8-14 of Word: bit k set when camera
	// k+1 saw the point. 0 for gaps.
	Cameras uint8
	// Residual is the low byte of Word times |POINT:SCALE|, in File.Units.
	// 0 for gaps; also 0 for valid computed points, by convention.
	Residual float64
}

// Frame is one frame of the data section. A Reader reuses one Frame: its
// contents change on the next call to Next.
type Frame struct {
	Index  int     // 0-based index in the data section
	Number int     // frame number: File.FirstFrame + Index
	T      float64 // seconds, (Number-1) / Rate: frame 1 is at time 0
	Points []Point // File.Points entries, in label order
	// Analog holds File.AnalogSamples × File.AnalogChannels values,
	// channel fastest, each (raw - ANALOG:OFFSET[c]) × ANALOG:SCALE[c] ×
	// ANALOG:GEN_SCALE. Real files may hold non-finite analog values; they
	// are passed on as stored.
	Analog []float64
}

// chunkBytes is roughly how much of the data section a Reader reads at a
// time (whole frames; at least one).
const chunkBytes = 64 << 10

// Reader streams the frames of a file in order through one buffer.
type Reader struct {
	f        *File
	buf      []byte
	bufFirst int // index of the first frame in buf
	bufN     int // frames in buf
	next     int // index of the frame Next returns
	frame    Frame
	err      error
}

// NewReader returns a reader positioned at the first frame. Its memory is
// fixed when it is made: about 64 KiB (or one frame when frames are
// larger) plus one Frame.
func (f *File) NewReader() *Reader {
	if f.Frames == 0 {
		// Nothing to read; Decode only bounds the frame size by the file
		// size when there are frames, so allocate nothing.
		return &Reader{f: f}
	}
	per := 1
	if f.FrameSize < chunkBytes {
		per = chunkBytes / f.FrameSize
	}
	return &Reader{
		f:   f,
		buf: make([]byte, per*f.FrameSize),
		frame: Frame{
			Points: make([]Point, f.Points),
			Analog: make([]float64, f.AnalogChannels*f.AnalogSamples),
		},
	}
}

// Seek positions the reader so that Next returns frame index i (0-based).
func (r *Reader) Seek(i int) error {
	if i < 0 || i > r.f.Frames {
		return fmt.Errorf("c3d: seek to frame index %d: the file has %d frames", i, r.f.Frames)
	}
	r.next = i
	return nil
}

// Next decodes the next frame into the reader's Frame and returns it. It
// returns io.EOF after the last frame, and an *Error when the file ends
// early or cannot be read; that error is final.
func (r *Reader) Next() (*Frame, error) {
	if r.err != nil {
		return nil, r.err
	}
	f := r.f
	if r.next >= f.Frames {
		return nil, io.EOF
	}
	if r.next < r.bufFirst || r.next >= r.bufFirst+r.bufN {
		if err := r.fill(); err != nil {
			r.err = err
			return nil, err
		}
	}
	i := r.next
	k := i - r.bufFirst
	r.decode(r.buf[k*f.FrameSize : (k+1)*f.FrameSize])
	fr := &r.frame
	fr.Index = i
	fr.Number = f.FirstFrame + i
	fr.T = float64(fr.Number-1) / f.Rate
	r.next++
	return fr, nil
}

// fill reads whole frames starting at r.next.
func (r *Reader) fill() error {
	f := r.f
	want := min(len(r.buf)/f.FrameSize, f.Frames-r.next)
	off := f.DataStart + int64(r.next)*int64(f.FrameSize)
	n, err := f.r.ReadAt(r.buf[:want*f.FrameSize], off)
	got := n / f.FrameSize
	if got == 0 {
		return &Error{
			Section: fmt.Sprintf("data section frame %d", f.FirstFrame+r.next),
			Offset:  off,
			Msg:     fmt.Sprintf("file ends at byte %d; frame %d of %d needs bytes %d to %d", off+int64(n), r.next+1, f.Frames, off, off+int64(f.FrameSize)),
			Err:     ioErr(err),
		}
	}
	r.bufFirst, r.bufN = r.next, got
	return nil
}

// decode fills r.frame from the bytes of one frame.
func (r *Reader) decode(b []byte) {
	f := r.f
	pts := r.frame.Points
	k := f.MetresPerUnit
	rs := math.Abs(f.Scale)
	if !f.Float {
		var u16 func([]byte) uint16 = binary.LittleEndian.Uint16
		if f.Processor == MIPS {
			u16 = binary.BigEndian.Uint16
		}
		s := f.Scale
		for i := range pts {
			q := b[8*i : 8*i+8]
			w := int16(u16(q[6:]))
			p := &pts[i]
			p.P[0] = float64(int16(u16(q[0:]))) * s
			p.P[1] = float64(int16(u16(q[2:]))) * s
			p.P[2] = float64(int16(u16(q[4:]))) * s
			p.M[0], p.M[1], p.M[2] = p.P[0]*k, p.P[1]*k, p.P[2]*k
			p.Word = float64(w)
			p.Bad = false
			setResidual(p, int(w), rs)
		}
		a := r.frame.Analog
		ab := b[8*len(pts):]
		ch := f.AnalogChannels
		for j := range a {
			raw := int(int16(u16(ab[2*j:])))
			if f.AnalogUnsigned {
				raw = int(u16(ab[2*j:]))
			}
			c := j % ch
			a[j] = (float64(raw) - f.analogOffset[c]) * f.analogScale[c]
		}
		return
	}
	p32 := f.Processor
	for i := range pts {
		q := b[16*i : 16*i+16]
		p := &pts[i]
		p.P[0] = p32.f32(q[0:])
		p.P[1] = p32.f32(q[4:])
		p.P[2] = p32.f32(q[8:])
		p.M[0], p.M[1], p.M[2] = p.P[0]*k, p.P[1]*k, p.P[2]*k
		w := p32.f32(q[12:])
		p.Word = w
		p.Bad = !finite(p.P[0]) || !finite(p.P[1]) || !finite(p.P[2]) || !finite(w)
		if p.Bad {
			p.Valid, p.Cameras, p.Residual = false, 0, 0
			continue
		}
		iw := -1
		if w >= 0 {
			iw = int(min(w, math.MaxInt16))
		}
		setResidual(p, iw, rs)
	}
	a := r.frame.Analog
	ab := b[16*len(pts):]
	ch := f.AnalogChannels
	for j := range a {
		c := j % ch
		a[j] = (p32.f32(ab[4*j:]) - f.analogOffset[c]) * f.analogScale[c]
	}
}

// setResidual splits a residual word: negative is a gap, else bits 8-14
// are the camera mask and the low byte the residual in scale units.
func setResidual(p *Point, w int, absScale float64) {
	if w < 0 {
		p.Valid, p.Cameras, p.Residual = false, 0, 0
		return
	}
	p.Valid = true
	p.Cameras = uint8(w>>8) & 0x7f
	p.Residual = float64(w&0xff) * absScale
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
