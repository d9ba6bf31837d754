package bus

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math"
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"testing"
	"time"

	"forereach/forecast"

	"gonum.org/v1/gonum/spatial/r3"
)

// The harness itself, through the embedded broker at a gentle rate: both
// paths deliver, every sample comes back from the echo, and advisories
// change with the hand crossing the zone.
func TestMeasureLatency(t *testing.T) {
	broker := startBroker(t)
	cfg := loadCell(t, nil)
	res, err := MeasureLatency(context.Background(), LatencyOptions{Broker: broker.URL(), Config: cfg, Rate: 500, Duration: time.Second})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%+v", res)
	// The pacing never runs ahead of the clock (at most 500 in 1 s, plus
	// one tick); it may fall behind on a loaded machine (CI runs the race
	// detector on 2 cores), so the lower bound only says it ran.
	if res.Sent < 50 || res.Sent > 600 {
		t.Errorf("%d samples sent in 1 s at 500/s", res.Sent)
	}
	if res.Echo.N != res.Sent || res.EchoLost != 0 {
		t.Errorf("echo: %d of %d back", res.Echo.N, res.Sent)
	}
	// 8 crossings a second, each in and out: at least a few advisories.
	if res.Advisory.N < 4 {
		t.Errorf("%d advisories measured (service counts %v)", res.Advisory.N, res.Service.Advisories)
	}
	for _, s := range []LatencyStats{res.Advisory, res.Echo} {
		if !(s.P50 > 0 && s.P50 <= s.P90 && s.P90 <= s.P99 && s.P99 <= s.Max) {
			t.Errorf("quantiles out of order: %+v", s)
		}
	}
	if res.Service.RejectedTotal() != 0 {
		t.Errorf("service rejected %v", res.Service.Rejected)
	}
	if res.Zone != "pallet-exit" {
		t.Errorf("hand crosses %q, want pallet-exit (the zone farthest from the others)", res.Zone)
	}
}

// mosquittoURL returns a Mosquitto to measure through: FOREREACH_MOSQUITTO
// when set (CI starts one with set_tcp_nodelay true), else one started here
// with the same settings; it skips when Mosquitto is not installed.
func mosquittoURL(tb testing.TB) string {
	tb.Helper()
	if a := os.Getenv("FOREREACH_MOSQUITTO"); a != "" {
		return "tcp://" + a
	}
	path, err := exec.LookPath("mosquitto")
	if err != nil {
		if _, e := os.Stat("/usr/sbin/mosquitto"); e != nil {
			tb.Skip("no broker: FOREREACH_MOSQUITTO is unset and mosquitto is not installed (apt-get install mosquitto)")
		}
		path = "/usr/sbin/mosquitto"
	}
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		tb.Fatal(err)
	}
	addr := l.Addr().String()
	l.Close()
	_, port, _ := net.SplitHostPort(addr)
	conf := filepath.Join(tb.TempDir(), "mosquitto.conf")
	os.WriteFile(conf, []byte(fmt.Sprintf("listener %s 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\npersistence false\n", port)), 0o644)
	cmd := exec.Command(path, "-c", conf)
	if err := cmd.Start(); err != nil {
		tb.Skipf("cannot start mosquitto: %v", err)
	}
	tb.Cleanup(func() { cmd.Process.Kill(); cmd.Wait() })
	for i := 0; i < 200; i++ {
		if c, err := net.Dial("tcp", addr); err == nil {
			c.Close()
			return "tcp://" + addr
		}
		time.Sleep(10 * time.Millisecond)
	}
	tb.Fatalf("mosquitto did not listen on %s", addr)
	return ""
}

// BenchmarkLatencyMosquitto measures, side by side through Mosquitto, the
// time from publishing a sample to receiving the advisory it caused and to
// receiving the sample back from a plain echo, at 5,000 samples/s. b.N is
// the number of samples (after a one-second warm-up): -benchtime 50000x
// runs for 10 s. Reported: p50 and p99 of both paths in milliseconds.
func BenchmarkLatencyMosquitto(b *testing.B) {
	url := mosquittoURL(b)
	cfg := loadCell(b, nil)
	const rate = 5000
	b.ReportAllocs()
	d := time.Duration(float64(b.N) / rate * float64(time.Second))
	if d < 200*time.Millisecond {
		d = 200 * time.Millisecond
	}
	res, err := MeasureLatency(context.Background(), LatencyOptions{Broker: url, Config: cfg, Rate: rate, Duration: d})
	if err != nil {
		b.Fatal(err)
	}
	ms := func(d time.Duration) float64 { return float64(d) / 1e6 }
	b.ReportMetric(ms(res.Advisory.P50), "adv-p50-ms")
	b.ReportMetric(ms(res.Advisory.P99), "adv-p99-ms")
	b.ReportMetric(ms(res.Echo.P50), "echo-p50-ms")
	b.ReportMetric(ms(res.Echo.P99), "echo-p99-ms")
	b.ReportMetric(float64(res.Advisory.N), "advisories")
	b.ReportMetric(res.Rate, "samples/s")
}

// BenchmarkServiceHandle is the service's work per sample message without
// the network: decoding, the engine (the example cell's ten zones and
// forecast model), recording, metrics.
func BenchmarkServiceHandle(b *testing.B) {
	cfg := loadCell(b, nil)
	eng, err := NewEngine(cfg)
	if err != nil {
		b.Fatal(err)
	}
	rec, _ := NewRecorder(io.Discard, Header{Cell: cfg.Cell})
	svc, err := NewService(ServiceOptions{Config: cfg, Engine: eng, Recorder: rec, Metrics: NewMetrics(),
		Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		b.Fatal(err)
	}
	const n = 4096
	payloads := make([][]byte, n)
	t0 := 1741072329.0
	for i := range payloads {
		tt := float64(i) * 0.002
		s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t0 + tt,
			P: r3.Vec{X: 1.5 + 0.3*math.Sin(2*math.Pi*tt), Y: 0.8, Z: 1.0}}}
		payloads[i] = EncodeSample(nil, &s)
	}
	arrival := time.Unix(1741072330, 0)
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		if i == n {
			// Start the track again later on the same time axis.
			b.StopTimer()
			t0 += float64(n)*0.002 + 1
			for k := range payloads {
				tt := float64(k) * 0.002
				s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: t0 + tt,
					P: r3.Vec{X: 1.5 + 0.3*math.Sin(2*math.Pi*tt), Y: 0.8, Z: 1.0}}}
				payloads[k] = EncodeSample(payloads[k][:0], &s)
			}
			i = 0
			b.StartTimer()
		}
		svc.handle(inMsg{topic: "forereach/pl3-palletiser/hands", payload: payloads[i], arrival: arrival})
		i++
	}
	if c := svc.Counters(); c.RejectedTotal() != 0 {
		b.Fatalf("rejected %v", c.Rejected)
	}
}
