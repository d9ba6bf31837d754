package bus

import (
	"bytes"
	"encoding/json"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"forereach/forecast"
	"forereach/safety"

	"gonum.org/v1/gonum/spatial/r3"
)

func fp(x float64) *float64 { return &x }

// testRecords is one of each line kind, with awkward values: shortest
// float forms, tiny and huge magnitudes, escapes in strings, invalid UTF-8
// in a rejected payload.
func testRecords() (Header, []Record) {
	h := Header{Cell: "pl3-palletiser", ConfigDigest: "9f2c1e", Version: "0.1.0-test",
		Start: time.Date(2025, 3, 4, 7, 12, 9, 500_000_000, time.UTC), Source: "tcp://127.0.0.1:1883"}
	recs := []Record{
		{Kind: KindSample, Sample: &SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: 1741072329.512, P: r3.Vec{X: 1.2, Y: 0.35, Z: 1.05}},
			Arrival: 1741072329.5141, Quality: 0.97, HasQuality: true}},
		{Kind: KindSample, Sample: &SampleRecord{Sample: forecast.Sample{Track: `op2/"left"\ü`, T: 0.1 + 0.2, P: r3.Vec{X: -1e-9, Y: 999.999, Z: 0}}}},
		{Kind: KindReject, Reject: &Reject{Arrival: 1741072329.6, Topic: "forereach/pl3-palletiser/hands", Reason: ReasonBadJSON,
			Error: `topic "forereach/pl3-palletiser/hands": invalid JSON`, Payload: []byte(`{"t":`), Size: 5}},
		{Kind: KindReject, Reject: &Reject{Arrival: 1741072329.7, Topic: "forereach/pl3-palletiser/hands/x", Reason: ReasonOversize,
			Error: "too big", Payload: []byte{0xff, 0xfe, 0, 'a'}, Size: 70000}},
		{Kind: KindRobot, Robot: &RobotState{T: 1741072329.52, Arrival: 1741072329.521,
			Frames: []FramePos{{Name: "tool", Pos: [3]float64{1.6, 0.2, 1.1}, Quat: [4]float64{1, 0, 0, 0}},
				{Name: "elbow", Pos: [3]float64{1.1, 0.4, 1.5}, Quat: [4]float64{0.5, 0.5, 0.5, 0.5}}},
			Speed: fp(0.8), StopTime: fp(0.35), StopDist: fp(0.12)}},
		{Kind: KindRobot, Robot: &RobotState{T: 2, Frames: []FramePos{}}},
		{Kind: KindAdvisory, Advisory: &Advisory{Cell: "pl3-palletiser", T: 1741072329.512, Seq: 7, Level: "reduce", Scale: 0.5,
			Reasons: []Reason{{Track: "op1/right", Zone: "pallet-swing", Rule: "approach", Level: "reduce", EntryIn: fp(0.21), Sep: fp(0.12)}},
			Horizon: 0.5, Issued: 1741072329.515, AdvisoryOnly: safety.Short}},
		{Kind: KindAdvisory, Advisory: &Advisory{Cell: "pl3-palletiser", T: 1741072330, Seq: 8, Level: "clear", Scale: 1,
			Reasons: []Reason{}, Horizon: 0.5, AdvisoryOnly: safety.Short}},
	}
	return h, recs
}

func writeRecords(t *testing.T, r *Recorder, recs []Record) {
	t.Helper()
	for _, rec := range recs {
		var err error
		switch rec.Kind {
		case KindSample:
			err = r.Sample(rec.Sample)
		case KindReject:
			err = r.Reject(rec.Reject)
		case KindRobot:
			err = r.Robot(rec.Robot)
		case KindAdvisory:
			err = r.Advisory(rec.Advisory)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
}

func TestRecordingRoundTrip(t *testing.T) {
	h, recs := testRecords()
	var buf bytes.Buffer
	r, err := NewRecorder(&buf, h)
	if err != nil {
		t.Fatal(err)
	}
	writeRecords(t, r, recs)
	if err := r.Close(); err != nil {
		t.Fatal(err)
	}
	// Every line is a JSON object with "v" and "kind" (checked with a
	// generic decoder, not ours).
	for i, line := range strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n") {
		var m map[string]any
		if err := json.Unmarshal([]byte(line), &m); err != nil {
			t.Fatalf("line %d is not JSON: %v\n%s", i+1, err, line)
		}
		if m["v"] != 1.0 || m["kind"] == nil {
			t.Errorf("line %d lacks v=1 or kind: %s", i+1, line)
		}
	}

	rr := NewRecordReader(bytes.NewReader(buf.Bytes()), "rt.jsonl")
	got, err := rr.Next()
	if err != nil {
		t.Fatal(err)
	}
	if got.Kind != KindHeader || got.Line != 1 || !reflect.DeepEqual(*got.Header, h) {
		t.Fatalf("header: got %+v, want %+v", got.Header, h)
	}
	for i, want := range recs {
		got, err := rr.Next()
		if err != nil {
			t.Fatalf("record %d: %v", i, err)
		}
		if got.Line != i+2 {
			t.Errorf("record %d: line %d, want %d", i, got.Line, i+2)
		}
		want.Line = got.Line
		if want.Kind == KindReject {
			// Invalid UTF-8 payloads travel as base64 and come back as bytes.
			w := *want.Reject
			want.Reject = &w
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("record %d:\n got %s\nwant %s", i, dump(got), dump(want))
		}
	}
	if _, err := rr.Next(); err != io.EOF {
		t.Fatalf("after last record: %v, want io.EOF", err)
	}
}

func dump(r Record) string {
	b, _ := json.Marshal(r)
	return string(b)
}

func TestRecorderSampleFloatsExact(t *testing.T) {
	// Shortest round-trip formatting, checked against strconv/encoding/json
	// decoding of the written text for awkward values.
	vals := []float64{0, -0.0, 1e-7, 123456789.123456789, 5e-324, 1.7976931348623157e308 / 1e300, 1e21, 0.1, -999.9999999999}
	var buf bytes.Buffer
	r, _ := NewRecorder(&buf, Header{Cell: "c"})
	for i, v := range vals {
		r.Sample(&SampleRecord{Sample: forecast.Sample{Track: "a", T: float64(i), P: r3.Vec{X: math.Max(-1000, math.Min(1000, v)), Y: v / 1e300, Z: -v / 1e300}}})
	}
	r.Flush()
	s := NewJSONLSamples(&buf, "f.jsonl")
	for i, v := range vals {
		got, err := s.Next()
		if err != nil {
			t.Fatal(err)
		}
		want := r3.Vec{X: math.Max(-1000, math.Min(1000, v)), Y: v / 1e300, Z: -v / 1e300}
		if got.P != want || got.T != float64(i) {
			t.Errorf("value %g: got %v, want %v", v, got.P, want)
		}
	}
}

func TestRecorderSampleAllocs(t *testing.T) {
	r, _ := NewRecorder(io.Discard, Header{Cell: "c"})
	s := &SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: 12.5, P: r3.Vec{X: 1, Y: 2, Z: 3}}, Arrival: 13, HasQuality: true, Quality: 0.5}
	r.Sample(s)
	if n := testing.AllocsPerRun(100, func() { r.Sample(s) }); n != 0 {
		t.Errorf("Recorder.Sample allocates %v times per call, want 0", n)
	}
}

func TestRecordReaderBadLines(t *testing.T) {
	in := strings.Join([]string{
		`{"v":1,"kind":"header","cell":"pl3-palletiser","part":0}`,
		`{"v":1,"kind":"sample","t":1,"track":"a","pos":[1,2,3]}`,
		`{"v":1,"kind":"sample","t":2,"track":"a","pos":[1,2]}`,         // 3: pos length
		`{"v":1,"kind":"sample","t":"x","track":"a","pos":[1,2,3]}`,     // 4: t mistyped
		`{"v":1,"kind":"sample","t":3,"track":"a","pos":[1,2,1e999]}`,   // 5: overflow
		`{"v":2,"kind":"sample","t":3,"track":"a","pos":[1,2,3]}`,       // 6: version
		`{"kind":"sample","t":3,"track":"a","pos":[1,2,3]}`,             // 7: no version
		`{"v":1,"kind":"sample","t":3,"pos":[1,2,3]}`,                   // 8: no track
		`{"v":1,"kind":"gossip"}`,                                       // 9: kind
		`{"v":1,"kind":"sample","t":3,"track":"a","pos":[1,2,NaN]}`,     // 10: NaN
		`{"v":1,"kind":"sample","t":4,"track":"a","pos":[1,2,3],"q":2}`, // 11: quality
		``, // 12: blank, skipped
		`{"v":1,"kind":"sample","t":5,"track":"a","pos":[4,5,6]}`,                                                           // 13
		`{"v":1,"kind":"advisory","cell":"c","t":5,"seq":1,"level":"reduce","scale":1.5,"horizon":0.5,"advisory_only":"x"}`, // 14
		`{"v":1,"kind":"sample","t":6,"track":"a","pos":[7,8,9]`,                                                            // 15: truncated
	}, "\n")
	type bad struct {
		line  int
		field string
	}
	wantBad := []bad{{3, "pos"}, {4, "t"}, {5, "pos"}, {6, "v"}, {7, "v"}, {8, "track"}, {9, "kind"}, {10, ""}, {11, "q"}, {14, "scale"}, {15, ""}}
	rr := NewRecordReader(strings.NewReader(in), "bad.jsonl")
	var gotBad []bad
	var lines []int
	for {
		rec, err := rr.Next()
		if err == io.EOF {
			break
		}
		var re *forecast.RowError
		if errors.As(err, &re) {
			if re.File != "bad.jsonl" {
				t.Errorf("row error names file %q", re.File)
			}
			if !strings.HasPrefix(re.Error(), "bad.jsonl:") {
				t.Errorf("row error %q does not start with file:line", re.Error())
			}
			gotBad = append(gotBad, bad{re.Line, re.Field})
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		lines = append(lines, rec.Line)
	}
	if !reflect.DeepEqual(gotBad, wantBad) {
		t.Errorf("bad lines:\n got %v\nwant %v", gotBad, wantBad)
	}
	if !reflect.DeepEqual(lines, []int{1, 2, 13}) {
		t.Errorf("good lines %v, want [1 2 13]", lines)
	}
}

func TestRecordReaderLongLine(t *testing.T) {
	long := `{"v":1,"kind":"header","cell":"` + strings.Repeat("x", MaxLine) + `"}`
	in := `{"v":1,"kind":"sample","t":1,"track":"a","pos":[1,2,3]}` + "\n" + long + "\n" +
		`{"v":1,"kind":"sample","t":2,"track":"a","pos":[1,2,3]}` + "\n"
	s := NewJSONLSamples(strings.NewReader(in), "long.jsonl")
	var ts []float64
	var rowErrs int
	for {
		smp, err := s.Next()
		if err == io.EOF {
			break
		}
		var re *forecast.RowError
		if errors.As(err, &re) {
			if re.Line != 2 {
				t.Errorf("long line reported at line %d, want 2", re.Line)
			}
			rowErrs++
			continue
		}
		if err != nil {
			t.Fatal(err)
		}
		ts = append(ts, smp.T)
	}
	if rowErrs != 1 || !reflect.DeepEqual(ts, []float64{1, 2}) {
		t.Errorf("got samples %v and %d row errors, want [1 2] and 1", ts, rowErrs)
	}
}

func TestCreateRecordingRotates(t *testing.T) {
	dir := t.TempDir()
	h := Header{Cell: "pl3-palletiser", Version: "t", Start: time.Date(2025, 1, 2, 3, 4, 5, 0, time.UTC)}
	r, err := CreateRecording(dir, h, 2000)
	if err != nil {
		t.Fatal(err)
	}
	const n = 200
	for i := 0; i < n; i++ {
		if err := r.Sample(&SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: float64(i) / 100, P: r3.Vec{X: float64(i) / 1000}}}); err != nil {
			t.Fatal(err)
		}
	}
	if err := r.Close(); err != nil {
		t.Fatal(err)
	}
	files := r.Files()
	if len(files) < 3 {
		t.Fatalf("%d files after writing ~%d bytes with 2000-byte parts: %v", len(files), n*70, files)
	}
	// Files are named in order and each starts with its own header; read
	// them through OpenSamples and get every sample back in order.
	next := 0
	for part, name := range files {
		if want := filepath.Join(dir, "pl3-palletiser_20250102T030405.000Z_"+pad3(part)+".jsonl"); name != want {
			t.Errorf("part %d named %s, want %s", part, name, want)
		}
		st, _ := os.Stat(name)
		if part < len(files)-1 && (st.Size() < 2000 || st.Size() > 2000+200) {
			t.Errorf("part %d has %d bytes, want just over 2000", part, st.Size())
		}
		f, _ := os.Open(name)
		rec, err := NewRecordReader(f, name).Next()
		f.Close()
		if err != nil || rec.Kind != KindHeader || rec.Header.Part != part || !rec.Header.Start.Equal(h.Start) {
			t.Errorf("part %d: first line %+v, %v", part, rec.Header, err)
		}
		sf, err := OpenSamples(name, OpenOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for {
			s, err := sf.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatal(err)
			}
			if s.T != float64(next)/100 {
				t.Fatalf("part %d: sample T %v, want %v", part, s.T, float64(next)/100)
			}
			next++
		}
		sf.Close()
	}
	if next != n {
		t.Errorf("read %d samples back, wrote %d", next, n)
	}
	// A second recording in the same millisecond must not clobber the first.
	if _, err := CreateRecording(dir, h, 0); err == nil {
		t.Error("CreateRecording over an existing file succeeded")
	}
}

func pad3(i int) string {
	s := "00" + string(rune('0'+i%10))
	if i >= 10 {
		s = "0" + string(rune('0'+i/10)) + string(rune('0'+i%10))
	}
	return s
}

func TestRejectPayloadTruncated(t *testing.T) {
	var buf bytes.Buffer
	r, _ := NewRecorder(&buf, Header{Cell: "c"})
	big := []byte(strings.Repeat("é", MaxRecordedPayload)) // 2 bytes each: the cut falls inside a character when odd
	r.Reject(&Reject{Topic: "t", Reason: ReasonOversize, Payload: big[1:]})
	r.Close()
	rr := NewRecordReader(&buf, "r.jsonl")
	rr.Next()
	rec, err := rr.Next()
	if err != nil {
		t.Fatal(err)
	}
	p := rec.Reject.Payload
	if rec.Reject.Size != len(big)-1 || len(p) > MaxRecordedPayload || len(p) < MaxRecordedPayload-4 {
		t.Errorf("size %d (want %d), kept %d bytes (want about %d)", rec.Reject.Size, len(big)-1, len(p), MaxRecordedPayload)
	}
	if !bytes.Equal(p, big[1:1+len(p)]) {
		t.Error("kept payload is not a prefix of the original")
	}
}

func TestOpenSamplesJSONLMissing(t *testing.T) {
	_, err := OpenSamples(filepath.Join(t.TempDir(), "nope.jsonl"), OpenOptions{})
	if err == nil || !strings.Contains(err.Error(), "nope.jsonl") {
		t.Errorf("opening a missing file: %v", err)
	}
}

// FuzzDecodeRecordLine: the line decoder never panics, and whatever it
// accepts it writes back to a line that decodes to the same record.
func FuzzDecodeRecordLine(f *testing.F) {
	h, recs := testRecords()
	var buf bytes.Buffer
	r, _ := NewRecorder(&buf, h)
	for _, rec := range recs {
		switch rec.Kind {
		case KindSample:
			r.Sample(rec.Sample)
		case KindReject:
			r.Reject(rec.Reject)
		case KindRobot:
			r.Robot(rec.Robot)
		case KindAdvisory:
			r.Advisory(rec.Advisory)
		}
	}
	r.Flush()
	for _, line := range strings.Split(buf.String(), "\n") {
		f.Add([]byte(line))
	}
	f.Fuzz(func(t *testing.T, line []byte) {
		rec, fe := decodeRecordLine(line)
		if fe != nil {
			if fe.reason == "" || fe.msg == "" {
				t.Fatalf("error without reason or message: %+v", fe)
			}
			return
		}
		if rec.Kind == KindHeader {
			return
		}
		var out bytes.Buffer
		w, _ := NewRecorder(&out, Header{})
		writeRecordsNoT(w, rec)
		w.Flush()
		lines := strings.Split(strings.TrimSuffix(out.String(), "\n"), "\n")
		back, fe := decodeRecordLine([]byte(lines[len(lines)-1]))
		if fe != nil {
			t.Fatalf("re-encoded line does not decode: %v\n%s", fe.msg, lines[len(lines)-1])
		}
		if rec.Kind == KindReject && len(rec.Reject.Payload) > MaxRecordedPayload {
			return // truncated on write, as documented
		}
		if !reflect.DeepEqual(back, rec) {
			t.Fatalf("round trip changed the record:\n in %s\nout %s", dump(rec), dump(back))
		}
	})
}

func writeRecordsNoT(r *Recorder, rec Record) {
	switch rec.Kind {
	case KindSample:
		r.Sample(rec.Sample)
	case KindReject:
		r.Reject(rec.Reject)
	case KindRobot:
		r.Robot(rec.Robot)
	case KindAdvisory:
		r.Advisory(rec.Advisory)
	}
}
