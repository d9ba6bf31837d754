package bus

import (
	"bytes"
	"encoding/json"
	"math"
	"reflect"
	"strings"
	"testing"

	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"

	"gonum.org/v1/gonum/spatial/r3"
)

const topic = "forereach/pl3-palletiser/hands"

func TestSampleDecoderGood(t *testing.T) {
	var d SampleDecoder
	got, errs := d.Decode(topic, []byte(`{"v":1,"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97,"vendor_extra":{"a":[1,2]}}`))
	if len(errs) != 0 || len(got) != 1 {
		t.Fatalf("got %v, errors %v", got, errs)
	}
	want := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: 1741072329.512, P: r3.Vec{X: 1.2, Y: 0.35, Z: 1.05}}, Quality: 0.97, HasQuality: true}
	if got[0] != want {
		t.Errorf("got %+v, want %+v", got[0], want)
	}
	got, errs = d.Decode(topic, []byte(`{"v":1,"samples":[{"t":1,"track":"op1/left","pos":[0,0,0]},{"v":1,"t":1,"track":"op1/right","pos":[-1,2.5e-3,3]}]}`))
	if len(errs) != 0 || len(got) != 2 || got[0].Track != "op1/left" || got[1].P != (r3.Vec{X: -1, Y: 2.5e-3, Z: 3}) || got[0].HasQuality {
		t.Fatalf("batch: got %+v, errors %v", got, errs)
	}
}

func TestSampleDecoderBad(t *testing.T) {
	long := `{"v":1,"t":1,"track":"a","pos":[1,2,3],"pad":"` + strings.Repeat("x", 2000) + `"}`
	cases := []struct {
		payload string
		reason  string
		field   string
	}{
		{``, ReasonBadJSON, ""},
		{`{"v":1,"t":`, ReasonBadJSON, ""},
		{`[1,2,3]`, ReasonBadJSON, ""},
		{`"sample"`, ReasonBadJSON, ""},
		{`null`, ReasonMissingField, "v"},
		{`{"v":1,"t":NaN,"track":"a","pos":[1,2,3]}`, ReasonNonFinite, ""},
		{`{"v":1,"t":1,"track":"a","pos":[1,Infinity,3]}`, ReasonNonFinite, ""},
		{`{"v":1,"t":1e999,"track":"a","pos":[1,2,3]}`, ReasonNonFinite, "t"},
		{`{"t":1,"track":"a","pos":[1,2,3]}`, ReasonMissingField, "v"},
		{`{"v":2,"t":1,"track":"a","pos":[1,2,3]}`, ReasonBadVersion, "v"},
		{`{"v":"1","t":1,"track":"a","pos":[1,2,3]}`, ReasonBadField, "v"},
		{`{"v":1.5,"t":1,"track":"a","pos":[1,2,3]}`, ReasonBadField, "v"},
		{`{"v":1,"track":"a","pos":[1,2,3]}`, ReasonMissingField, "t"},
		{`{"v":1,"t":null,"track":"a","pos":[1,2,3]}`, ReasonMissingField, "t"},
		{`{"v":1,"t":"12:00","track":"a","pos":[1,2,3]}`, ReasonBadField, "t"},
		{`{"v":1,"t":-1,"track":"a","pos":[1,2,3]}`, ReasonBadField, "t"},
		{`{"v":1,"t":1,"pos":[1,2,3]}`, ReasonMissingField, "track"},
		{`{"v":1,"t":1,"track":5,"pos":[1,2,3]}`, ReasonBadField, "track"},
		{`{"v":1,"t":1,"track":"","pos":[1,2,3]}`, ReasonBadField, "track"},
		{`{"v":1,"t":1,"track":"op 1","pos":[1,2,3]}`, ReasonBadField, "track"},
		{`{"v":1,"t":1,"track":"` + strings.Repeat("a", 65) + `","pos":[1,2,3]}`, ReasonBadField, "track"},
		{`{"v":1,"t":1,"track":"a"}`, ReasonMissingField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":null}`, ReasonMissingField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":[1,2]}`, ReasonBadField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":[1,2,3,4]}`, ReasonBadField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":"1,2,3"}`, ReasonBadField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":[1,"2",3]}`, ReasonBadField, "pos"},
		{`{"v":1,"t":1,"track":"a","pos":[1,2,3000]}`, ReasonBadField, "pos[2]"},
		{`{"v":1,"t":1,"track":"a","pos":[1,2,3],"q":1.5}`, ReasonBadField, "q"},
		{`{"v":1,"t":1,"track":"a","pos":[1,2,3],"q":"high"}`, ReasonBadField, "q"},
		{`{"v":1,"samples":[]}`, ReasonBadField, "samples"},
		{`{"v":1,"samples":{}}`, ReasonBadField, "samples"},
		{`{"v":1,"samples":[{"t":1,"track":"a","pos":[1,2,3]}],"t":2}`, ReasonBadField, "samples"},
		{`{"v":1,"samples":[{"t":1,"track":"a","pos":[1,2,3],"samples":[]}]}`, ReasonBadField, "samples[0].samples"},
		{`{"v":1,"samples":[{"v":3,"t":1,"track":"a","pos":[1,2,3]}]}`, ReasonBadVersion, "samples[0].v"},
		{`{"v":1,"samples":[5]}`, ReasonBadJSON, "samples[0]"},
		{long, ReasonOversize, ""},
	}
	d := SampleDecoder{MaxSize: 1024}
	for _, c := range cases {
		got, errs := d.Decode(topic, []byte(c.payload))
		if len(got) != 0 || len(errs) != 1 {
			t.Errorf("%s: got %d samples and %d errors, want 0 and 1", c.payload, len(got), len(errs))
			continue
		}
		e := errs[0]
		if e.Reason != c.reason || e.Field != c.field || e.Topic != topic {
			t.Errorf("%.80s: got reason %q field %q (%v), want %q %q", c.payload, e.Reason, e.Field, e, c.reason, c.field)
		}
		if !strings.HasPrefix(e.Error(), `topic "`+topic+`": `) || e.Msg == "" {
			t.Errorf("%.80s: message %q does not name the topic and what is wrong", c.payload, e.Error())
		}
	}
}

func TestSampleDecoderBatchPartial(t *testing.T) {
	var d SampleDecoder
	got, errs := d.Decode(topic, []byte(`{"v":1,"samples":[
		{"t":1,"track":"a","pos":[1,2,3]},
		{"t":1,"track":"b","pos":[1,2]},
		{"t":1,"track":"c","pos":[1,2,3],"q":7},
		{"t":"x","track":"d","pos":[1,2,3]},
		{"t":2,"track":"e","pos":[4,5,6]}]}`))
	if len(got) != 2 || got[0].Track != "a" || got[1].Track != "e" {
		t.Errorf("good items: %+v", got)
	}
	var fields []string
	for _, e := range errs {
		fields = append(fields, e.Field)
	}
	if strings.Join(fields, " ") != "samples[1].pos samples[2].q samples[3].t" {
		t.Errorf("bad items: %v", errs)
	}
}

func TestSampleDecoderTrackList(t *testing.T) {
	d := SampleDecoder{Tracks: map[string]bool{"op1/right": true}}
	if got, errs := d.Decode(topic, []byte(`{"v":1,"t":1,"track":"op1/right","pos":[1,2,3]}`)); len(got) != 1 || len(errs) != 0 {
		t.Errorf("listed track: %v %v", got, errs)
	}
	got, errs := d.Decode(topic, []byte(`{"v":1,"t":1,"track":"op9/left","pos":[1,2,3]}`))
	if len(got) != 0 || len(errs) != 1 || errs[0].Reason != ReasonUnknownTrack || !strings.Contains(errs[0].Msg, `"op9/left"`) {
		t.Errorf("unlisted track: %v %v", got, errs)
	}
}

// The decoder state does not leak from one message to the next: a field
// present in one payload and absent from the next is reported missing.
func TestSampleDecoderNoCarryOver(t *testing.T) {
	var d SampleDecoder
	d.Decode(topic, []byte(`{"v":1,"t":1,"track":"a","pos":[1,2,3],"q":0.5}`))
	_, errs := d.Decode(topic, []byte(`{"v":1}`))
	if len(errs) != 1 || errs[0].Field != "t" {
		t.Fatalf("after a full sample, an empty one: %v", errs)
	}
	got, _ := d.Decode(topic, []byte(`{"v":1,"t":2,"track":"a","pos":[1,2,3]}`))
	if len(got) != 1 || got[0].HasQuality {
		t.Fatalf("quality carried over: %+v", got)
	}
	d.Decode(topic, []byte(`{"v":1,"samples":[{"t":1,"track":"a","pos":[1,2,3],"q":0.5}]}`))
	got, _ = d.Decode(topic, []byte(`{"v":1,"samples":[{"t":1,"track":"a","pos":[1,2,3]}]}`))
	if len(got) != 1 || got[0].HasQuality {
		t.Fatalf("quality carried over between batch items: %+v", got)
	}
}

func TestEncodeSampleRoundTrip(t *testing.T) {
	var d SampleDecoder
	for _, s := range []SampleRecord{
		{Sample: forecast.Sample{Track: "op1/right", T: 1741072329.512, P: r3.Vec{X: 1.2, Y: -0.35, Z: 1e-7}}},
		{Sample: forecast.Sample{Track: `q"uote\`, T: 0, P: r3.Vec{X: 999, Y: 0.1 + 0.2, Z: -999}}, Quality: 0.25, HasQuality: true},
	} {
		b := EncodeSample(nil, &s)
		// An independent decoder reads the same numbers.
		var m map[string]any
		if err := json.Unmarshal(b, &m); err != nil || m["v"] != 1.0 || m["track"] != s.Track {
			t.Fatalf("%s: %v %v", b, err, m)
		}
		got, errs := d.Decode(topic, b)
		if len(errs) != 0 || len(got) != 1 || got[0] != s {
			t.Errorf("%s: got %+v %v, want %+v", b, got, errs, s)
		}
	}
}

func TestSampleDecoderAllocs(t *testing.T) {
	var d SampleDecoder
	p := []byte(`{"v":1,"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97}`)
	d.Decode(topic, p)
	// What remains is encoding/json's own: its decode state, parse stack
	// and the track string (5 to 6 with Go 1.26). The decoder's buffers,
	// the position slice and the output are reused.
	if n := testing.AllocsPerRun(200, func() { d.Decode(topic, p) }); n > 6 {
		t.Errorf("Decode allocates %v times per sample, want at most 6", n)
	}
}

func BenchmarkSampleDecode(b *testing.B) {
	var d SampleDecoder
	p := []byte(`{"v":1,"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97}`)
	b.ReportAllocs()
	b.SetBytes(int64(len(p)))
	for b.Loop() {
		d.Decode(topic, p)
	}
}

func TestDecodeRobot(t *testing.T) {
	st, err := DecodeRobot("r", []byte(`{"v":1,"t":5,"frames":[{"name":"tool","pos":[3,3.4,2.1],"quat":[0,1,0,0]}],"speed":0.8,"stop_time":0.35,"stop_dist":0.12}`), 0)
	if err != nil {
		t.Fatal(err)
	}
	p := PolicyRobot(&st)
	if p.T != 5 || len(p.Frames) != 1 || p.Frames[0].Frame != "tool" || p.Frames[0].Pose.Pos != (r3.Vec{X: 3, Y: 3.4, Z: 2.1}) ||
		p.Frames[0].Pose.Rot.Imag != 1 || !p.HasSpeed || p.Speed != 0.8 || !p.HasStopping || p.StoppingTime != 0.35 || p.StoppingDistance != 0.12 {
		t.Errorf("policy state %+v", p)
	}
	// A quaternion off unit length by rounding is normalised.
	st, err = DecodeRobot("r", []byte(`{"v":1,"t":5,"frames":[{"name":"tool","pos":[0,0,0],"quat":[0.7071,0.7071,0,0]}]}`), 0)
	if err != nil {
		t.Fatal(err)
	}
	q := st.Frames[0].Quat
	if n := math.Hypot(q[0], q[1]); math.Abs(n-1) > 1e-15 {
		t.Errorf("quaternion norm %v after normalising", n)
	}
	if p := PolicyRobot(&st); p.HasSpeed || p.HasStopping {
		t.Errorf("absent speed and stopping data: %+v", p)
	}
	for _, c := range []struct{ payload, reason, field string }{
		{`{"v":1}`, ReasonMissingField, "t"},
		{`{"v":1,"t":1,"frames":[{"name":"tool","pos":[0,0],"quat":[1,0,0,0]}]}`, ReasonBadField, "frames[0].pos"},
		{`{"v":1,"t":1,"frames":[{"name":"tool","pos":[0,0,0],"quat":[2,0,0,0]}]}`, ReasonBadField, "frames[0].quat"},
		{`{"v":1,"t":1,"frames":[{"pos":[0,0,0],"quat":[1,0,0,0]}]}`, ReasonMissingField, "frames[0].name"},
		{`{"v":1,"t":1,"frames":[{"name":"a","pos":[0,0,0],"quat":[1,0,0,0]},{"name":"a","pos":[0,0,0],"quat":[1,0,0,0]}]}`, ReasonBadField, "frames[1].name"},
		{`{"v":1,"t":1,"speed":"fast"}`, ReasonBadField, "speed"},
		{`{"v":1,"t":1,"stop_time":-1}`, ReasonBadField, "stop_time"},
		{`{"v":1,"t":1,"stop_dist":0.2}`, ReasonMissingField, "stop_time"},
		{`{"v":1,"t":1,"frames":[{"name":"tool","pos":[0,0,1e999],"quat":[1,0,0,0]}]}`, ReasonNonFinite, "frames.pos"},
	} {
		_, err := DecodeRobot("cell/robot", []byte(c.payload), 0)
		if err == nil || err.Reason != c.reason || err.Field != c.field || !strings.Contains(err.Error(), `"cell/robot"`) {
			t.Errorf("%s: %v (reason %q field %q), want %q %q", c.payload, err, reasonOf(err), fieldOf(err), c.reason, c.field)
		}
	}
}

func reasonOf(e *PayloadError) string {
	if e == nil {
		return ""
	}
	return e.Reason
}

func fieldOf(e *PayloadError) string {
	if e == nil {
		return ""
	}
	return e.Field
}

func TestAdvisoryPayload(t *testing.T) {
	pa := policy.Advisory{T: 12.5, Seq: 3, Level: policy.LevelReduce, Scale: 0.5, Horizon: 0.5, Reasons: []policy.Reason{
		{Track: "op1/right", Zone: "pallet-a", Rule: "approach", Level: policy.LevelReduce, Scale: 0.5, HasEntry: true, TimeToEntry: 0.21, Separation: 0.4, MinSeparation: -0.02},
	}}
	a := FromPolicy("pl3-palletiser", &pa)
	b, err := EncodeAdvisory(&a)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	if m["v"] != 1.0 || m["cell"] != "pl3-palletiser" || m["seq"] != 3.0 || m["level"] != "reduce" || m["scale"] != 0.5 ||
		m["horizon"] != 0.5 || m["advisory_only"] != safety.Short || m["kind"] != nil {
		t.Errorf("payload %s", b)
	}
	r := m["reasons"].([]any)[0].(map[string]any)
	if r["zone"] != "pallet-a" || r["entry_in"] != 0.21 || r["sep"] != 0.4 || r["rule"] != "approach" ||
		r["text"] != `op1/right: entry into "pallet-a" forecast in 0.21 s (rule approach: reduce)` {
		t.Errorf("reason %v", r)
	}
	back, err := DecodeAdvisory(b)
	if err != nil || back.Seq != 3 || back.Reasons[0].Text != r["text"] {
		t.Errorf("decode: %+v %v", back, err)
	}
	if !bytes.Contains(b, []byte(`"advisory_only":"advisory only`)) {
		t.Errorf("payload lacks the advisory-only statement: %s", b)
	}
}

// FuzzSampleDecoder: the sample decoder never panics, never accepts a
// sample with a non-finite or out-of-range value, and accounts for every
// payload: each accepted sample re-encodes to a payload that decodes to
// the same sample.
func FuzzSampleDecoder(f *testing.F) {
	for _, s := range []string{
		`{"v":1,"t":1741072329.512,"track":"op1/right","pos":[1.2,0.35,1.05],"q":0.97}`,
		`{"v":1,"samples":[{"t":1,"track":"a","pos":[1,2,3]},{"t":2,"track":"b","pos":[1,2]}]}`,
		`{"v":1,"t":NaN,"track":"a","pos":[1,2,3]}`,
		`{"v":1,"t":1e999,"track":"a","pos":[1,2,3]}`,
		`{"v":2}`, `[]`, `null`, ``,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, p []byte) {
		d := SampleDecoder{MaxSize: 4096}
		got, errs := d.Decode("fuzz/topic", p)
		if len(got) == 0 && len(errs) == 0 {
			t.Fatalf("payload neither accepted nor refused: %q", p)
		}
		for _, e := range errs {
			if e.Reason == "" || e.Msg == "" || e.Topic != "fuzz/topic" {
				t.Fatalf("incomplete error %+v", e)
			}
		}
		out := append([]SampleRecord(nil), got...)
		for _, s := range out {
			for _, x := range []float64{s.T, s.P.X, s.P.Y, s.P.Z, s.Quality} {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Fatalf("accepted a non-finite value: %+v", s)
				}
			}
			if math.Abs(s.P.X) > MaxCoord || math.Abs(s.P.Y) > MaxCoord || math.Abs(s.P.Z) > MaxCoord || s.T < 0 {
				t.Fatalf("accepted an out-of-range value: %+v", s)
			}
			var d2 SampleDecoder
			back, errs := d2.Decode("x", EncodeSample(nil, &s))
			if len(errs) != 0 || len(back) != 1 || back[0] != s {
				t.Fatalf("re-encoded sample %+v decodes to %+v %v", s, back, errs)
			}
		}
	})
}

// FuzzDecodeRobot: the robot-state decoder never panics and accepts only
// finite states with unit quaternions.
func FuzzDecodeRobot(f *testing.F) {
	for _, s := range []string{
		`{"v":1,"t":5,"frames":[{"name":"tool","pos":[3,3.4,2.1],"quat":[0,1,0,0]}],"speed":0.8,"stop_time":0.35,"stop_dist":0.12}`,
		`{"v":1,"t":5}`, `{"v":1,"t":5,"frames":[{"name":"a","pos":[0,0,0],"quat":[2,0,0,0]}]}`,
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, p []byte) {
		st, err := DecodeRobot("fuzz/robot", p, 4096)
		if err != nil {
			if err.Reason == "" || err.Msg == "" {
				t.Fatalf("incomplete error %+v", err)
			}
			return
		}
		for _, fr := range st.Frames {
			n := 0.0
			for _, q := range fr.Quat {
				n += q * q
			}
			if math.Abs(n-1) > 1e-9 {
				t.Fatalf("accepted a quaternion of squared norm %v", n)
			}
			for _, x := range fr.Pos {
				if math.IsNaN(x) || math.Abs(x) > MaxCoord {
					t.Fatalf("accepted position %v", fr.Pos)
				}
			}
		}
		PolicyRobot(&st)
	})
}

// FuzzDecodeAdvisory: the decoders consumers use for advisories and status
// never panic; what they accept encodes back to a payload that decodes to
// the same value.
func FuzzDecodeAdvisory(f *testing.F) {
	pa := policy.Advisory{T: 12.5, Seq: 3, Level: policy.LevelReduce, Scale: 0.5, Horizon: 0.5, Reasons: []policy.Reason{
		{Track: "op1/right", Zone: "pallet-a", Rule: "approach", Level: policy.LevelReduce, Scale: 0.5, HasEntry: true, TimeToEntry: 0.21, Separation: 0.4}}}
	a := FromPolicy("pl3-palletiser", &pa)
	b, _ := EncodeAdvisory(&a)
	f.Add(b)
	st, _ := EncodeStatus(&Status{Cell: "pl3-palletiser", State: StateOffline, Version: "0.1.0", ConfigDigest: "9f2c", Since: "2025-03-04T07:12:09Z", AdvisoryOnly: safety.Short})
	f.Add(st)
	f.Add([]byte(`{"v":1,"cell":"c","t":1,"seq":1,"level":"hold","scale":0,"horizon":0.5,"advisory_only":"x","reasons":[{}]}`))
	f.Fuzz(func(t *testing.T, p []byte) {
		if a, err := DecodeAdvisory(p); err == nil {
			b, err := EncodeAdvisory(&a)
			if err != nil {
				t.Fatal(err)
			}
			back, err := DecodeAdvisory(b)
			if err != nil {
				t.Fatalf("re-encoded advisory does not decode: %v\n%s", err, b)
			}
			if !reflect.DeepEqual(back, a) {
				t.Fatalf("advisory changed in a round trip:\n%+v\n%+v", a, back)
			}
		}
		if s, err := DecodeStatus(p); err == nil {
			b, _ := EncodeStatus(&s)
			back, err := DecodeStatus(b)
			if err != nil || back != s {
				t.Fatalf("status changed in a round trip: %+v %+v %v", s, back, err)
			}
		}
	})
}
