package c3d

// Conformance tests against the real C3D samples in ../shared/data/c3d.
// Every expected value below is from ../shared/data/c3d/README.md; each
// check names the README table it comes from.

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"forereach/internal/shareddata"
)

// sampleDir returns ../shared/data/c3d beside the repository, or skips the
// test when it is absent.
func sampleDir(t testing.TB) string {
	t.Helper()
	return shareddata.Require(t, "c3d", "README.md")
}

type sample struct {
	f      *File
	frames []Frame
	raw    []byte
}

func loadSample(t testing.TB, rel string) sample {
	t.Helper()
	path := filepath.Join(sampleDir(t), rel)
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	st, err := fh.Stat()
	if err != nil {
		t.Fatal(err)
	}
	f, err := Decode(fh, st.Size())
	if err != nil {
		t.Fatalf("%s: %v", rel, err)
	}
	frames, err := readAll(f)
	if err != nil {
		t.Fatalf("%s: %v", rel, err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return sample{f, frames, raw}
}

func (s sample) point(t testing.TB, frame int, label string) Point {
	t.Helper()
	i := slices.Index(s.f.Labels, label)
	if i < 0 {
		t.Fatalf("label %q not in %q", label, s.f.Labels)
	}
	fr := s.frames[frame-s.f.FirstFrame]
	if fr.Number != frame {
		t.Fatalf("frame %d found at number %d", frame, fr.Number)
	}
	return fr.Points[i]
}

func mustParam(t testing.TB, f *File, g, n string) *Param {
	t.Helper()
	p := f.Param(g, n)
	if p == nil {
		t.Fatalf("parameter %s:%s missing", g, n)
	}
	return p
}

func f32(v float64) float64 { return float64(float32(v)) }

var sample01Variants = []struct {
	name  string
	proc  Processor
	float bool
}{
	{"Eb015pi", Intel, false}, {"Eb015pr", Intel, true},
	{"Eb015vi", DEC, false}, {"Eb015vr", DEC, true},
	{"Eb015si", MIPS, false}, {"Eb015sr", MIPS, true},
}

func loadSample01(t *testing.T) map[string]sample {
	out := map[string]sample{}
	for _, v := range sample01Variants {
		out[v.name] = loadSample(t, "sample01/"+v.name+".c3d")
	}
	return out
}

var sample01Labels = strings.Fields("RFT1 RFT2 RFT3 LFT1 LFT2 LFT3 RSK1 RSK2 RSK3 RSK4 LSK1 LSK2 LSK3 LSK4 RTH1 RTH2 RTH3 RTH4 LTH1 LTH2 LTH3 LTH4 PV1 PV2 PV3 pv4")

func TestSample01Header(t *testing.T) {
	all := loadSample01(t)
	for _, v := range sample01Variants {
		t.Run(v.name, func(t *testing.T) {
			s := all[v.name]
			f, h := s.f, s.f.Header
			// README "Header and parameters (identical in all six unless listed)".
			if f.Processor != v.proc || f.Float != v.float {
				t.Errorf("processor %v float %v, want %v %v", f.Processor, f.Float, v.proc, v.float)
			}
			if got := s.raw[512:515]; !bytes.Equal(got, []byte{1, 0x50, 9}) || s.raw[515] != byte(v.proc) {
				t.Errorf("parameter section header % x", s.raw[512:516])
			}
			if h.ParamBlock != 2 || h.Key != 0x50 || h.Points != 26 || h.AnalogPerFrame != 64 || h.FirstFrame != 1 || h.LastFrame != 450 ||
				h.MaxGap != 10 || h.DataStart != 11 || h.AnalogSamples != 4 || h.Rate != 50 || h.LabelRangeKey != 0 {
				t.Errorf("header %+v", h)
			}
			wantScale := f32(1.0 / 12) // "+0.083333336 (float32 of 1/12) in *i files; −0.083333336 in *r files"
			if v.float {
				wantScale = -wantScale
			}
			if h.Scale != wantScale || f.Scale != wantScale {
				t.Errorf("scale: header %v POINT:SCALE %v, want %v", h.Scale, f.Scale, wantScale)
			}
			// "header events: 3: RIC 2.72 s, RHS 5.40 s, RTO 7.32 s (display flag 1)"
			wantEv := []Event{{"RIC", f32(2.72), true}, {"RHS", f32(5.40), true}, {"RTO", f32(7.32), true}}
			if h.EventKey != 12345 || !slices.Equal(h.Events, wantEv) {
				t.Errorf("events key %d %+v", h.EventKey, h.Events)
			}
			if f.Points != 26 || f.Frames != 450 || f.FirstFrame != 1 || f.Rate != 50 || f.Units != "mm" || f.MetresPerUnit != 0.001 || f.DataStart != 10*512 {
				t.Errorf("derived: points %d frames %d first %d rate %v units %q data at %d", f.Points, f.Frames, f.FirstFrame, f.Rate, f.Units, f.DataStart)
			}
			for _, c := range []struct {
				g, n string
				want int
			}{{"POINT", "USED", 26}, {"POINT", "FRAMES", 450}, {"POINT", "DATA_START", 11}, {"ANALOG", "USED", 16}} {
				if got, err := mustParam(t, f, c.g, c.n).Count(); err != nil || got != c.want {
					t.Errorf("%s:%s = %d %v, want %d", c.g, c.n, got, err, c.want)
				}
			}
			for _, c := range []struct {
				g, n string
				want float64
			}{{"POINT", "RATE", 50}, {"ANALOG", "RATE", 200}, {"ANALOG", "GEN_SCALE", f32(0.5)}, {"POINT", "SCALE", wantScale}} {
				if got, err := mustParam(t, f, c.g, c.n).Float(); err != nil || got != c.want {
					t.Errorf("%s:%s = %v %v, want %v", c.g, c.n, got, err, c.want)
				}
			}
			if off, err := mustParam(t, f, "ANALOG", "OFFSET").Ints(); err != nil || len(off) != 32 || slices.ContainsFunc(off, func(o int) bool { return o != 2048 }) {
				t.Errorf("ANALOG:OFFSET %v %v, want 32 × 2048", off, err)
			}
			sc, err := mustParam(t, f, "ANALOG", "SCALE").Floats()
			if err != nil || len(sc) < 6 {
				t.Fatalf("ANALOG:SCALE %v %v", sc, err)
			}
			for i, w := range []float64{-0.86, -0.884, -1.488, -239.36, -227.74, -92.9} {
				if sc[i] != f32(w) {
					t.Errorf("ANALOG:SCALE[%d] = %v, want float32 %v", i, sc[i], w)
				}
			}
			var groups []string
			for _, g := range f.Groups {
				groups = append(groups, g.Name)
			}
			if strings.Join(groups, " ") != "POINT ANALOG FORCE_PLATFORM FPLOC SUBJECT" {
				t.Errorf("groups %v", groups)
			}
			for _, c := range []struct {
				n    string
				dims []int
				want string
			}{{"UNITS", []int{4}, "mm"}, {"X_SCREEN", []int{2}, "+Y"}, {"Y_SCREEN", nil, "+Z"}} {
				p := mustParam(t, f, "POINT", c.n)
				if got, err := p.String(); err != nil || got != c.want || (c.dims != nil && !slices.Equal(p.Dims, c.dims)) {
					t.Errorf("POINT:%s = %q dims %v (%v), want %q dims %v", c.n, got, p.Dims, err, c.want, c.dims)
				}
			}
			lp := mustParam(t, f, "POINT", "LABELS")
			all, _ := lp.Strings()
			if !slices.Equal(lp.Dims, []int{4, 48}) || len(all) != 48 || all[37] != "LS" {
				t.Errorf("POINT:LABELS dims %v, %d entries, [37] = %q", lp.Dims, len(all), all[min(37, len(all)-1)])
			}
			if !slices.Equal(f.Labels, sample01Labels) {
				t.Errorf("labels %q", f.Labels)
			}
			if want := strings.Fields("FX1 FY1 FZ1 MX1 MY1 MZ1 CH7 CH8 FX2 FY2 FZ2 MX2 MY2 MZ2 CH15 CH16"); !slices.Equal(f.AnalogLabels, want) {
				t.Errorf("analog labels %q", f.AnalogLabels)
			}
			// README "Format oddities" 2 and Confirmation A/B: 20 point
			// descriptions, RFT1 "DIST/LAT FOOT", point 9 "DISTAL FOOT",
			// analog 2 "FORCE Z-COMP 1".
			pd, _ := mustParam(t, f, "POINT", "DESCRIPTIONS").Strings()
			ad, _ := mustParam(t, f, "ANALOG", "DESCRIPTIONS").Strings()
			if len(pd) != 20 || pd[0] != "DIST/LAT FOOT" || pd[9] != "DISTAL FOOT" || len(ad) < 3 || ad[2] != "FORCE Z-COMP 1" {
				t.Errorf("descriptions: %d points %q; analog %q", len(pd), pd, ad)
			}
			if f.AnalogChannels != 16 || f.AnalogSamples != 4 || f.AnalogRate != 200 {
				t.Errorf("analog %d × %d at %v", f.AnalogChannels, f.AnalogSamples, f.AnalogRate)
			}
			if len(s.frames) != 450 || len(s.frames)*f.AnalogSamples != 1800 {
				t.Errorf("%d frames", len(s.frames))
			}
		})
	}
}

// README "Expected points (all six files)": frame, marker, x y z (4
// decimals), 4th word, camera mask, residual, raw int16, and the float32
// values of the *r files where listed.
var sample01Points = []struct {
	frame  int
	label  string
	xyz    [3]float64
	valid  bool
	word   float64
	cams   uint8
	res    float64
	raw    [3]int
	stored []float32 // the *r files' float32, when the README lists them
}{
	{1, "RFT1", [3]float64{248.5833, 226.8333, 37.4167}, true, 15888, 62, 1.3333, [3]int{2983, 2722, 449}, []float32{248.58334, 226.83334, 37.416668}},
	{1, "LFT1", [3]float64{}, false, -1, 0, 0, [3]int{}, nil},
	{1, "PV3", [3]float64{}, false, -1, 0, 0, [3]int{}, nil},
	{225, "RFT1", [3]float64{232.6667, 821.5834, 36.0000}, true, 15900, 62, 2.3333, [3]int{2792, 9859, 432}, []float32{232.66667, 821.5834, 36}},
	{225, "LFT1", [3]float64{-209.5000, 1188.6667, 108.3333}, true, 10513, 41, 1.4167, [3]int{-2514, 14264, 1300}, []float32{-209.5, 1188.6667, 108.333336}},
	{225, "PV3", [3]float64{-24.6667, 740.8334, 907.7500}, true, 2820, 11, 0.3333, [3]int{-296, 8890, 10893}, []float32{-24.666668, 740.8334, 907.75}},
	{450, "RFT1", [3]float64{324.5833, 2248.0000, 33.7500}, true, 9742, 38, 1.1667, [3]int{3895, 26976, 405}, []float32{324.58334, 2248, 33.75}},
	{450, "LFT1", [3]float64{}, false, -1, 0, 0, [3]int{}, nil},
	{450, "PV3", [3]float64{106.3333, 2125.8335, 936.5834}, true, 15115, 59, 0.9167, [3]int{1276, 25510, 11239}, []float32{106.333336, 2125.8335, 936.5834}},
}

// README "Additional points": frame, marker, x y z, valid / residual.
var sample01Additional = []struct {
	frame int
	label string
	xyz   [3]float64
	valid bool
	res   float64
}{
	{9, "RFT1", [3]float64{250.4167, 226.2500, 36.0833}, true, 1.5},
	{17, "RTH4", [3]float64{285.0000, 222.4167, 564.4167}, true, 0.8333},
	{21, "RTH1", [3]float64{351.7500, 126.3333, 673.3334}, true, 1.9167},
	{40, "LTH1", [3]float64{}, false, 0},
	{41, "LTH1", [3]float64{}, false, 0},
	{42, "LTH1", [3]float64{-85.5833, 72.3333, 675.0834}, true, 0.0833},
	{49, "LTH1", [3]float64{-81.8333, 95.1667, 690.0000}, true, 0.5833},
	{47, "PV3", [3]float64{}, false, 0},
	{48, "PV3", [3]float64{7.7500, 3.2500, 936.5000}, true, 1.0833},
	{51, "PV3", [3]float64{12.5833, 4.5833, 946.5000}, true, 0.1667},
}

// Tolerances (README "Conventions", Tolerances): printed 4-decimal values
// are within 1e-4 of the stored float32; an int file's float64 product
// raw × scale differs from that float32 by at most 1.02e-4, so against the
// printed value the int files get 1e-4 + 1.02e-4.
const (
	tolReal = 1e-4
	tolInt  = 1e-4 + 1.02e-4
)

func TestSample01Points(t *testing.T) {
	all := loadSample01(t)
	for _, v := range sample01Variants {
		t.Run(v.name, func(t *testing.T) {
			s := all[v.name]
			scale := f32(1.0 / 12)
			tol := tolInt
			if v.float {
				tol = tolReal
			}
			for _, e := range sample01Points {
				p := s.point(t, e.frame, e.label)
				where := fmt.Sprintf("frame %d %s", e.frame, e.label)
				if p.Valid != e.valid || p.Word != e.word || p.Bad {
					t.Errorf("%s: valid %v word %v bad %v, want %v %v", where, p.Valid, p.Word, p.Bad, e.valid, e.word)
				}
				if !e.valid {
					// "The coordinates of invalid samples are stored as 0,0,0."
					if p.P != [3]float64{} || p.Cameras != 0 || p.Residual != 0 {
						t.Errorf("%s: gap holds %+v", where, p)
					}
					continue
				}
				if p.Cameras != e.cams || math.Abs(p.Residual-e.res) > tolReal {
					t.Errorf("%s: cameras %d residual %v, want %d %v", where, p.Cameras, p.Residual, e.cams, e.res)
				}
				for k := range 3 {
					if math.Abs(p.P[k]-e.xyz[k]) > tol {
						t.Errorf("%s: coordinate %d = %v, want %v ± %v", where, k, p.P[k], e.xyz[k], tol)
					}
					if p.M[k] != p.P[k]*0.001 {
						t.Errorf("%s: metres %v from %v", where, p.M[k], p.P[k])
					}
					if v.float {
						// README Tolerances: float32(raw) * float32(scale) == stored float32, bit for bit.
						if p.P[k] != float64(float32(e.raw[k])*float32(scale)) || p.P[k] != float64(e.stored[k]) {
							t.Errorf("%s: stored real %v, want float32 %v = raw %d × scale", where, p.P[k], e.stored[k], e.raw[k])
						}
					} else if p.P[k] != float64(e.raw[k])*scale {
						t.Errorf("%s: %v, want raw %d × %v", where, p.P[k], e.raw[k], scale)
					}
				}
			}
			for _, e := range sample01Additional {
				p := s.point(t, e.frame, e.label)
				where := fmt.Sprintf("frame %d %s", e.frame, e.label)
				if p.Valid != e.valid {
					t.Errorf("%s: valid %v, want %v", where, p.Valid, e.valid)
					continue
				}
				if !e.valid {
					continue
				}
				if math.Abs(p.Residual-e.res) > tolReal {
					t.Errorf("%s: residual %v, want %v", where, p.Residual, e.res)
				}
				for k := range 3 {
					if math.Abs(p.P[k]-e.xyz[k]) > tol {
						t.Errorf("%s: coordinate %d = %v, want %v ± %v", where, k, p.P[k], e.xyz[k], tol)
					}
				}
			}
			// README "Validity runs": RFT1 frames 1-450, LFT1 26-445, PV3 48-450.
			for _, run := range []struct {
				label       string
				first, last int
			}{{"RFT1", 1, 450}, {"LFT1", 26, 445}, {"PV3", 48, 450}} {
				for n := 1; n <= 450; n++ {
					if want := n >= run.first && n <= run.last; s.point(t, n, run.label).Valid != want {
						t.Errorf("%s frame %d: valid %v, want %v", run.label, n, !want, want)
					}
				}
			}
			// README "data: 11,700 point samples: 226 invalid, 19 valid with residual 0".
			var n, invalid, zeroRes int
			for _, fr := range s.frames {
				for _, p := range fr.Points {
					n++
					if !p.Valid {
						invalid++
					} else if p.Residual == 0 {
						zeroRes++
					}
				}
			}
			if n != 11700 || invalid != 226 || zeroRes != 19 {
				t.Errorf("%d samples, %d invalid, %d valid with residual 0; want 11700, 226, 19", n, invalid, zeroRes)
			}
		})
	}
}

// README "Expected analog values (all six files)"; value = (raw - 2048) ×
// ANALOG:SCALE[c] × 0.5, printed to 3 decimals (4 for FX1): within 1e-4.
func TestSample01Analog(t *testing.T) {
	all := loadSample01(t)
	type av struct {
		ch, sample int
		want       float64
	}
	want := []av{{0, 0, -26.66}, {0, 1, -25.80}, {2, 0, -20.832}, {2, 1, -21.576}, {2, 2, -20.832}, {2, 3, -22.320}, {2, 1799, -21.576}}
	for i, w := range []float64{-801.288, -802.032, -802.032, -803.520, -804.264, -803.520, -803.520, -803.520, -801.288, -804.264, -805.008} {
		want = append(want, av{2, 1370 + i, w})
	}
	for _, v := range sample01Variants {
		s := all[v.name]
		for _, w := range want {
			fr := s.frames[w.sample/4]
			got := fr.Analog[(w.sample%4)*16+w.ch]
			if math.Abs(got-w.want) > 1e-4 {
				t.Errorf("%s: channel %d sample %d = %v, want %v", v.name, w.ch, w.sample, got, w.want)
			}
		}
	}
}

// README "Cross-variant identity": same header fields and parameters except
// the processor and the sign of the scale; same validity, camera masks,
// residuals and analog values; Eb015vi and Eb015si coordinates equal Eb015pi's,
// Eb015vr and Eb015sr equal Eb015pr's, and int vs real agree in float32 (README Tolerances).
func TestSample01CrossVariant(t *testing.T) {
	all := loadSample01(t)
	ref := map[bool]sample{false: all["Eb015pi"], true: all["Eb015pr"]}
	pi := all["Eb015pi"]
	for _, v := range sample01Variants {
		s := all[v.name]
		h, hr := s.f.Header, pi.f.Header
		h.Scale, hr.Scale = math.Abs(h.Scale), math.Abs(hr.Scale)
		if fmt.Sprint(h) != fmt.Sprint(hr) {
			t.Errorf("%s header %+v\nvs Eb015pi %+v", v.name, h, hr)
		}
		if got, want := paramDump(t, s.f), paramDump(t, pi.f); got != want {
			t.Errorf("%s parameters differ from Eb015pi:\n%s\nvs\n%s", v.name, got, want)
		}
		r := ref[v.float]
		for i, fr := range s.frames {
			for j, p := range fr.Points {
				q, pp := r.frames[i].Points[j], pi.frames[i].Points[j]
				if p.P != q.P {
					t.Fatalf("%s frame %d point %d: %v, %s has %v", v.name, fr.Number, j, p.P, map[bool]string{false: "Eb015pi", true: "Eb015pr"}[v.float], q.P)
				}
				if p.Valid != pp.Valid || p.Cameras != pp.Cameras || p.Residual != pp.Residual || p.Word != pp.Word {
					t.Fatalf("%s frame %d point %d: %+v vs Eb015pi %+v", v.name, fr.Number, j, p, pp)
				}
				for k := range 3 {
					if float32(p.P[k]) != float32(pp.P[k]) || math.Abs(p.P[k]-pp.P[k]) > 1.02e-4 {
						t.Fatalf("%s frame %d point %d: %v vs Eb015pi %v beyond the int scaling", v.name, fr.Number, j, p.P, pp.P)
					}
				}
			}
			if !slices.Equal(fr.Analog, pi.frames[i].Analog) {
				t.Fatalf("%s frame %d analog differs from Eb015pi", v.name, fr.Number)
			}
		}
	}
}

// paramDump lists every parameter with its decoded values, POINT:SCALE by
// magnitude.
func paramDump(t *testing.T, f *File) string {
	var b strings.Builder
	for _, g := range f.Groups {
		fmt.Fprintf(&b, "%d %s %q %v\n", g.ID, g.Name, g.Desc, g.Locked)
		for _, p := range g.Params {
			var vals any
			var err error
			switch p.Type {
			case TypeChar:
				vals, err = p.Strings()
			case TypeFloat:
				var fs []float64
				fs, err = p.Floats()
				if p.FullName() == "POINT:SCALE" {
					for i := range fs {
						fs[i] = math.Abs(fs[i])
					}
				}
				vals = fs
			default:
				vals, err = p.Ints()
			}
			if err != nil {
				t.Fatal(err)
			}
			fmt.Fprintf(&b, "  %s %d %v %q %v\n", p.Name, p.Type, p.Dims, p.Desc, vals)
		}
	}
	return b.String()
}

func TestSample37Hands(t *testing.T) {
	s := loadSample(t, "sample37/ART-Human_hands_real_no6dof.c3d")
	f, h := s.f, s.f.Header
	// README "Sample37: ART-Human_hands_real_no6dof.c3d" field table and
	// "Format oddities" (Sample37) 1-7.
	if !bytes.Equal(s.raw[512:516], []byte{0, 0, 7, 84}) || f.Processor != Intel || !f.Float {
		t.Errorf("parameter section header % x, float %v", s.raw[512:516], f.Float)
	}
	if h.Points != 61 || h.AnalogPerFrame != 0 || h.FirstFrame != 1 || h.LastFrame != 969 || h.MaxGap != 0 || h.DataStart != 9 || h.Rate != 60 ||
		h.Scale != f32(-0.047) || h.EventKey != 0 || len(h.Events) != 0 || h.LabelRangeKey != 0 || h.LabelRangeBlock != 12345 {
		t.Errorf("header %+v", h)
	}
	if f.Points != 61 || f.Frames != 969 || f.Rate != 60 || f.Units != "mm" || f.AnalogChannels != 0 || f.DataStart != 8*512 {
		t.Errorf("derived: %d points %d frames %v Hz %q, %d analog", f.Points, f.Frames, f.Rate, f.Units, f.AnalogChannels)
	}
	if p := mustParam(t, f, "POINT", "UNITS"); !slices.Equal(p.Dims, []int{2, 1}) {
		t.Errorf("POINT:UNITS dims %v", p.Dims)
	}
	for _, c := range []struct {
		g, n string
		want []int
	}{{"POINT", "FRAMES", []int{969}}, {"TRIAL", "ACTUAL_START_FIELD", []int{1, 0}}, {"TRIAL", "ACTUAL_END_FIELD", []int{969, 0}},
		{"ANALOG", "USED", []int{0}}, {"FORCE_PLATFORM", "USED", []int{0}}, {"POINT", "DATA_START", []int{9}}} {
		if got, err := mustParam(t, f, c.g, c.n).Ints(); err != nil || !slices.Equal(got, c.want) {
			t.Errorf("%s:%s = %v %v, want %v", c.g, c.n, got, err, c.want)
		}
	}
	for _, c := range [][2]string{{"POINT", "RATE"}, {"TRIAL", "CAMERA_RATE"}} {
		if got, err := mustParam(t, f, c[0], c[1]).Float(); err != nil || got != 60 {
			t.Errorf("%s:%s = %v %v", c[0], c[1], got, err)
		}
	}
	if f.Param("ANALOG", "RATE") != nil {
		t.Error("ANALOG:RATE present")
	}
	if first, last := f.Groups[0], f.Groups[len(f.Groups)-1]; first.Name != "MANUFACTURER" || first.ID != 6 || last.Name != "POINT" || last.ID != 2 {
		t.Errorf("group order: first %d %s, last %d %s", first.ID, first.Name, last.ID, last.Name)
	}
	for _, g := range f.Groups {
		if !g.Locked || g.Desc != "" {
			t.Errorf("group %s locked %v desc %q", g.Name, g.Locked, g.Desc)
		}
		for _, p := range g.Params {
			if p.Locked || p.Desc != "" {
				t.Errorf("parameter %s locked %v desc %q", p.FullName(), p.Locked, p.Desc)
			}
		}
	}
	if p := mustParam(t, f, "POINT", "LABELS"); !slices.Equal(p.Dims, []int{16, 61}) {
		t.Errorf("POINT:LABELS dims %v", p.Dims)
	}
	for i, l := range strings.Fields("PELV LLSP ULSP LTSP UTSP NECK HEAD LSHO LUAR LLAR") {
		if f.Labels[i] != "Human4:"+l {
			t.Errorf("label %d = %q, want Human4:%s", i, f.Labels[i], l)
		}
	}
	if f.Labels[10] != "Human4:LHAN" || f.Labels[34] != "Human4:RHAN" || !slices.Contains(f.Labels, "Human4:RIFT") || !slices.Contains(f.Labels, "Human4:RTTI") {
		t.Errorf("hand labels: %q", f.Labels)
	}
	// "59,109 samples, all valid, all with 4th word 0.0".
	n := 0
	for _, fr := range s.frames {
		for _, p := range fr.Points {
			n++
			if !p.Valid || p.Word != 0 || p.Cameras != 0 || p.Residual != 0 {
				t.Fatalf("frame %d: %+v", fr.Number, p)
			}
		}
	}
	if n != 59109 {
		t.Errorf("%d samples, want 59109", n)
	}
	// Expected points: 4 decimals within 1e-4, bracketed float32 exactly.
	type xyz = [3]float64
	for _, e := range []struct {
		frame  int
		label  string
		xyz    xyz
		stored map[int]float32
	}{
		{1, "LHAN", xyz{550.5975, -92.5339, 1334.9165}, map[int]float32{0: 550.59753, 1: -92.53393}},
		{1, "RHAN", xyz{-362.3200, -233.0069, 1308.1613}, map[int]float32{0: -362.32004}},
		{1, "RIFT", xyz{-376.0144, -357.3502, 1384.1561}, map[int]float32{0: -376.01437, 1: -357.35016}},
		{485, "LHAN", xyz{475.2057, 167.9316, 943.6834}, map[int]float32{0: 475.20572, 1: 167.93161}},
		{485, "RHAN", xyz{-293.2908, 38.6837, 922.9434}, map[int]float32{1: 38.68367, 2: 922.94336}},
		{485, "RIFT", xyz{-356.1956, -112.3112, 901.7565}, map[int]float32{0: -356.19565, 1: -112.31118}},
		{969, "LHAN", xyz{482.9658, -1122.1296, 1075.8419}, map[int]float32{0: 482.96582}},
		{969, "RHAN", xyz{212.0092, -1179.9551, 1101.1696}, map[int]float32{0: 212.00923}},
		{969, "RIFT", xyz{312.1877, -1308.2344, 1147.2631}, map[int]float32{0: 312.18768}},
	} {
		p := s.point(t, e.frame, "Human4:"+e.label)
		for k := range 3 {
			if math.Abs(p.P[k]-e.xyz[k]) > tolReal {
				t.Errorf("frame %d %s: coordinate %d = %v, want %v", e.frame, e.label, k, p.P[k], e.xyz[k])
			}
			if st, ok := e.stored[k]; ok && p.P[k] != float64(st) {
				t.Errorf("frame %d %s: coordinate %d = %v, want float32 %v", e.frame, e.label, k, p.P[k], st)
			}
		}
	}
	// "Consistency check: segment lengths stay constant over all 969
	// frames": lengths printed to 3 decimals (so within 5e-4), sd < 1e-4
	// (the bound the README gives for LLAR→LHAN, held to for all five).
	for _, c := range []struct {
		a, b string
		want float64
	}{{"LLAR", "LHAN", 263.063}, {"LUAR", "LLAR", 278.592}, {"LSHO", "LUAR", 148.165}, {"RLAR", "RHAN", 263.446}, {"RIFO", "RIFT", 18.300}} {
		mean, sd := segment(t, s, "Human4:"+c.a, "Human4:"+c.b)
		if math.Abs(mean-c.want) > 5e-4 || sd >= 1e-4 {
			t.Errorf("%s→%s: mean %.6f sd %.3g, want %.3f, sd < 1e-4", c.a, c.b, mean, sd, c.want)
		}
	}
}

// segment returns the mean and standard deviation over all frames of the
// distance between two points.
func segment(t *testing.T, s sample, a, b string) (mean, sd float64) {
	i, j := slices.Index(s.f.Labels, a), slices.Index(s.f.Labels, b)
	if i < 0 || j < 0 {
		t.Fatalf("labels %q %q not found", a, b)
	}
	var sum, sum2 float64
	for _, fr := range s.frames {
		p, q := fr.Points[i].P, fr.Points[j].P
		d := math.Sqrt((p[0]-q[0])*(p[0]-q[0]) + (p[1]-q[1])*(p[1]-q[1]) + (p[2]-q[2])*(p[2]-q[2]))
		sum += d
		sum2 += d * d
	}
	n := float64(len(s.frames))
	mean = sum / n
	return mean, math.Sqrt(max(0, sum2/n-mean*mean))
}

func TestSample37Tools(t *testing.T) {
	s := loadSample(t, "sample37/ART-Human_tools_integer_6dofLimbs.c3d")
	f, h := s.f, s.f.Header
	// README "Sample37: ART-Human_tools_integer_6dofLimbs.c3d" field table.
	if !bytes.Equal(s.raw[512:516], []byte{0, 0, 5, 84}) || f.Processor != Intel || f.Float {
		t.Errorf("parameter section header % x, float %v", s.raw[512:516], f.Float)
	}
	scale := f32(0.048)
	if h.Points != 37 || h.AnalogPerFrame != 0 || h.FirstFrame != 1 || h.LastFrame != 1162 || h.MaxGap != 0 || h.DataStart != 7 || h.Rate != 60 || h.Scale != scale {
		t.Errorf("header %+v", h)
	}
	if f.Points != 37 || f.Frames != 1162 || f.Scale != scale || f.Units != "mm" || f.DataStart != 6*512 {
		t.Errorf("derived: %d points %d frames scale %v %q", f.Points, f.Frames, f.Scale, f.Units)
	}
	if p := mustParam(t, f, "POINT", "UNITS"); !slices.Equal(p.Dims, []int{2, 1}) {
		t.Errorf("POINT:UNITS dims %v", p.Dims)
	}
	var want []string
	for _, l := range strings.Fields("PELV LLSP ULSP LTSP UTSP NECK HEAD HEADY HEADZ LSHO LUAR LLAR LHAN LHANY LHANZ RSHO RUAR RLAR RHAN RHANY RHANZ LULE LLLE LFOO LFOOY LFOOZ RULE RLLE RFOO RFOOY RFOOZ") {
		want = append(want, "Human3:"+l)
	}
	for _, l := range strings.Fields("TOOL1 TOOL1Y TOOL1Z TOOL2 TOOL2Y TOOL2Z") {
		want = append(want, "Tools:"+l)
	}
	if !slices.Equal(f.Labels, want) {
		t.Errorf("labels %q", f.Labels)
	}
	n := 0
	for _, fr := range s.frames {
		for _, p := range fr.Points {
			n++
			if !p.Valid || p.Word != 0 {
				t.Fatalf("frame %d: %+v", fr.Number, p)
			}
		}
	}
	if n != 42994 {
		t.Errorf("%d samples, want 42994", n)
	}
	// Expected points: value = raw × scale exactly; printed to 3 decimals.
	for _, e := range []struct {
		frame int
		label string
		xyz   [3]float64
		raw   [3]int
	}{
		{1, "HEAD", [3]float64{-102.768, 1204.224, 1545.072}, [3]int{-2141, 25088, 32189}},
		{1, "LHAN", [3]float64{472.656, 1516.704, 1254.240}, [3]int{9847, 31598, 26130}},
		{1, "RHAN", [3]float64{-703.152, 931.056, 1221.072}, [3]int{-14649, 19397, 25439}},
		{581, "HEAD", [3]float64{-107.184, 385.728, 968.592}, [3]int{-2233, 8036, 20179}},
		{581, "LHAN", [3]float64{-73.536, 1125.360, 1131.504}, [3]int{-1532, 23445, 23573}},
		{581, "RHAN", [3]float64{-215.088, 330.768, 301.104}, [3]int{-4481, 6891, 6273}},
		{1162, "HEAD", [3]float64{-30.288, -538.560, 1495.728}, [3]int{-631, -11220, 31161}},
		{1162, "LHAN", [3]float64{115.728, -211.056, 830.784}, [3]int{2411, -4397, 17308}},
		{1162, "RHAN", [3]float64{-288.480, -915.264, 966.288}, [3]int{-6010, -19068, 20131}},
	} {
		p := s.point(t, e.frame, "Human3:"+e.label)
		for k := range 3 {
			if p.P[k] != float64(e.raw[k])*scale || math.Abs(p.P[k]-e.xyz[k]) > 5e-4 {
				t.Errorf("frame %d %s: coordinate %d = %v, want raw %d × scale ≈ %v", e.frame, e.label, k, p.P[k], e.raw[k], e.xyz[k])
			}
		}
	}
	// "Int16 overflow in this file": the stored (wrapped) values come back.
	for _, e := range []struct {
		frame        int
		headZ        int
		headZZ       int
		headZX, hzzY float64
	}{{22, 32398, 32747, -86.064, 1188.240}, {23, 32421, -32760, -87.024, 1187.136}, {84, 32366, -32758, -234.048, 1037.424}, {85, 32351, 32763, -235.344, 1037.040}} {
		hd, hz := s.point(t, e.frame, "Human3:HEAD"), s.point(t, e.frame, "Human3:HEADZ")
		if hd.P[2] != float64(e.headZ)*scale || hz.P[2] != float64(e.headZZ)*scale ||
			math.Abs(hz.P[0]-e.headZX) > 5e-4 || math.Abs(hz.P[1]-e.hzzY) > 5e-4 {
			t.Errorf("frame %d: HEAD z %v, HEADZ %v", e.frame, hd.P[2], hz.P)
		}
	}
	// "goes above that in frames 23-84 (62 frames) and wraps to negative;
	// the raw range in the file is −32760 .. 32763".
	hz := slices.Index(f.Labels, "Human3:HEADZ")
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, fr := range s.frames {
		if wrapped := fr.Points[hz].P[2] < 0; wrapped != (fr.Number >= 23 && fr.Number <= 84) {
			t.Errorf("frame %d: HEADZ z %v", fr.Number, fr.Points[hz].P[2])
		}
		for _, p := range fr.Points {
			for _, v := range p.P {
				lo, hi = min(lo, v/scale), max(hi, v/scale)
			}
		}
	}
	if math.Round(lo) != -32760 || math.Round(hi) != 32763 {
		t.Errorf("raw range %v .. %v, want -32760 .. 32763", lo, hi)
	}
	// "3 points per limb": RHANY and RHANZ sit 20.000 mm from RHAN (mean
	// printed to 3 decimals: within 5e-4; "sd 0.02": below 0.025).
	// HEAD→HEADZ is not constant because of the overflow.
	for _, b := range []string{"RHANY", "RHANZ"} {
		mean, sd := segment(t, s, "Human3:RHAN", "Human3:"+b)
		if math.Abs(mean-20) > 5e-4 || sd >= 0.025 {
			t.Errorf("RHAN→%s: mean %.6f sd %.4f, want 20.000, sd 0.02", b, mean, sd)
		}
	}
	if _, sd := segment(t, s, "Human3:HEAD", "Human3:HEADZ"); sd < 100 {
		t.Errorf("HEAD→HEADZ sd %v: the overflow is not visible", sd)
	}
}

// Prefixes of the real files: shorter than the data they declare, an
// *Error naming the section and offset; the whole data, no error.
func TestSampleTruncated(t *testing.T) {
	files := []string{"sample37/ART-Human_hands_real_no6dof.c3d", "sample37/ART-Human_tools_integer_6dofLimbs.c3d"}
	for _, v := range sample01Variants {
		files = append(files, "sample01/"+v.name+".c3d")
	}
	for _, name := range files {
		s := loadSample(t, name)
		need := int(s.f.DataStart) + s.f.Frames*s.f.FrameSize
		var lengths []int
		// Every 13th length through the header, the parameter section and
		// the first two frames; then about 30 cuts through the data.
		for n := 0; n < int(s.f.DataStart)+2*s.f.FrameSize; n += 13 {
			lengths = append(lengths, n)
		}
		for n := int(s.f.DataStart); n < len(s.raw); n += max(4999, len(s.raw)/30) {
			lengths = append(lengths, n)
		}
		lengths = append(lengths, need-1, need, len(s.raw))
		for _, n := range lengths {
			// Start reading a frame before the cut: the frames before it
			// are checked by the other tests.
			err := decodeAndReadFrom(s.raw[:n], (n-int(s.f.DataStart))/s.f.FrameSize-1)
			if n >= need {
				if err != nil {
					t.Errorf("%s prefix %d (data ends at %d): %v", name, n, need, err)
				}
				continue
			}
			var e *Error
			if !errors.As(err, &e) || e.Section == "" || e.Offset < 0 || !strings.Contains(err.Error(), "at byte ") {
				t.Fatalf("%s prefix %d: %v", name, n, err)
			}
		}
	}
}

// decodeAndReadFrom decodes b and reads from frame index i (clamped to the
// frames there are) to the end; nil when all is well.
func decodeAndReadFrom(b []byte, i int) error {
	f, err := Decode(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		return err
	}
	r := f.NewReader()
	if err := r.Seek(max(0, min(i, f.Frames))); err != nil {
		return err
	}
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
