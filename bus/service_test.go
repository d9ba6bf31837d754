package bus

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"sync"
	"testing"
	"time"

	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"
	"forereach/zones"

	mqtt "github.com/eclipse/paho.mqtt.golang"
	"gonum.org/v1/gonum/spatial/r3"
)

const exampleCell = "../testdata/pl3-palletiser.yaml"

// loadCell loads the example cell, lets edit adjust it, and re-runs the
// bus section's defaults.
func loadCell(t testing.TB, edit func(*zones.Config)) *zones.Config {
	t.Helper()
	cfg, err := zones.Load(exampleCell)
	if err != nil {
		t.Fatal(err)
	}
	if edit != nil {
		edit(cfg)
	}
	return cfg
}

func testLogger(t testing.TB) *slog.Logger {
	if testing.Verbose() {
		return slog.New(slog.NewTextHandler(os.Stderr, &slog.HandlerOptions{Level: slog.LevelInfo}))
	}
	return slog.New(slog.DiscardHandler)
}

// startBroker starts an embedded broker on a free loopback port.
func startBroker(t testing.TB) *Broker {
	t.Helper()
	b, err := StartBroker("127.0.0.1:0", nil)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { b.Close() })
	return b
}

// runService starts a service on the broker and returns it with a stop
// function that waits for Run to return.
func runService(t testing.TB, cfg *zones.Config, broker string, rec *Recorder, m *Metrics) (*Service, func()) {
	t.Helper()
	eng, err := NewEngine(cfg)
	if err != nil {
		t.Fatal(err)
	}
	svc, err := NewService(ServiceOptions{Config: cfg, Engine: eng, Version: "test", Broker: broker,
		Recorder: rec, Metrics: m, Logger: testLogger(t)})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- svc.Run(ctx) }()
	deadline := time.Now().Add(10 * time.Second)
	for !svc.Connected() {
		if time.Now().After(deadline) {
			cancel()
			t.Fatal("service did not connect within 10 s")
		}
		time.Sleep(5 * time.Millisecond)
	}
	var once sync.Once
	stop := func() {
		once.Do(func() {
			cancel()
			if err := <-done; err != nil {
				t.Errorf("Run: %v", err)
			}
		})
	}
	t.Cleanup(stop)
	return svc, stop
}

// testClient is an independent paho client that collects the messages of
// its subscriptions in arrival order.
type testClient struct {
	c    mqtt.Client
	mu   sync.Mutex
	msgs []testMsg
	cond chan struct{}
}

type testMsg struct {
	topic    string
	payload  []byte
	retained bool
}

func newTestClient(t testing.TB, url, id string, topics ...string) *testClient {
	t.Helper()
	tc := &testClient{cond: make(chan struct{}, 1)}
	o := mqtt.NewClientOptions().AddBroker(url).SetClientID(id).SetCleanSession(true).SetOrderMatters(true)
	tc.c = mqtt.NewClient(o)
	if tok := tc.c.Connect(); !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
		t.Fatalf("test client: connect: %v", tok.Error())
	}
	t.Cleanup(func() { tc.c.Disconnect(100) })
	for _, topic := range topics {
		tok := tc.c.Subscribe(topic, 1, func(_ mqtt.Client, m mqtt.Message) {
			tc.mu.Lock()
			tc.msgs = append(tc.msgs, testMsg{m.Topic(), append([]byte(nil), m.Payload()...), m.Retained()})
			tc.mu.Unlock()
			select {
			case tc.cond <- struct{}{}:
			default:
			}
		})
		if !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
			t.Fatalf("test client: subscribe %s: %v", topic, tok.Error())
		}
	}
	return tc
}

func (tc *testClient) messages(topic string) []testMsg {
	tc.mu.Lock()
	defer tc.mu.Unlock()
	var out []testMsg
	for _, m := range tc.msgs {
		if m.topic == topic {
			out = append(out, m)
		}
	}
	return out
}

// waitFor polls until ok holds or the timeout passes.
func (tc *testClient) waitFor(t testing.TB, what string, timeout time.Duration, ok func() bool) {
	t.Helper()
	deadline := time.After(timeout)
	for !ok() {
		select {
		case <-tc.cond:
		case <-time.After(10 * time.Millisecond):
		case <-deadline:
			t.Fatalf("timed out after %v waiting for %s", timeout, what)
		}
	}
}

func (tc *testClient) publish(t testing.TB, topic string, qos byte, payload []byte) mqtt.Token {
	return tc.c.Publish(topic, qos, false, payload)
}

// readRecords reads every record of the recording's files, in order; any
// error other than the end of a file fails the test.
func readRecords(t testing.TB, files []string) []Record {
	t.Helper()
	var out []Record
	for _, name := range files {
		f, err := os.Open(name)
		if err != nil {
			t.Fatal(err)
		}
		rr := NewRecordReader(f, name)
		for {
			r, err := rr.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				f.Close()
				t.Fatal(err)
			}
			out = append(out, r)
		}
		f.Close()
	}
	return out
}

// approach is a hand of operator 1 that stands in the walkway, walks east
// into the robot envelope of pl3-palletiser at 1 m/s, stays inside, walks
// back and stays out until the advisory has been released: samples at
// 100 Hz from t0.
func approach(t0 float64) []SampleRecord {
	var out []SampleRecord
	add := func(t float64, x float64) {
		out = append(out, SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t0 + t, P: r3.Vec{X: x, Y: 0.8, Z: 1.0}}, Quality: 0.9, HasQuality: true})
	}
	x := 1.0
	i := 0
	for ; i < 50; i++ { // 0.5 s standing
		add(float64(i)*0.01, x)
	}
	for ; x < 3.5; i++ { // 2.5 s walking in
		x += 0.01
		add(float64(i)*0.01, x)
	}
	for k := 0; k < 50; k++ { // 0.5 s inside
		add(float64(i)*0.01, x)
		i++
	}
	for ; x > 1.0; i++ { // walking out
		x -= 0.01
		add(float64(i)*0.01, x)
	}
	for k := 0; k < 250; k++ { // 2.5 s out: release
		add(float64(i)*0.01, x)
		i++
	}
	return out
}

// replay feeds samples straight into a fresh engine and returns the
// advisories it issues: the reference the service's output must match.
func replay(t testing.TB, cfg *zones.Config, samples []SampleRecord) []Advisory {
	t.Helper()
	eng, err := NewEngine(cfg)
	if err != nil {
		t.Fatal(err)
	}
	a := eng.Advisory()
	out := []Advisory{FromPolicy(cfg.Cell, &a)}
	var evs []policy.Event
	for _, s := range samples {
		eng.Sample(s.Sample)
		evs = eng.Events(evs[:0])
		for _, ev := range evs {
			if ev.Kind == policy.EventAdvisory {
				pa := policy.Advisory{T: ev.T, Seq: ev.Seq, Level: ev.Level, Scale: ev.Scale, Reasons: ev.Reasons, Horizon: a.Horizon}
				out = append(out, FromPolicy(cfg.Cell, &pa))
			}
		}
	}
	return out
}

func TestServiceEndToEnd(t *testing.T) {
	broker := startBroker(t)
	cfg := loadCell(t, func(c *zones.Config) {
		// No clock ticks during the run: the service is then exactly the
		// engine fed with the samples, and its output can be compared with
		// a direct replay, field by field.
		c.Bus.Tick = zones.Duration(5 * time.Second)
		// A forecaster with a tight uncertainty radius, so that the walk
		// in and out gives every level.
		c.Forecast.Model = "cv"
	})
	dir := t.TempDir()
	rec, err := CreateRecording(dir, Header{Cell: cfg.Cell, Version: "test", ConfigDigest: cfg.Digest}, 1<<20)
	if err != nil {
		t.Fatal(err)
	}
	metrics := NewMetrics()
	svc, stop := runService(t, cfg, broker.URL(), rec, metrics)
	samplesTopic, _, advTopic, stateTopic, statusTopic := svc.Topics()
	if samplesTopic != "forereach/pl3-palletiser/hands/#" || advTopic != "forereach/pl3-palletiser/advisory/event" ||
		stateTopic != "forereach/pl3-palletiser/advisory/state" || statusTopic != "forereach/pl3-palletiser/status" {
		t.Fatalf("default topics: %s %s %s %s", samplesTopic, advTopic, stateTopic, statusTopic)
	}
	sub := newTestClient(t, broker.URL(), "observer", advTopic, stateTopic, statusTopic)
	sub.waitFor(t, "online status", 5*time.Second, func() bool { return len(sub.messages(statusTopic)) > 0 })
	st, err := DecodeStatus(sub.messages(statusTopic)[0].payload)
	if err != nil || st.State != StateOnline || st.ConfigDigest != cfg.Digest || st.Version != "test" || st.AdvisoryOnly != safety.Short {
		t.Fatalf("status %+v, %v", st, err)
	}
	// The initial advisory (clear, seq 0) is retained on the state topic.
	sub.waitFor(t, "initial advisory", 5*time.Second, func() bool { return len(sub.messages(stateTopic)) > 0 })
	if a, err := DecodeAdvisory(sub.messages(stateTopic)[0].payload); err != nil || a.Seq != 0 || a.Level != "clear" || a.Scale != 1 {
		t.Fatalf("initial state %+v, %v", a, err)
	}

	samples := approach(float64(time.Now().Add(-9*time.Second).UnixNano()) / 1e9)
	pub := newTestClient(t, broker.URL(), "source")
	var buf []byte
	for i := range samples {
		buf = EncodeSample(buf[:0], &samples[i])
		// Sources may publish on any subtopic of hands/.
		topic := "forereach/pl3-palletiser/hands"
		if i%2 == 1 {
			topic += "/camera-2"
		}
		tok := pub.publish(t, topic, 1, append([]byte(nil), buf...))
		if i%50 == 0 {
			tok.Wait()
		}
	}
	want := replay(t, cfg, samples)
	if len(want) < 4 {
		t.Fatalf("reference replay gave only %d advisories; the scenario does not exercise the engine", len(want))
	}
	levels := map[string]bool{}
	for _, a := range want {
		levels[a.Level] = true
	}
	if !levels["clear"] || !levels["reduce"] || !levels["hold"] {
		t.Fatalf("reference replay levels %v: want clear, reduce and hold", levels)
	}
	if last := want[len(want)-1]; last.Level != "clear" {
		for _, a := range want {
			t.Logf("%.2f %s %g %v", a.T-samples[0].T, a.Level, a.Scale, a.Reasons)
		}
		t.Fatalf("reference replay ends at %s", last.Level)
	}
	want = want[1:] // the initial one was published before the observer subscribed
	sub.waitFor(t, fmt.Sprintf("%d advisories", len(want)), 15*time.Second, func() bool {
		return len(sub.messages(advTopic)) >= len(want)
	})
	time.Sleep(100 * time.Millisecond) // anything extra would show up now

	got := sub.messages(advTopic)
	if len(got) != len(want) {
		t.Fatalf("%d advisories on %s, want %d", len(got), advTopic, len(want))
	}
	for i, m := range got {
		a, err := DecodeAdvisory(m.payload)
		if err != nil {
			t.Fatalf("advisory %d: %v\n%s", i, err, m.payload)
		}
		if m.retained {
			t.Errorf("advisory %d on the event topic is retained", i)
		}
		if a.AdvisoryOnly != safety.Short {
			t.Errorf("advisory %d: advisory_only = %q", i, a.AdvisoryOnly)
		}
		if a.Issued == 0 {
			t.Errorf("advisory %d: no issued time", i)
		}
		a.Issued = 0
		if !reflect.DeepEqual(a, want[i]) {
			t.Errorf("advisory %d:\n got %+v\nwant %+v", i, a, want[i])
		}
		if uint64(i+1) != a.Seq {
			t.Errorf("advisory %d has seq %d", i, a.Seq)
		}
	}
	// The retained state is the latest advisory.
	late := newTestClient(t, broker.URL(), "late-joiner", stateTopic)
	late.waitFor(t, "retained state", 5*time.Second, func() bool { return len(late.messages(stateTopic)) > 0 })
	ls := late.messages(stateTopic)[0]
	if a, _ := DecodeAdvisory(ls.payload); !ls.retained || a.Seq != want[len(want)-1].Seq {
		t.Errorf("retained state: retained=%v seq=%d, want seq %d", ls.retained, a.Seq, want[len(want)-1].Seq)
	}

	// Metrics and health while running.
	ops := httptest.NewServer(svc.OpsHandler())
	defer ops.Close()
	body := httpGet(t, ops.URL+"/metrics")
	for _, line := range []string{
		fmt.Sprintf("forereach_samples_total %d", len(samples)),
		fmt.Sprintf(`forereach_advisories_total{level="hold"} %d`, count(want, "hold")),
		"forereach_broker_connected 1",
		fmt.Sprintf("forereach_input_latency_seconds_count %d", len(samples)),
		`forereach_rejected_total{reason="bad-json"} 0`,
	} {
		if !strings.Contains(body, line+"\n") {
			t.Errorf("/metrics lacks %q", line)
		}
	}
	if h := httpGet(t, ops.URL+"/healthz"); h != "ok\n" {
		t.Errorf("/healthz: %q", h)
	}

	stop()
	sub.waitFor(t, "offline status", 5*time.Second, func() bool {
		m := sub.messages(statusTopic)
		s, _ := DecodeStatus(m[len(m)-1].payload)
		return s.State == StateOffline
	})
	if err := rec.Close(); err != nil {
		t.Fatal(err)
	}

	// The recording holds every sample and every advisory, in order.
	var recSamples []SampleRecord
	var recAdv []Advisory
	for _, r := range readRecords(t, rec.Files()) {
		switch r.Kind {
		case KindSample:
			recSamples = append(recSamples, *r.Sample)
		case KindAdvisory:
			a := *r.Advisory
			a.Issued = 0
			recAdv = append(recAdv, a)
		}
	}
	if len(recSamples) != len(samples) {
		t.Fatalf("recording has %d samples, want %d", len(recSamples), len(samples))
	}
	for i := range samples {
		s, r := samples[i], recSamples[i]
		if s.Sample != r.Sample || s.Quality != r.Quality || !r.HasQuality || r.Arrival < s.T {
			t.Fatalf("recorded sample %d: %+v, published %+v", i, r, s)
		}
	}
	if !reflect.DeepEqual(recAdv, want) {
		t.Errorf("recorded advisories differ from the reference:\n got %v\nwant %v", recAdv, want)
	}
	if filepath.Dir(rec.Files()[0]) != dir {
		t.Errorf("recording in %s", rec.Files()[0])
	}
}

func count(as []Advisory, level string) int {
	n := 0
	for _, a := range as {
		if a.Level == level {
			n++
		}
	}
	return n
}

func httpGet(t testing.TB, url string) string {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return string(b)
}

func TestServiceRefusesPlaintextRemote(t *testing.T) {
	cfg := loadCell(t, nil)
	eng, err := NewEngine(cfg)
	if err != nil {
		t.Fatal(err)
	}
	_, err = NewService(ServiceOptions{Config: cfg, Engine: eng, Broker: "tcp://192.0.2.10:1883"})
	if err == nil || !strings.Contains(err.Error(), "plaintext") {
		t.Fatalf("plaintext to a remote broker: %v", err)
	}
	cfg.Bus.AllowPlaintext = true
	if _, err := NewService(ServiceOptions{Config: cfg, Engine: eng, Broker: "tcp://192.0.2.10:1883"}); err != nil {
		t.Fatalf("with allow_plaintext: %v", err)
	}
	if _, err := NewService(ServiceOptions{Config: cfg, Engine: eng, Broker: "ssl://192.0.2.10:8883"}); err != nil {
		t.Fatalf("TLS to a remote broker: %v", err)
	}
}

func TestStartBrokerLoopbackOnly(t *testing.T) {
	if _, err := StartBroker("0.0.0.0:0", nil); err == nil || !strings.Contains(err.Error(), "loopback") {
		t.Fatalf("embedded broker on all interfaces: %v", err)
	}
}

// Robot states move the zones attached to the robot: the tool brought onto
// a standing hand gives a hold for the tool's zone; a state naming a frame
// no zone is attached to is rejected (bad-robot-state) and recorded as
// such; samples keep flowing either way. Input latency per track shows in
// the metrics.
func TestServiceRobotStateAndLatency(t *testing.T) {
	broker := startBroker(t)
	cfg := loadCell(t, func(c *zones.Config) {
		c.Forecast.Model = "cv"
		c.Forecast.LatencyAuto = true
		c.Bus.Tick = zones.Duration(5 * time.Second)
	})
	var buf strings.Builder
	rec, _ := NewRecorder(&syncWriter{w: &buf}, Header{Cell: cfg.Cell})
	m := NewMetrics()
	svc, stop := runService(t, cfg, broker.URL(), rec, m)
	_, robotTopic, advTopic, _, _ := svc.Topics()
	sub := newTestClient(t, broker.URL(), "observer", advTopic)
	pub := newTestClient(t, broker.URL(), "source")

	// A hand standing still in the walkway, stamped 30 ms before it is
	// published.
	hand := r3.Vec{X: 1.0, Y: 0.8, Z: 1.0}
	send := func(i int) {
		now := float64(time.Now().Add(-30*time.Millisecond).UnixNano()) / 1e9
		s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: now, P: hand}}
		pub.publish(t, "forereach/pl3-palletiser/hands", 1, EncodeSample(nil, &s)).Wait()
	}
	for i := 0; i < 50; i++ {
		send(i)
		time.Sleep(5 * time.Millisecond)
	}
	if c := svc.Counters(); c.Level != "clear" || c.Samples != 50 {
		t.Fatalf("hand in the walkway: %+v", c)
	}
	robot := func(payload string) {
		pub.publish(t, robotTopic, 1, []byte(payload)).Wait()
	}
	now := func() string { return fmt.Sprintf("%.6f", float64(time.Now().UnixNano())/1e9) }
	robot(`{"v":1,"t":` + now() + `,"frames":[{"name":"elbow","pos":[0,0,0],"quat":[1,0,0,0]}]}`)
	robot(`{"v":1,"t":` + now() + `,"frames":[{"name":"tool","pos":[1.0,0.8,1.3],"quat":[0,1,0,0]}]}`)
	sub.waitFor(t, "hold for the tool's zone", 5*time.Second, func() bool {
		for _, msg := range sub.messages(advTopic) {
			a, _ := DecodeAdvisory(msg.payload)
			if a.Level == "hold" {
				for _, r := range a.Reasons {
					if strings.HasPrefix(r.Zone, "tool-") {
						return true
					}
				}
			}
		}
		return false
	})
	robot(`{"v":1,"t":"soon"}`)
	for i := 0; i < 20; i++ {
		send(i)
	}
	deadline := time.Now().Add(5 * time.Second)
	for svc.Counters().Samples < 70 && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	c := svc.Counters()
	if c.RobotStates != 1 || c.Rejected["bad-robot-state"] != 1 || c.Rejected[ReasonBadField] != 1 || c.Samples != 70 {
		t.Errorf("counters %+v", c)
	}
	var w strings.Builder
	bw := bufio.NewWriter(&w)
	m.Write(bw)
	bw.Flush()
	var lat float64
	for _, line := range strings.Split(w.String(), "\n") {
		if strings.HasPrefix(line, `forereach_track_input_latency_seconds{track="op1/right"} `) {
			fmt.Sscan(strings.Fields(line)[1], &lat)
		}
	}
	// 30 ms of stamping plus the trip through the broker (a few ms).
	if lat < 0.030 || lat > 0.080 {
		t.Errorf("track input latency %v s, want 30 ms and a little", lat)
	}
	stop()
	rec.Flush()
	rr := NewRecordReader(strings.NewReader(buf.String()), "mem")
	kinds := map[Kind]int{}
	var rejects []string
	for {
		r, err := rr.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		kinds[r.Kind]++
		if r.Kind == KindReject {
			rejects = append(rejects, r.Reject.Reason+" "+r.Reject.Topic)
		}
		if r.Kind == KindRobot && (len(r.Robot.Frames) != 1 || r.Robot.Frames[0].Name != "tool" || r.Robot.Arrival == 0) {
			t.Errorf("recorded robot state %+v", r.Robot)
		}
	}
	if kinds[KindRobot] != 1 || kinds[KindSample] != 70 || len(rejects) != 2 ||
		rejects[0] != "bad-robot-state "+robotTopic || rejects[1] != "bad-field "+robotTopic {
		t.Errorf("recording: %v, rejections %v", kinds, rejects)
	}
}

type syncWriter struct {
	mu sync.Mutex
	w  io.Writer
}

func (s *syncWriter) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.w.Write(p)
}
