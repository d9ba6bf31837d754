package c3d

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand"
	"strings"
	"testing"
)

func decodeBytes(t testing.TB, b []byte) *File {
	t.Helper()
	f, err := Decode(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatalf("Decode: %v", err)
	}
	return f
}

// readAll decodes every frame and returns copies.
func readAll(f *File) ([]Frame, error) {
	r := f.NewReader()
	var out []Frame
	for {
		fr, err := r.Next()
		if err == io.EOF {
			return out, nil
		}
		if err != nil {
			return out, err
		}
		c := *fr
		c.Points = append([]Point(nil), fr.Points...)
		c.Analog = append([]float64(nil), fr.Analog...)
		out = append(out, c)
	}
}

// The writer's values come back for every processor and storage: the
// expected values are computed here from what was written, by the format's
// definition (int16 × POINT:SCALE; reals as stored; residual word split into
// camera mask and residual; analog (raw - offset) × scale × gen_scale).
func TestSyntheticRoundTrip(t *testing.T) {
	for _, proc := range []Processor{Intel, DEC, MIPS} {
		for _, float := range []bool{false, true} {
			t.Run(fmt.Sprintf("%v/float=%v", proc, float), func(t *testing.T) {
				s := newSynth(proc, float, 7)
				f := decodeBytes(t, s.bytes())
				if f.Processor != proc || f.Float != float {
					t.Fatalf("processor %v float %v, want %v %v", f.Processor, f.Float, proc, float)
				}
				h := f.Header
				if h.Points != 2 || h.AnalogPerFrame != 4 || h.FirstFrame != 1 || h.LastFrame != 7 || h.MaxGap != 10 || h.AnalogSamples != 2 || h.Rate != 100 {
					t.Errorf("header %+v", h)
				}
				if want := float64(float32(0.1)); math.Abs(h.Scale) != want || (h.Scale < 0) != float {
					t.Errorf("header scale %v", h.Scale)
				}
				if f.Points != 2 || f.Frames != 7 || f.FirstFrame != 1 || f.Rate != 100 || f.Units != "mm" || f.MetresPerUnit != 0.001 {
					t.Errorf("derived: points %d frames %d first %d rate %v units %q k %v", f.Points, f.Frames, f.FirstFrame, f.Rate, f.Units, f.MetresPerUnit)
				}
				if strings.Join(f.Labels, ",") != "RFIN,LFIN" || strings.Join(f.AnalogLabels, ",") != "A0,A1" {
					t.Errorf("labels %q analog %q", f.Labels, f.AnalogLabels)
				}
				if f.AnalogChannels != 2 || f.AnalogSamples != 2 || f.AnalogRate != 200 {
					t.Errorf("analog %d ch × %d at %v Hz", f.AnalogChannels, f.AnalogSamples, f.AnalogRate)
				}
				frames, err := readAll(f)
				if err != nil || len(frames) != 7 {
					t.Fatalf("read %d frames, err %v", len(frames), err)
				}
				scale := float64(float32(0.1))
				for i, fr := range frames {
					if fr.Index != i || fr.Number != i+1 || fr.T != float64(i)/100 {
						t.Errorf("frame %d: index %d number %d t %v", i, fr.Index, fr.Number, fr.T)
					}
					for j, w := range s.frames[i] {
						p := fr.Points[j]
						want := [3]float64{float64(w.X), float64(w.Y), float64(w.Z)}
						if !float {
							for k := range want {
								want[k] *= scale
							}
						}
						if p.P != want {
							t.Errorf("frame %d point %d: P %v, want %v", i, j, p.P, want)
						}
						for k := range want {
							if p.M[k] != want[k]*0.001 {
								t.Errorf("frame %d point %d: M %v", i, j, p.M)
							}
						}
						if p.Word != float64(w.W) {
							t.Errorf("frame %d point %d: word %v, want %v", i, j, p.Word, w.W)
						}
						gap := i == 2 && j == 1
						if p.Valid == gap || p.Bad {
							t.Errorf("frame %d point %d: valid %v bad %v", i, j, p.Valid, p.Bad)
						}
						if !gap {
							iw := int(w.W)
							if p.Cameras != uint8(iw>>8) || p.Residual != float64(iw&0xff)*scale {
								t.Errorf("frame %d point %d: cameras %d residual %v from word %#x", i, j, p.Cameras, p.Residual, iw)
							}
						}
					}
					for k, raw := range s.analog[i] {
						c := k % 2
						want := (float64(raw) - float64(s.aOffset[c])) * float64(s.aScale[c]) * float64(s.genScale)
						if fr.Analog[k] != want {
							t.Errorf("frame %d analog %d: %v, want %v", i, k, fr.Analog[k], want)
						}
					}
				}
			})
		}
	}
}

// DEC reals: ../shared/data/c3d/README.md, "DEC rule" and the byte-level
// header checks table (rate bytes 48 43 00 00 = 50.0; Eb015vi and Eb015vr scale
// bytes aa 3e ab aa / aa be ab aa = ±float32(1/12)).
func TestDECFloat(t *testing.T) {
	cases := []struct {
		b    []byte
		want float64
	}{
		{[]byte{0x48, 0x43, 0, 0}, 50},
		{[]byte{0xaa, 0x3e, 0xab, 0xaa}, float64(float32(1.0 / 12))},
		{[]byte{0xaa, 0xbe, 0xab, 0xaa}, -float64(float32(1.0 / 12))},
		{[]byte{0, 0, 0, 0}, 0},
		{[]byte{0x12, 0x00, 0x34, 0x56}, 0},                               // exponent 0, sign clear: zero whatever the fraction
		{[]byte{0xff, 0x7f, 0xff, 0xff}, math.Ldexp(2-1.0/(1<<23), 126)},  // exponent 255: finite (0.1f × 2^127)
		{[]byte{0xff, 0x00, 0xff, 0xff}, math.Ldexp(2-1.0/(1<<23), -128)}, // exponent 1: exact, below float32's normal range
	}
	for _, c := range cases {
		if got := DEC.f32(c.b); got != c.want {
			t.Errorf("DEC % x = %v, want %v", c.b, got, c.want)
		}
	}
	if v := DEC.f32([]byte{0, 0x80, 0, 0}); !math.IsNaN(v) {
		t.Errorf("reserved operand decodes to %v, want NaN", v)
	}
	// The test writer's encoder is the inverse on ordinary values.
	for _, v := range []float32{1, -1, 0.5, 1234.5678, -1e-20, 3e30, float32(1.0 / 12)} {
		var b [4]byte
		DEC.putF32(b[:], v)
		if got := DEC.f32(b[:]); got != float64(v) {
			t.Errorf("DEC round trip %v: %v", v, got)
		}
	}
}

// More than 255 points: labels continue in POINT:LABELS2; POINT:USED
// decides how many apply.
func TestLabelsBeyond255(t *testing.T) {
	s := newSynth(Intel, false, 2)
	s.analogCh = 0
	labels := make([]string, 300)
	for i := range labels {
		labels[i] = fmt.Sprintf("P%04d", i)
	}
	s.labels = nil // written by hand below
	for i := range s.frames {
		s.frames[i] = make([]wPoint, 300)
		s.frames[i][299] = wPoint{X: 1, Y: 2, Z: 3, W: 0}
	}
	s.extra = []wParam{
		{"POINT", "LABELS", TypeChar, []int{5, 255}, labels[:255], ""},
		{"POINT", "LABELS2", TypeChar, []int{5, 50}, append(labels[255:], "X1", "X2", "X3", "X4", "X5"), ""},
	}
	f := decodeBytes(t, s.bytes())
	if f.Points != 300 || len(f.Labels) != 300 {
		t.Fatalf("points %d labels %d", f.Points, len(f.Labels))
	}
	for i, l := range f.Labels {
		if l != labels[i] {
			t.Fatalf("label %d = %q, want %q", i, l, labels[i])
		}
	}
	frames, err := readAll(f)
	if err != nil || len(frames) != 2 || frames[1].Points[299].P != [3]float64{1 * float64(float32(0.1)), 2 * float64(float32(0.1)), 3 * float64(float32(0.1))} {
		t.Fatalf("frames %d err %v", len(frames), err)
	}
}

func TestUnits(t *testing.T) {
	for _, c := range []struct {
		units string
		k     float64
	}{{"mm", 0.001}, {"cm", 0.01}, {"m", 1}, {"M", 1}, {"in", 0.0254}, {"ft", 0.3048}} {
		s := newSynth(Intel, false, 1)
		s.units = c.units
		f := decodeBytes(t, s.bytes())
		if f.MetresPerUnit != c.k {
			t.Errorf("%q: %v m per unit, want %v", c.units, f.MetresPerUnit, c.k)
		}
	}
	s := newSynth(Intel, false, 1)
	s.units = "furlong"
	b := s.bytes()
	_, err := Decode(bytes.NewReader(b), int64(len(b)))
	var e *Error
	if !errors.As(err, &e) || e.Section != `parameter "POINT:UNITS"` || e.Offset != int64(bytes.Index(b, []byte("UNITS"))-2) || !strings.Contains(e.Msg, `"furlong"`) {
		t.Errorf("unknown unit: %v", err)
	}
	s = newSynth(Intel, false, 1)
	s.omit = map[string]bool{"POINT:UNITS": true}
	b = s.bytes()
	if _, err := Decode(bytes.NewReader(b), int64(len(b))); err == nil || !strings.Contains(err.Error(), "POINT:UNITS") {
		t.Errorf("missing unit: %v", err)
	}
}

// More than 65535 frames: the header's 16-bit last frame overflows and
// POINT:FRAMES (a real here) or TRIAL:ACTUAL_END_FIELD carries the count.
func TestManyFrames(t *testing.T) {
	const n = 70000
	mk := func() *synth {
		s := newSynth(Intel, false, 0)
		s.analogCh = 0
		s.labels = []string{"A"}
		s.frames = make([][]wPoint, n)
		for i := range s.frames {
			s.frames[i] = []wPoint{{X: float32(i % 30000), W: 0}}
		}
		s.hdrLast = 65535
		s.omit = map[string]bool{"POINT:FRAMES": true}
		return s
	}
	s := mk()
	s.extra = []wParam{{"POINT", "FRAMES", TypeFloat, nil, []float32{n}, ""}}
	f := decodeBytes(t, s.bytes())
	if f.Frames != n || f.FirstFrame != 1 {
		t.Fatalf("POINT:FRAMES: %d frames from %d, want %d from 1", f.Frames, f.FirstFrame, n)
	}
	r := f.NewReader()
	if err := r.Seek(n - 1); err != nil {
		t.Fatal(err)
	}
	fr, err := r.Next()
	if err != nil || fr.Number != n || fr.Points[0].P[0] != float64((n-1)%30000)*float64(float32(0.1)) {
		t.Fatalf("last frame: %+v %v", fr, err)
	}
	if _, err := r.Next(); err != io.EOF {
		t.Fatalf("after the last frame: %v", err)
	}

	s = mk()
	s.extra = []wParam{
		{"TRIAL", "ACTUAL_START_FIELD", TypeInt, []int{2}, []int{1, 0}, ""},
		{"TRIAL", "ACTUAL_END_FIELD", TypeInt, []int{2}, []int{n & 0xffff, n >> 16}, ""},
	}
	f = decodeBytes(t, s.bytes())
	if f.Frames != n {
		t.Fatalf("TRIAL fields: %d frames, want %d", f.Frames, n)
	}
	// A count larger than the file holds is not believed.
	s = mk()
	s.extra = []wParam{{"POINT", "FRAMES", TypeFloat, nil, []float32{2 * n}, ""}}
	f = decodeBytes(t, s.bytes())
	if f.Frames != 65535 {
		t.Fatalf("oversized POINT:FRAMES: %d frames, want the header's 65535", f.Frames)
	}
}

func TestNonFiniteRealIsBad(t *testing.T) {
	s := newSynth(MIPS, true, 3)
	s.frames[1][0].Y = float32(math.Inf(1))
	s.frames[2][0].W = float32(math.NaN())
	f := decodeBytes(t, s.bytes())
	frames, err := readAll(f)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []bool{false, true, true} {
		p := frames[i].Points[0]
		if p.Bad != want || p.Valid == want {
			t.Errorf("frame %d: bad %v valid %v, want bad %v", i, p.Bad, p.Valid, want)
		}
	}
}

func TestUnsignedAnalog(t *testing.T) {
	s := newSynth(Intel, false, 2)
	s.analog[0] = []float32{-1, 5, 0, 0} // -1 as int16 is 65535 unsigned
	s.aOffset = []int{-32768, 0}         // 32768 unsigned
	s.extra = []wParam{{"ANALOG", "FORMAT", TypeChar, []int{8}, []string{"UNSIGNED"}, ""}}
	f := decodeBytes(t, s.bytes())
	frames, err := readAll(f)
	if err != nil {
		t.Fatal(err)
	}
	if !f.AnalogUnsigned {
		t.Fatal("ANALOG:FORMAT UNSIGNED not seen")
	}
	g := float64(float32(0.25))
	if want := (65535.0 - 32768) * 0.5 * g; frames[0].Analog[0] != want {
		t.Errorf("unsigned sample: %v, want %v", frames[0].Analog[0], want)
	}
}

// recordAt returns the file offset of the parameter record named name
// (the name-length byte).
func recordAt(t *testing.T, b []byte, name string) int {
	t.Helper()
	for off := BlockSize + 4; off+2+len(name) <= len(b); off++ {
		if int(b[off]) == len(name) && string(b[off+2:off+2+len(name)]) == name {
			return off
		}
	}
	t.Fatalf("record %q not found", name)
	return 0
}

// Malformed files: each corruption gives an *Error naming the section and
// the byte offset of the problem, and never a panic.
func TestMalformed(t *testing.T) {
	base := newSynth(Intel, false, 5).bytes()
	f := decodeBytes(t, base)
	cases := []struct {
		name    string
		mutate  func(b []byte) []byte
		section string
		offset  func(b []byte) int64
		msg     string
	}{
		{"key byte", func(b []byte) []byte { b[1] = 0x51; return b }, "header", func([]byte) int64 { return 1 }, "not a C3D file"},
		{"parameter block 1", func(b []byte) []byte { b[0] = 1; return b }, "header", func([]byte) int64 { return 0 }, "parameter section block 1"},
		{"parameter block past the end", func(b []byte) []byte { b[0] = 200; return b }, "parameter section", func([]byte) int64 { return 199 * 512 }, "file ends"},
		{"processor", func(b []byte) []byte { b[515] = 99; return b }, "parameter section", func([]byte) int64 { return 515 }, "processor type 99"},
		{"block count 0", func(b []byte) []byte { b[514] = 0; return b }, "parameter section", func([]byte) int64 { return 514 }, "block count is 0"},
		{"block count past the end", func(b []byte) []byte { b[514] = 100; return b }, "parameter section", func(b []byte) int64 { return int64(len(b)) }, "file ends"},
		{"parameter type", func(b []byte) []byte { r := recordAt(t, b, "RATE"); b[r+2+4+2] = 3; return b },
			`parameter "RATE" of group 1`, func(b []byte) int64 { return int64(recordAt(t, b, "RATE") + 8) }, "type 3 unknown"},
		{"huge dimensions", func(b []byte) []byte { r := recordAt(t, b, "LABELS"); b[r+10+2] = 255; b[r+10+3] = 255; return b },
			`parameter "LABELS" of group 1`, func(b []byte) int64 { return int64(recordAt(t, b, "LABELS") + 10 + 3) }, "need more bytes"},
		{"negative next offset", func(b []byte) []byte { r := recordAt(t, b, "SCALE"); b[r+7] = 0xf0; b[r+8] = 0xff; return b },
			"parameter section record", func(b []byte) int64 { return int64(recordAt(t, b, "SCALE") + 7) }, "negative"},
		{"name with a control byte", func(b []byte) []byte { r := recordAt(t, b, "SCALE"); b[r+3] = 7; return b },
			"parameter section record", func(b []byte) int64 { return int64(recordAt(t, b, "S\aALE")) }, "control"},
		{"point rate 0", func(b []byte) []byte { r := recordAt(t, b, "RATE"); copy(b[r+2+4+2+2:], []byte{0, 0, 0, 0}); return b },
			`parameter "POINT:RATE"`, func(b []byte) int64 { return int64(recordAt(t, b, "RATE")) }, "point rate 0"},
		{"data start 1", func(b []byte) []byte { r := recordAt(t, b, "DATA_START"); b[r+14+2] = 1; b[r+14+3] = 0; return b },
			`parameter "POINT:DATA_START"`, func(b []byte) int64 { return int64(recordAt(t, b, "DATA_START")) }, "block 1"},
		{"data start on the parameter section", func(b []byte) []byte { r := recordAt(t, b, "DATA_START"); b[r+14+2] = 2; b[r+14+3] = 0; return b },
			`parameter "POINT:DATA_START"`, func(b []byte) int64 { return int64(recordAt(t, b, "DATA_START")) }, "not after the parameter section"},
		{"data start past the end", func(b []byte) []byte { r := recordAt(t, b, "DATA_START"); b[r+14+2] = 0; b[r+14+3] = 0x40; return b },
			"data section", func([]byte) int64 { return (0x4000 - 1) * 512 }, "before the end of the first frame"},
		{"data truncated", func(b []byte) []byte { return b[:len(b)-3] },
			"data section frame 5", func([]byte) int64 { return f.DataStart + 4*int64(f.FrameSize) }, fmt.Sprintf("file ends at byte %d", len(base)-3)},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			b := c.mutate(bytes.Clone(base))
			g, err := Decode(bytes.NewReader(b), int64(len(b)))
			if err == nil {
				_, err = readAll(g)
			}
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("error %v (%T), want *Error", err, err)
			}
			if !strings.HasPrefix(e.Section, c.section) || e.Offset != c.offset(b) || !strings.Contains(e.Msg, c.msg) {
				t.Errorf("got %v\nwant section %q at byte %d, message with %q", err, c.section, c.offset(b), c.msg)
			}
			if !strings.Contains(err.Error(), fmt.Sprintf("at byte %d", e.Offset)) {
				t.Errorf("message does not give the offset: %v", err)
			}
		})
	}
}

// Every strict prefix of a synthetic file is refused with an *Error.
func TestTruncatedSynthetic(t *testing.T) {
	for _, proc := range []Processor{Intel, DEC, MIPS} {
		for _, float := range []bool{false, true} {
			b := newSynth(proc, float, 4).bytes()
			for n := 0; n < len(b); n++ {
				err := decodeAndRead(b[:n])
				var e *Error
				if !errors.As(err, &e) || e.Offset < 0 || e.Section == "" {
					t.Fatalf("%v float=%v prefix %d: %v", proc, float, n, err)
				}
			}
			if err := decodeAndRead(b); err != nil {
				t.Fatalf("%v float=%v whole file: %v", proc, float, err)
			}
		}
	}
}

// decodeAndRead decodes b and reads every frame; nil when all is well.
func decodeAndRead(b []byte) error {
	f, err := Decode(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		return err
	}
	r := f.NewReader()
	for {
		_, err := r.Next()
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}

// Random corruption of synthetic files: never a panic; every refusal is an
// *Error.
func TestRandomCorruption(t *testing.T) {
	rng := rand.New(rand.NewSource(1))
	seeds := [][]byte{newSynth(Intel, false, 6).bytes(), newSynth(DEC, true, 6).bytes(), newSynth(MIPS, true, 6).bytes()}
	for i := 0; i < 1500; i++ {
		b := bytes.Clone(seeds[i%len(seeds)])
		for k := 1 + rng.Intn(4); k > 0; k-- {
			b[rng.Intn(len(b))] = byte(rng.Intn(256))
		}
		if err := decodeAndRead(b); err != nil {
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("corruption %d: %v (%T), want *Error", i, err, err)
			}
		}
	}
}

func TestParamGetters(t *testing.T) {
	s := newSynth(MIPS, false, 1)
	s.extra = []wParam{
		{"TEST", "B", TypeByte, []int{3}, []int{0, 200, 255}, "bytes"},
		{"TEST", "I", TypeInt, []int{2}, []int{-2, 40000}, ""},
		{"TEST", "F", TypeFloat, []int{2}, []float32{1.5, 3}, ""},
		{"TEST", "S", TypeChar, []int{3, 2, 2}, []string{"ab", "c", "def", ""}, ""},
	}
	f := decodeBytes(t, s.bytes())
	b, err := f.Param("test", "b").Ints()
	if err != nil || fmt.Sprint(b) != "[0 200 255]" || f.Param("TEST", "B").Desc != "bytes" {
		t.Errorf("byte: %v %v", b, err)
	}
	i, _ := f.Param("TEST", "I").Ints()
	if fmt.Sprint(i) != fmt.Sprint([]int{-2, 40000 - 65536}) {
		t.Errorf("int: %v", i)
	}
	if c, err := f.Param("TEST", "I").Count(); err != nil || c != 65534 {
		t.Errorf("count: %v %v", c, err)
	}
	if v, err := f.Param("TEST", "F").Floats(); err != nil || fmt.Sprint(v) != "[1.5 3]" {
		t.Errorf("float: %v %v", v, err)
	}
	if _, err := f.Param("TEST", "F").Ints(); err == nil || !strings.Contains(err.Error(), `parameter "TEST:F"`) {
		t.Errorf("1.5 as an int: %v", err)
	}
	if v, err := f.Param("TEST", "S").Strings(); err != nil || fmt.Sprintf("%q", v) != `["ab" "c" "def" ""]` {
		t.Errorf("strings: %q %v", v, err)
	}
	if _, err := f.Param("TEST", "S").Floats(); err == nil {
		t.Error("char read as numbers")
	}
	if _, err := f.Param("TEST", "I").Strings(); err == nil {
		t.Error("int read as strings")
	}
	if f.Param("TEST", "NOPE") != nil || f.Group("test") == nil || len(f.Group("TEST").Params) != 4 {
		t.Error("lookup")
	}
}

// The frame loop allocates nothing: one buffer and one Frame are reused.
func TestFrameLoopAllocs(t *testing.T) {
	for _, float := range []bool{false, true} {
		s := newSynth(DEC, float, 500)
		f := decodeBytes(t, s.bytes())
		r := f.NewReader()
		allocs := testing.AllocsPerRun(2000, func() {
			if _, err := r.Next(); err == io.EOF {
				r.Seek(0)
			} else if err != nil {
				t.Fatal(err)
			}
		})
		if allocs != 0 {
			t.Errorf("float=%v: %v allocations per frame, want 0", float, allocs)
		}
	}
}
