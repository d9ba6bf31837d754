package bus

import (
	"runtime"
	"strings"
	"testing"
	"time"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// badPayloads are malformed messages, one per kind of fault, with the
// reason each must be counted under.
var badPayloads = []struct {
	reason  string
	payload string
}{
	{ReasonBadJSON, `{"v":1,"t":`},
	{ReasonBadJSON, "\xff\xfe\x00 not json at all"},
	{ReasonNonFinite, `{"v":1,"t":NaN,"track":"op1/right","pos":[1,0.8,1]}`},
	{ReasonNonFinite, `{"v":1,"t":1,"track":"op1/right","pos":[1,Infinity,1]}`},
	{ReasonNonFinite, `{"v":1,"t":1,"track":"op1/right","pos":[1,0.8,-1e999]}`},
	{ReasonMissingField, `{"v":1,"track":"op1/right","pos":[1,0.8,1]}`},
	{ReasonMissingField, `{"v":1,"t":1,"track":"op1/right"}`},
	{ReasonMissingField, `{"t":1,"track":"op1/right","pos":[1,0.8,1]}`},
	{ReasonBadField, `{"v":1,"t":"now","track":"op1/right","pos":[1,0.8,1]}`},
	{ReasonBadField, `{"v":1,"t":1,"track":"op1/right","pos":[1,0.8]}`},
	{ReasonBadField, `{"v":1,"t":1,"track":"op1/right","pos":[1,0.8,1],"q":-3}`},
	{ReasonOversize, `{"v":1,"t":1,"track":"op1/right","pos":[1,0.8,1],"blob":"` + strings.Repeat("A", 1500) + `"}`},
	{ReasonUnknownTrack, `{"v":1,"t":1,"track":"visitor/left","pos":[1,0.8,1]}`},
	{ReasonBadVersion, `{"v":7,"t":1,"track":"op1/right","pos":[1,0.8,1]}`},
}

// 10,000 malformed messages interleaved with 2,000 valid ones, published at
// QoS 1 through the embedded broker: every valid sample is processed, every
// bad message is counted under its reason and recorded, and the heap does
// not grow with the number of bad messages.
func TestServiceBadInput(t *testing.T) {
	if testing.Short() {
		t.Skip("12,000 messages through a broker")
	}
	const nBad, nGood = 10000, 2000
	broker := startBroker(t)
	cfg := loadCell(t, func(c *zones.Config) {
		c.Bus.Tracks = []string{"op1/right", "op1/left"}
		c.Bus.MaxPayload = 1024
		c.Bus.QoS = 1
		c.Forecast.Model = "cv"
	})
	rec, err := CreateRecording(t.TempDir(), Header{Cell: cfg.Cell, Version: "test"}, 1<<30)
	if err != nil {
		t.Fatal(err)
	}
	svc, stop := runService(t, cfg, broker.URL(), rec, NewMetrics())
	pub := newTestClient(t, broker.URL(), "noisy-source")

	t0 := float64(time.Now().Add(-30*time.Second).UnixNano()) / 1e9
	good := func(i int) []byte {
		s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t0 + float64(i)*0.01, P: r3.Vec{X: 1 + 0.0001*float64(i), Y: 0.8, Z: 1}}}
		return EncodeSample(nil, &s)
	}
	wantReasons := map[string]uint64{}
	var heapWarm uint64
	bad, ok := 0, 0
	for n := 0; bad < nBad || ok < nGood; n++ {
		var tok interface{ Wait() bool }
		if (n%6 == 5 || bad == nBad) && ok < nGood {
			tok = pub.publish(t, "forereach/pl3-palletiser/hands/cam1", 1, good(ok))
			ok++
		} else {
			b := badPayloads[bad%len(badPayloads)]
			wantReasons[b.reason]++
			tok = pub.publish(t, "forereach/pl3-palletiser/hands/cam1", 1, []byte(b.payload))
			bad++
		}
		if n%200 == 199 {
			tok.Wait()
		}
		if n == 3000 {
			waitCounted(t, svc, 3001)
			heapWarm = heapInUse()
		}
	}
	waitCounted(t, svc, nBad+nGood)
	heapEnd := heapInUse()

	c := svc.Counters()
	if c.Samples != nGood {
		t.Errorf("%d valid samples processed, want %d", c.Samples, nGood)
	}
	for reason, n := range wantReasons {
		if c.Rejected[reason] != n {
			t.Errorf("reason %s: counted %d, want %d", reason, c.Rejected[reason], n)
		}
	}
	if c.RejectedTotal() != nBad {
		t.Errorf("%d rejections in all (%v), want %d", c.RejectedTotal(), c.Rejected, nBad)
	}
	// 9,000 more messages after the warm-up must not leave their mark on
	// the heap: 1 MiB is about 100 bytes per message.
	if heapEnd > heapWarm+1<<20 {
		t.Errorf("heap in use grew from %d to %d bytes over 9,000 messages", heapWarm, heapEnd)
	}
	t.Logf("heap in use: %d bytes after 3,000 messages, %d after 12,000", heapWarm, heapEnd)

	stop()
	rec.Close()
	kinds := map[Kind]int{}
	recReasons := map[string]uint64{}
	for _, r := range readRecords(t, rec.Files()) {
		kinds[r.Kind]++
		if r.Kind == KindReject {
			recReasons[r.Reject.Reason]++
			if r.Reject.Topic != "forereach/pl3-palletiser/hands/cam1" || r.Reject.Error == "" || r.Reject.Size == 0 {
				t.Fatalf("line %d: incomplete rejection %+v", r.Line, r.Reject)
			}
		}
	}
	if kinds[KindSample] != nGood || kinds[KindReject] != nBad {
		t.Errorf("recording: %d samples and %d rejections, want %d and %d", kinds[KindSample], kinds[KindReject], nGood, nBad)
	}
	for reason, n := range wantReasons {
		if recReasons[reason] != n {
			t.Errorf("recording: reason %s %d times, want %d", reason, recReasons[reason], n)
		}
	}
}

func waitCounted(t *testing.T, svc *Service, n int) {
	t.Helper()
	deadline := time.Now().Add(60 * time.Second)
	for {
		c := svc.Counters()
		got := c.Samples + c.RejectedTotal()
		if got >= uint64(n) {
			return
		}
		if time.Now().After(deadline) {
			t.Fatalf("only %d of %d messages accounted for after 60 s", got, n)
		}
		time.Sleep(10 * time.Millisecond)
	}
}

func heapInUse() uint64 {
	var ms runtime.MemStats
	runtime.GC()
	runtime.GC()
	runtime.ReadMemStats(&ms)
	return ms.HeapAlloc
}
