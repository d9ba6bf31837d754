package bus

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"os"
	"sort"
	"sync"
	"time"

	"forereach/forecast"
	"forereach/zones"

	mqtt "github.com/eclipse/paho.mqtt.golang"
	"gonum.org/v1/gonum/spatial/r3"
)

// LatencyOptions configure MeasureLatency.
type LatencyOptions struct {
	// Broker is the broker to measure through (tcp://host:port).
	Broker string
	// Config is the cell. For the run its policy.release is set to 1 ms so
	// that advisories change often, and its topics get a prefix of their
	// own so that a shared broker is not disturbed.
	Config *zones.Config
	// Rate is the number of samples per second (default 5000).
	Rate float64
	// Duration of the measurement, after a warm-up of one second
	// (default 10 s).
	Duration time.Duration
	// Logger for the service (default: discard).
	Logger *slog.Logger
}

// LatencyStats summarise one path's latencies.
type LatencyStats struct {
	N                  int
	P50, P90, P99, Max time.Duration
	Mean               time.Duration
}

// LatencyResult compares the two paths measured side by side.
type LatencyResult struct {
	// Advisory: sample published → advisory received, for advisories that
	// a sample caused (the advisory's time is that sample's time), through
	// the broker, the live service (decoding, engine, recording) and the
	// broker again.
	Advisory LatencyStats
	// Echo: sample published → the same sample received back from a
	// client that only subscribes and republishes it, through the same
	// broker, at the same time.
	Echo LatencyStats
	// Sent is the number of samples published after the warm-up, Rate the
	// rate achieved.
	Sent int
	Rate float64
	// Zone is the zone whose boundary the hand crossed.
	Zone string
	// EchoLost counts samples published after the warm-up that never came
	// back from the echo.
	EchoLost int
	// Counters of the service at the end.
	Service Counters
}

// MeasureLatency publishes hand samples at a fixed rate and measures, side
// by side through the same broker, the time from a sample's publication to
// the advisory it caused (through the live service) and to its return from
// a plain echo client (subscribe and republish, no processing). Samples go
// out at QoS 0 and come back at QoS 1 on both paths. The hand moves in and
// out of a zone of the cell eight times a second so that advisories change
// often.
//
// Source times are the publisher's wall clock, so latencies are measured
// on one clock, in one process.
func MeasureLatency(ctx context.Context, o LatencyOptions) (*LatencyResult, error) {
	if o.Rate == 0 {
		o.Rate = 5000
	}
	if o.Duration == 0 {
		o.Duration = 10 * time.Second
	}
	if !(o.Rate > 0 && o.Rate <= 100000) {
		return nil, fmt.Errorf("latency: rate %g: must be in (0, 100000] samples/s", o.Rate)
	}
	log := o.Logger
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	cfg := *o.Config
	cfg.Policy.Release = zones.Duration(time.Millisecond)
	var id [4]byte
	rand.Read(id[:])
	run := hex.EncodeToString(id[:])
	cfg.Bus.Topics.Prefix = "forereach-latency/" + run + "/{cell}"
	cfg.Bus.ClientID = "forereach-latency-service-" + run
	cfg.Bus.QoS = 0
	t := &cfg.Bus.Topics
	samplesTopic := t.Topic(cfg.Cell, "{prefix}/hands")
	echoTopic := t.Topic(cfg.Cell, "{prefix}/echo")
	advTopic := t.Topic(cfg.Cell, t.Advisory)
	target, err := latencyTarget(&cfg)
	if err != nil {
		return nil, err
	}

	eng, err := NewEngine(&cfg)
	if err != nil {
		return nil, err
	}
	dir, err := os.MkdirTemp("", "forereach-latency-")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	rec, err := CreateRecording(dir, Header{Cell: cfg.Cell, Version: "latency", Source: o.Broker}, 1<<30)
	if err != nil {
		return nil, err
	}
	defer rec.Close()
	svc, err := NewService(ServiceOptions{Config: &cfg, Engine: eng, Version: "latency", Broker: o.Broker,
		Recorder: rec, Logger: log})
	if err != nil {
		return nil, err
	}
	svcCtx, stopSvc := context.WithCancel(context.Background())
	svcDone := make(chan error, 1)
	go func() { svcDone <- svc.Run(svcCtx) }()
	defer func() { stopSvc(); <-svcDone }()

	connect := func(name string) (mqtt.Client, error) {
		c := mqtt.NewClient(mqtt.NewClientOptions().AddBroker(o.Broker).SetClientID(name + "-" + run).
			SetCleanSession(true).SetOrderMatters(true).SetWriteTimeout(5 * time.Second))
		if tok := c.Connect(); !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
			return nil, fmt.Errorf("latency: %s: connect to %s: %v", name, o.Broker, tok.Error())
		}
		return c, nil
	}
	subscribe := func(c mqtt.Client, topic string, qos byte, h mqtt.MessageHandler) error {
		if tok := c.Subscribe(topic, qos, h); !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
			return fmt.Errorf("latency: subscribe %s: %v", topic, tok.Error())
		}
		return nil
	}

	// The echo: subscribe and republish, nothing else.
	echo, err := connect("forereach-latency-echo")
	if err != nil {
		return nil, err
	}
	defer echo.Disconnect(100)
	if err := subscribe(echo, samplesTopic, 0, func(c mqtt.Client, m mqtt.Message) {
		c.Publish(echoTopic, 1, false, m.Payload())
	}); err != nil {
		return nil, err
	}

	// The measuring client.
	var mu sync.Mutex
	published := map[uint64]float64{} // sample time bits -> 1 when after the warm-up
	var advLat, echoLat []time.Duration
	echoSeen := 0
	var dec SampleDecoder
	meas, err := connect("forereach-latency-measure")
	if err != nil {
		return nil, err
	}
	defer meas.Disconnect(100)
	if err := subscribe(meas, echoTopic, 1, func(_ mqtt.Client, m mqtt.Message) {
		now := time.Now()
		mu.Lock()
		defer mu.Unlock()
		got, _ := dec.Decode(echoTopic, m.Payload())
		for _, s := range got {
			if published[math.Float64bits(s.T)] == 1 {
				echoLat = append(echoLat, now.Sub(unixTime(s.T)))
				echoSeen++
			}
		}
	}); err != nil {
		return nil, err
	}
	if err := subscribe(meas, advTopic, 1, func(_ mqtt.Client, m mqtt.Message) {
		now := time.Now()
		a, err := DecodeAdvisory(m.Payload())
		if err != nil {
			return
		}
		mu.Lock()
		defer mu.Unlock()
		if published[math.Float64bits(a.T)] == 1 {
			advLat = append(advLat, now.Sub(unixTime(a.T)))
		}
	}); err != nil {
		return nil, err
	}
	deadline := time.Now().Add(10 * time.Second)
	for !svc.Connected() {
		if time.Now().After(deadline) {
			return nil, errors.New("latency: the service did not connect within 10 s")
		}
		time.Sleep(10 * time.Millisecond)
	}

	// The source.
	src, err := connect("forereach-latency-source")
	if err != nil {
		return nil, err
	}
	defer src.Disconnect(100)
	const warmup = time.Second
	start := time.Now()
	base := float64(start.UnixNano()) / 1e9
	end := start.Add(warmup + o.Duration)
	tick := time.NewTicker(time.Millisecond)
	defer tick.Stop()
	var buf []byte
	n, sent := 0, 0
	lastT := 0.0
	var firstMeasured, lastMeasured time.Time
loop:
	for {
		select {
		case <-ctx.Done():
			return nil, ctx.Err()
		case now := <-tick.C:
			if now.After(end) {
				break loop
			}
			due := int(now.Sub(start).Seconds() * o.Rate)
			for ; n < due; n++ {
				at := time.Now()
				ts := float64(at.UnixNano()) / 1e9
				if ts <= lastT {
					ts = math.Nextafter(lastT, math.Inf(1))
				}
				lastT = ts
				// The position from the time as sent, so that the speed
				// the engine sees between samples a microsecond apart is
				// not skewed by the float64 rounding of Unix time.
				p := target.at(ts - base)
				s := SampleRecord{Sample: forecast.Sample{Track: "op1/right", T: ts, P: p}}
				buf = EncodeSample(buf[:0], &s)
				measured := at.Sub(start) >= warmup
				mu.Lock()
				if measured {
					published[math.Float64bits(ts)] = 1
				} else {
					published[math.Float64bits(ts)] = 2
				}
				mu.Unlock()
				src.Publish(samplesTopic, 0, false, append([]byte(nil), buf...))
				if measured {
					sent++
					if firstMeasured.IsZero() {
						firstMeasured = at
					}
					lastMeasured = at
				}
			}
		}
	}
	// Let the last messages arrive.
	time.Sleep(500 * time.Millisecond)
	mu.Lock()
	res := &LatencyResult{Advisory: summarise(advLat), Echo: summarise(echoLat), Sent: sent, EchoLost: sent - echoSeen, Zone: target.zone}
	mu.Unlock()
	if d := lastMeasured.Sub(firstMeasured).Seconds(); d > 0 {
		res.Rate = float64(sent-1) / d
	}
	res.Service = svc.Counters()
	return res, nil
}

func unixTime(s float64) time.Time {
	sec, frac := math.Modf(s)
	return time.Unix(int64(sec), int64(frac*1e9))
}

// oscillation is the hand's motion: across a zone's boundary, ±0.15 m at
// 8 Hz (at most 7.5 m/s, under the default plausible-speed limit of
// 10 m/s).
type oscillation struct {
	centre, dir r3.Vec
	zone        string
}

func (o oscillation) at(t float64) r3.Vec {
	return r3.Add(o.centre, r3.Scale(0.15*math.Sin(2*math.Pi*8*t), o.dir))
}

// latencyTarget picks where the hand crosses a zone boundary: of the points
// where a horizontal line through a fixed zone's centre meets its surface
// (from ±x and ±y), the one farthest from every other zone (zones attached
// to the robot count 3 m closer, so that the protective separation rule
// stays quiet), so that the advisory changes only with that crossing.
func latencyTarget(cfg *zones.Config) (oscillation, error) {
	zs, err := cfg.BuildZones()
	if err != nil {
		return oscillation{}, err
	}
	best := oscillation{}
	bestClear := math.Inf(-1)
	for i := 0; i < zs.Len(); i++ {
		z := zs.Zone(i)
		if z.Frame != "" {
			continue
		}
		b := z.Bounds()
		c := r3.Scale(0.5, r3.Add(b.Min, b.Max))
		size := r3.Norm(r3.Sub(b.Max, b.Min))
		for _, dir := range []r3.Vec{{X: 1}, {X: -1}, {Y: 1}, {Y: -1}} {
			p := z.Shape.Closest(r3.Add(c, r3.Scale(size+2, dir)))
			if p.Z < 0.2 {
				continue
			}
			clear := math.Inf(1)
			for j := 0; j < zs.Len(); j++ {
				if j == i {
					continue
				}
				o := zs.Zone(j)
				d := o.SignedDistance(p) - o.Margin
				if o.Frame != "" {
					d -= 3
				}
				clear = math.Min(clear, d)
			}
			if clear > bestClear {
				bestClear = clear
				best = oscillation{centre: p, dir: dir, zone: z.Name}
			}
		}
	}
	if math.IsInf(bestClear, -1) {
		return oscillation{}, errors.New("latency: the cell has no fixed zone to move the hand across")
	}
	return best, nil
}

func summarise(ds []time.Duration) LatencyStats {
	s := LatencyStats{N: len(ds)}
	if len(ds) == 0 {
		return s
	}
	sorted := append([]time.Duration(nil), ds...)
	sort.Slice(sorted, func(i, j int) bool { return sorted[i] < sorted[j] })
	q := func(p float64) time.Duration { return sorted[int(math.Ceil(p*float64(len(sorted))))-1] }
	var sum time.Duration
	for _, d := range sorted {
		sum += d
	}
	s.P50, s.P90, s.P99, s.Max = q(0.5), q(0.9), q(0.99), sorted[len(sorted)-1]
	s.Mean = sum / time.Duration(len(sorted))
	return s
}
