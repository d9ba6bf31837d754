package bus

import (
	"context"
	"crypto/tls"
	"crypto/x509"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"forereach/policy"
	"forereach/safety"
	"forereach/zones"

	mqtt "github.com/eclipse/paho.mqtt.golang"
)

// ServiceOptions configure a live service.
type ServiceOptions struct {
	// Config is the loaded cell configuration (its bus section says where
	// and how to connect).
	Config *zones.Config
	// Engine is the cell's advisory engine. The service owns it from now
	// on: only the service's goroutine calls it.
	Engine *policy.Engine
	// Version of forereach, for the status message.
	Version string
	// Broker, when set, overrides Config.Bus.Broker (an embedded broker,
	// say). The plaintext rule applies to it too.
	Broker string
	// Recorder, when set, receives every accepted sample, rejected message,
	// robot state and advisory. Run flushes it at the end; the caller
	// closes it.
	Recorder *Recorder
	// Metrics, when set, are updated as the service runs.
	Metrics *Metrics
	// Logger for structured logs (default: slog.Default()).
	Logger *slog.Logger
	// OnAdvisory, when set, is called on the service goroutine with every
	// advisory published (the demo's terminal view). It must not block.
	OnAdvisory func(*Advisory)
	// Now is the wall clock (default time.Now); tests may replace it.
	Now func() time.Time
}

// Counters are the service's counts since it started.
type Counters struct {
	Samples     uint64            // accepted samples
	Rejected    map[string]uint64 // by reason
	RobotStates uint64
	Advisories  map[string]uint64 // published, by new level
	Connects    uint64
	Connected   bool
	Level       string // current level
	Scale       float64
}

// RejectedTotal is the sum of Rejected.
func (c *Counters) RejectedTotal() uint64 {
	var n uint64
	for _, v := range c.Rejected {
		n += v
	}
	return n
}

type inMsg struct {
	topic   string
	payload []byte
	arrival time.Time
	robot   bool
}

type trackLatency struct {
	ewma     float64
	set      float64 // value last given to the engine
	hasSet   bool
	n        int
	warned   bool
	implaus  int
	lastGood time.Time
}

// Service is the live service of one cell: it subscribes to hand samples
// and robot states, feeds them to the advisory engine on one goroutine, and
// publishes the engine's advisories (QoS 1 on the event topic, retained on
// the state topic) and its own status (retained, with an offline last will).
type Service struct {
	o       ServiceOptions
	cell    string
	log     *slog.Logger
	now     func() time.Time
	metrics *Metrics
	rec     *Recorder

	topicSamples, topicRobot, topicAdvisory, topicState, topicStatus string

	opts    *mqtt.ClientOptions
	client  mqtt.Client
	qos     byte
	horizon float64

	in   chan inMsg
	done chan struct{}

	// Owned by the Run goroutine.
	eng        *policy.Engine
	dec        SampleDecoder
	events     []policy.Event
	lat        map[string]*trackLatency
	latAuto    bool
	offset     float64 // smoothed arrival minus source time, all tracks
	offDev     float64 // smoothed absolute deviation from offset
	hasOffset  bool
	limiter    logLimiter
	lastLogged time.Time

	// Shared with paho's goroutines.
	pubMu      sync.Mutex
	lastState  []byte // payload of the latest advisory
	online     []byte
	statusTime string
	connected  atomic.Bool
	closing    atomic.Bool
	heartbeat  atomic.Int64 // unix nanoseconds of the loop's latest turn

	cmu      sync.Mutex
	counters Counters
}

// NewService checks the options and prepares the MQTT client; Run
// connects.
func NewService(o ServiceOptions) (*Service, error) {
	if o.Config == nil || o.Engine == nil {
		return nil, errors.New("live service: configuration and engine are required")
	}
	cfg := o.Config
	b := cfg.Bus
	if o.Broker != "" {
		b.Broker = o.Broker
	}
	u, useTLS, err := b.BrokerURL()
	if err != nil {
		return nil, fmt.Errorf("bus.broker %q: %w", b.Broker, err)
	}
	if !useTLS && !b.AllowPlaintext && !zones.IsLoopback(u.Hostname()) {
		return nil, fmt.Errorf("bus.broker %q: plaintext MQTT to a broker that is not on this machine is refused: use ssl://, or set bus.allow_plaintext: true if the network is trusted", b.Broker)
	}
	s := &Service{
		o:       o,
		cell:    cfg.Cell,
		log:     o.Logger,
		now:     o.Now,
		metrics: o.Metrics,
		rec:     o.Recorder,
		eng:     o.Engine,
		in:      make(chan inMsg, 4096),
		done:    make(chan struct{}),
		lat:     map[string]*trackLatency{},
		latAuto: cfg.Forecast.LatencyAuto,
		qos:     byte(b.QoS),
		counters: Counters{Rejected: map[string]uint64{}, Advisories: map[string]uint64{},
			Level: policy.LevelClear.String(), Scale: 1},
	}
	if s.log == nil {
		s.log = slog.Default()
	}
	s.log = s.log.With("cell", cfg.Cell)
	if s.now == nil {
		s.now = time.Now
	}
	s.dec.MaxSize = b.MaxPayload
	if len(b.Tracks) > 0 {
		s.dec.Tracks = map[string]bool{}
		for _, t := range b.Tracks {
			s.dec.Tracks[t] = true
		}
	}
	t := &b.Topics
	if t.Prefix == "" {
		b.Defaults() // a configuration not read by the loader
	}
	s.topicSamples = t.Topic(cfg.Cell, t.Samples)
	s.topicRobot = t.Topic(cfg.Cell, t.Robot)
	s.topicAdvisory = t.Topic(cfg.Cell, t.Advisory)
	s.topicState = t.Topic(cfg.Cell, t.State)
	s.topicStatus = t.Topic(cfg.Cell, t.Status)
	adv := o.Engine.Advisory()
	s.horizon = adv.Horizon
	first := FromPolicy(s.cell, &adv)
	if s.lastState, err = EncodeAdvisory(&first); err != nil {
		return nil, err
	}

	s.statusTime = s.now().UTC().Format(time.RFC3339Nano)
	online, err := EncodeStatus(&Status{Cell: s.cell, State: StateOnline, Version: o.Version, ConfigDigest: cfg.Digest,
		Since: s.statusTime, AdvisoryOnly: safety.Short})
	if err != nil {
		return nil, err
	}
	s.online = online
	offline, _ := EncodeStatus(&Status{Cell: s.cell, State: StateOffline, Version: o.Version, ConfigDigest: cfg.Digest,
		Since: s.statusTime, AdvisoryOnly: safety.Short})

	opts := mqtt.NewClientOptions()
	opts.AddBroker(b.Broker)
	id := b.ClientID
	if id == "" {
		id = "forereach-" + cfg.Cell
	}
	opts.SetClientID(id)
	opts.SetCleanSession(true)
	opts.SetOrderMatters(true)
	opts.SetKeepAlive(time.Duration(b.KeepAlive))
	opts.SetPingTimeout(time.Duration(b.KeepAlive) / 2)
	opts.SetConnectTimeout(5 * time.Second)
	opts.SetWriteTimeout(5 * time.Second)
	opts.SetAutoReconnect(true)
	opts.SetConnectRetry(true)
	opts.SetConnectRetryInterval(time.Duration(b.ReconnectMax))
	opts.SetMaxReconnectInterval(time.Duration(b.ReconnectMax))
	opts.SetResumeSubs(false)
	opts.SetBinaryWill(s.topicStatus, offline, 1, true)
	base := ""
	if cfg.Source != "" {
		base = filepath.Dir(cfg.Source)
	}
	if b.Username != "" {
		opts.SetUsername(b.Username)
		if b.PasswordFile != "" {
			pw, err := os.ReadFile(relTo(base, b.PasswordFile))
			if err != nil {
				return nil, fmt.Errorf("bus.password_file: %w", err)
			}
			line, _, _ := strings.Cut(string(pw), "\n")
			opts.SetPassword(strings.TrimRight(line, "\r"))
		}
	}
	if useTLS {
		tc, err := tlsConfig(base, &b.TLS)
		if err != nil {
			return nil, err
		}
		opts.SetTLSConfig(tc)
	}
	opts.SetDefaultPublishHandler(func(mqtt.Client, mqtt.Message) {})
	opts.SetOnConnectHandler(s.onConnect)
	opts.SetConnectionLostHandler(func(_ mqtt.Client, err error) {
		s.connected.Store(false)
		if s.metrics != nil {
			s.metrics.connected.Set(0)
		}
		s.cmu.Lock()
		s.counters.Connected = false
		s.cmu.Unlock()
		s.log.Warn("broker connection lost; reconnecting", "broker", b.Broker, "err", err)
	})
	opts.SetReconnectingHandler(func(mqtt.Client, *mqtt.ClientOptions) {
		s.log.Info("reconnecting to broker", "broker", b.Broker)
	})
	s.opts = opts
	return s, nil
}

func relTo(base, p string) string {
	if base == "" || filepath.IsAbs(p) {
		return p
	}
	return filepath.Join(base, p)
}

func tlsConfig(base string, t *zones.TLSConfig) (*tls.Config, error) {
	tc := &tls.Config{MinVersion: tls.VersionTLS12, ServerName: t.ServerName}
	if t.CA != "" {
		pem, err := os.ReadFile(relTo(base, t.CA))
		if err != nil {
			return nil, fmt.Errorf("bus.tls.ca: %w", err)
		}
		pool := x509.NewCertPool()
		if !pool.AppendCertsFromPEM(pem) {
			return nil, fmt.Errorf("bus.tls.ca: %s: no PEM certificate in it", t.CA)
		}
		tc.RootCAs = pool
	}
	if t.Cert != "" {
		cert, err := tls.LoadX509KeyPair(relTo(base, t.Cert), relTo(base, t.Key))
		if err != nil {
			return nil, fmt.Errorf("bus.tls.cert/key: %w", err)
		}
		tc.Certificates = []tls.Certificate{cert}
	}
	return tc, nil
}

// Topics returns the resolved topics: samples filter, robot filter,
// advisory events, advisory state, status.
func (s *Service) Topics() (samples, robot, advisory, state, status string) {
	return s.topicSamples, s.topicRobot, s.topicAdvisory, s.topicState, s.topicStatus
}

// onConnect runs on paho's goroutine after every (re)connection: it
// subscribes, marks the service online and republishes the current
// advisory on both advisory topics.
func (s *Service) onConnect(c mqtt.Client) {
	if s.closing.Load() {
		return
	}
	for _, sub := range []struct {
		topic string
		robot bool
	}{{s.topicSamples, false}, {s.topicRobot, true}} {
		robot := sub.robot
		tok := c.Subscribe(sub.topic, s.qos, func(_ mqtt.Client, m mqtt.Message) {
			s.receive(m, robot)
		})
		if !tok.WaitTimeout(10*time.Second) || tok.Error() != nil {
			s.log.Error("subscribe failed", "topic", sub.topic, "err", tok.Error())
			c.Disconnect(0) // the reconnection subscribes again
			return
		}
	}
	s.pubMu.Lock()
	c.Publish(s.topicStatus, 1, true, s.online)
	c.Publish(s.topicState, 1, true, s.lastState)
	c.Publish(s.topicAdvisory, 1, false, s.lastState)
	s.pubMu.Unlock()
	s.connected.Store(true)
	s.cmu.Lock()
	s.counters.Connects++
	s.counters.Connected = true
	s.cmu.Unlock()
	if s.metrics != nil {
		s.metrics.connected.Set(1)
		s.metrics.connects.Inc()
	}
	s.log.Info("connected to broker; subscribed", "samples", s.topicSamples, "robot", s.topicRobot,
		"advisory", s.topicAdvisory, "state", s.topicState, "status", s.topicStatus)
}

// receive hands a message to the service goroutine. It blocks when the
// queue is full (the broker then holds further messages), so nothing is
// dropped.
func (s *Service) receive(m mqtt.Message, robot bool) {
	msg := inMsg{topic: m.Topic(), payload: m.Payload(), arrival: s.now(), robot: robot}
	select {
	case s.in <- msg:
	case <-s.done:
	}
}

// Run connects and serves until ctx is cancelled, then marks the service
// offline, disconnects, processes what was already received and flushes the
// recording. It returns nil on a clean stop.
func (s *Service) Run(ctx context.Context) error {
	s.client = mqtt.NewClient(s.opts)
	tok := s.client.Connect()
	go func() {
		// With ConnectRetry the token completes at the first successful
		// connection; errors here are about the options.
		tok.Wait()
		if err := tok.Error(); err != nil {
			s.log.Error("connect", "err", err)
		}
	}()
	tick := time.NewTicker(time.Duration(s.o.Config.Bus.Tick))
	defer tick.Stop()
	flush := time.NewTicker(time.Second)
	defer flush.Stop()
	s.heartbeat.Store(s.now().UnixNano())
	for {
		select {
		case <-ctx.Done():
			return s.stop()
		case m := <-s.in:
			s.handle(m)
		case <-tick.C:
			s.heartbeat.Store(s.now().UnixNano())
			s.advance()
		case <-flush.C:
			s.flushRecording()
		}
	}
}

func (s *Service) stop() error {
	s.log.Info("stopping: marking the service offline")
	// Advisories from here on are recorded, not published: consumers have
	// been told that the service is offline.
	s.closing.Store(true)
	// The MQTT side winds down on its own goroutine, while this one keeps
	// taking in what paho hands over (a callback blocked on a full queue
	// would otherwise hold up the acknowledgements waited for here).
	disconnected := make(chan struct{})
	go func() {
		defer close(disconnected)
		if s.connected.Load() {
			offline, _ := EncodeStatus(&Status{Cell: s.cell, State: StateOffline, Version: s.o.Version,
				ConfigDigest: s.o.Config.Digest, Since: s.now().UTC().Format(time.RFC3339Nano), AdvisoryOnly: safety.Short})
			s.pubMu.Lock()
			t := s.client.Publish(s.topicStatus, 1, true, offline)
			s.pubMu.Unlock()
			t.WaitTimeout(2 * time.Second)
			// Unsubscribe so that nothing new arrives.
			s.client.Unsubscribe(s.topicSamples, s.topicRobot).WaitTimeout(2 * time.Second)
		}
		s.client.Disconnect(500)
	}()
	for waiting := true; waiting; {
		select {
		case m := <-s.in:
			s.handle(m)
		case <-disconnected:
			waiting = false
		}
	}
	for drained := false; !drained; {
		select {
		case m := <-s.in:
			s.handle(m)
		default:
			drained = true
		}
	}
	close(s.done)
	s.connected.Store(false)
	s.eng.Flush()
	s.drainEvents(nil, nil)
	if s.rec != nil {
		if err := s.rec.Flush(); err != nil {
			return err
		}
	}
	return nil
}

func (s *Service) flushRecording() {
	if s.rec == nil {
		return
	}
	if err := s.rec.Flush(); err != nil {
		s.recError(err)
	}
}

func (s *Service) recError(err error) {
	if err == nil {
		return
	}
	if s.metrics != nil {
		s.metrics.recErrors.Inc()
	}
	if s.limiter.allow("recording", s.now()) {
		s.log.Error("recording", "err", err)
	}
}

// handle processes one message on the service goroutine.
func (s *Service) handle(m inMsg) {
	arrival := unixSeconds(m.arrival)
	if m.robot {
		s.handleRobot(m, arrival)
	} else {
		recs, errs := s.dec.Decode(m.topic, m.payload)
		for _, e := range errs {
			s.rejectMsg(m, arrival, e.Reason, e.Error())
		}
		for i := range recs {
			r := &recs[i]
			r.Arrival = arrival
			s.eng.Sample(r.Sample)
			s.drainEvents(&m, r)
		}
	}
	if s.metrics != nil {
		s.metrics.processing.Observe(s.now().Sub(m.arrival).Seconds())
	}
}

func (s *Service) handleRobot(m inMsg, arrival float64) {
	st, perr := DecodeRobot(m.topic, m.payload, s.o.Config.Bus.MaxPayload)
	if perr != nil {
		s.rejectMsg(m, arrival, perr.Reason, perr.Error())
		return
	}
	st.Arrival = arrival
	if err := s.eng.Robot(PolicyRobot(&st)); err != nil {
		// The engine reported the rejection as an event too; drain it
		// without recording it twice.
		s.events = s.eng.Events(s.events[:0])
		s.publishEvents(s.events)
		s.rejectMsg(m, arrival, policy.RejectRobotState.String(), "topic "+quote(m.topic)+": "+err.Error())
		return
	}
	if s.rec != nil {
		s.recError(s.rec.Robot(&st))
	}
	s.cmu.Lock()
	s.counters.RobotStates++
	s.cmu.Unlock()
	if s.metrics != nil {
		s.metrics.robot.Inc()
	}
	s.drainEvents(nil, nil)
}

func quote(s string) string { return fmt.Sprintf("%q", s) }

// drainEvents takes the engine's events after a call. For a sample (r not
// nil) it records the sample, or the rejection the engine reported for it.
func (s *Service) drainEvents(m *inMsg, r *SampleRecord) {
	s.events = s.eng.Events(s.events[:0])
	rejected := false
	for i := range s.events {
		ev := &s.events[i]
		switch ev.Kind {
		case policy.EventRejected:
			if r != nil && ev.Track == r.Track && !rejected {
				rejected = true
				msg := fmt.Sprintf("topic %q: track %q at t=%v: %s", m.topic, r.Track, r.T, ev.Reject)
				if ev.Reject == policy.RejectSpeed {
					msg += fmt.Sprintf(" (%.1f m/s)", ev.Value)
				}
				s.rejectMsg(*m, r.Arrival, ev.Reject.String(), msg)
			}
		case policy.EventEntry, policy.EventNearMiss, policy.EventTrackingLost, policy.EventTrackingRegained, policy.EventExit:
			s.logEvent(ev)
		}
	}
	if r != nil && !rejected {
		s.accepted(r)
	}
	s.publishEvents(s.events)
}

func (s *Service) logEvent(ev *policy.Event) {
	attrs := []any{"event", ev.Kind.String(), "t", ev.T, "track", ev.Track}
	if ev.Zone != "" {
		attrs = append(attrs, "zone", ev.Zone)
	}
	switch ev.Kind {
	case policy.EventEntry:
		if ev.HasLead {
			attrs = append(attrs, "lead_s", ev.Lead)
		}
		attrs = append(attrs, "missed", ev.Missed)
	case policy.EventNearMiss:
		attrs = append(attrs, "min_sep_m", ev.Separation)
	case policy.EventExit:
		s.log.Debug("zone event", attrs...)
		return
	}
	s.log.Info("zone event", attrs...)
}

// accepted books an accepted sample: recording, counters, input latency.
func (s *Service) accepted(r *SampleRecord) {
	if s.rec != nil {
		s.recError(s.rec.Sample(r))
	}
	s.cmu.Lock()
	s.counters.Samples++
	s.cmu.Unlock()
	if s.metrics != nil {
		s.metrics.samples.Inc()
	}
	s.inputLatency(r)
}

// Input latency: arrival minus source time. Only meaningful when the
// source stamps Unix time with a synchronised clock; values below 0 or
// above 10 s are counted as implausible and not used.
const (
	latencyAlpha = 0.05   // EWMA weight of a new latency value
	latencyStep  = 0.5e-3 // s, change that makes the engine's lead follow
	latencyMax   = 10.0   // s
	leadMax      = 1.0    // s, the engine's limit for a latency lead
)

func (s *Service) inputLatency(r *SampleRecord) {
	d := r.Arrival - r.T
	// The offset maps wall-clock time to the samples' axis for Advance,
	// whatever the source's clock.
	if !s.hasOffset {
		s.offset, s.hasOffset = d, true
	} else {
		s.offDev += latencyAlpha * (math.Abs(d-s.offset) - s.offDev)
		s.offset += latencyAlpha * (d - s.offset)
	}
	tl := s.lat[r.Track]
	if tl == nil {
		tl = &trackLatency{}
		s.lat[r.Track] = tl
	}
	if !(d >= 0 && d <= latencyMax) {
		tl.implaus++
		if s.metrics != nil {
			s.metrics.implausible.Inc()
		}
		if !tl.warned {
			tl.warned = true
			s.log.Warn("input latency implausible: the source's clock is not synchronised Unix time; latency is not measured for this track",
				"track", r.Track, "arrival_minus_source_s", d)
		}
		return
	}
	if tl.n == 0 {
		tl.ewma = d
	} else {
		tl.ewma += latencyAlpha * (d - tl.ewma)
	}
	tl.n++
	if s.metrics != nil {
		s.metrics.inputLatency.Observe(d)
		if tl.n%64 == 1 {
			s.metrics.trackLatencyOf(r.Track).Set(tl.ewma)
		}
	}
	if s.latAuto && tl.n >= 8 && (!tl.hasSet || math.Abs(tl.ewma-tl.set) > latencyStep) {
		lead := math.Min(tl.ewma, leadMax)
		if err := s.eng.SetLatency(r.Track, lead); err == nil {
			tl.set, tl.hasSet = lead, true
		}
	}
}

// advance moves the engine's clock to the present (on the samples' axis)
// so that silent tracks are noticed and advisories released. The present is
// the wall clock minus the usual input latency and four times its usual
// deviation plus 2 ms: late enough that, while samples flow, the clock
// stays behind the latest sample (and advisories keep the time of the
// sample that caused them), and silence is noticed a few milliseconds after
// policy.stale_after.
func (s *Service) advance() {
	if !s.hasOffset {
		return
	}
	t := unixSeconds(s.now()) - s.offset - 4*s.offDev - 0.002
	s.eng.Advance(t)
	s.drainEvents(nil, nil)
}

// publishEvents publishes the advisory changes among evs, in order.
func (s *Service) publishEvents(evs []policy.Event) {
	for i := range evs {
		ev := &evs[i]
		if ev.Kind != policy.EventAdvisory {
			continue
		}
		pa := policy.Advisory{T: ev.T, Seq: ev.Seq, Level: ev.Level, Scale: ev.Scale, Reasons: ev.Reasons, Horizon: s.horizon}
		a := FromPolicy(s.cell, &pa)
		a.Issued = unixSeconds(s.now())
		s.publish(&a)
	}
}

func (s *Service) publish(a *Advisory) {
	payload, err := EncodeAdvisory(a)
	if err != nil {
		s.log.Error("encode advisory", "err", err)
		return
	}
	s.pubMu.Lock()
	s.lastState = payload
	if s.connected.Load() && !s.closing.Load() {
		s.client.Publish(s.topicAdvisory, 1, false, payload)
		s.client.Publish(s.topicState, 1, true, payload)
	}
	s.pubMu.Unlock()
	if s.rec != nil {
		s.recError(s.rec.Advisory(a))
	}
	s.cmu.Lock()
	s.counters.Advisories[a.Level]++
	s.counters.Level, s.counters.Scale = a.Level, a.Scale
	s.cmu.Unlock()
	if s.metrics != nil {
		s.metrics.advisoriesBy(a.Level).Inc()
		if l, ok := policy.ParseLevel(a.Level); ok {
			s.metrics.level.Set(float64(l))
		}
		s.metrics.scale.Set(a.Scale)
	}
	// The first three reasons in words; the payload has them all.
	var reasons []string
	for i := range a.Reasons {
		if i == 3 {
			reasons = append(reasons, fmt.Sprintf("and %d more", len(a.Reasons)-3))
			break
		}
		reasons = append(reasons, a.Reasons[i].Text)
	}
	s.log.Info("advisory", "seq", a.Seq, "level", a.Level, "scale", a.Scale, "t", a.T, "reasons", reasons)
	if s.o.OnAdvisory != nil {
		s.o.OnAdvisory(a)
	}
}

// rejectMsg books a refused message (or one refused sample of it).
func (s *Service) rejectMsg(m inMsg, arrival float64, reason, msg string) {
	if s.rec != nil {
		s.recError(s.rec.Reject(&Reject{Arrival: arrival, Topic: m.topic, Reason: reason, Error: msg,
			Payload: m.payload, Size: len(m.payload)}))
	}
	s.cmu.Lock()
	s.counters.Rejected[reason]++
	s.cmu.Unlock()
	if s.metrics != nil {
		s.metrics.rejectedBy(reason).Inc()
	}
	if s.limiter.allow(reason, s.now()) {
		s.log.Warn("rejected", "reason", reason, "err", msg)
	}
}

// Counters returns a snapshot of the service's counts.
func (s *Service) Counters() Counters {
	s.cmu.Lock()
	defer s.cmu.Unlock()
	c := s.counters
	c.Rejected = make(map[string]uint64, len(s.counters.Rejected))
	for k, v := range s.counters.Rejected {
		c.Rejected[k] = v
	}
	c.Advisories = make(map[string]uint64, len(s.counters.Advisories))
	for k, v := range s.counters.Advisories {
		c.Advisories[k] = v
	}
	return c
}

// Connected reports whether the service is connected to the broker.
func (s *Service) Connected() bool { return s.connected.Load() }

// OpsHandler serves /metrics (when the service has metrics) and /healthz:
// 200 while connected to the broker with the service loop turning, 503
// otherwise.
func (s *Service) OpsHandler() http.Handler {
	mux := http.NewServeMux()
	if s.metrics != nil {
		mux.Handle("/metrics", s.metrics.Handler())
	}
	mux.HandleFunc("/healthz", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		beat := time.Unix(0, s.heartbeat.Load())
		tick := time.Duration(s.o.Config.Bus.Tick)
		switch {
		case !s.connected.Load():
			w.WriteHeader(http.StatusServiceUnavailable)
			fmt.Fprintln(w, "not connected to the broker")
		case s.now().Sub(beat) > 20*tick+time.Second:
			w.WriteHeader(http.StatusServiceUnavailable)
			fmt.Fprintf(w, "service loop stalled for %v\n", s.now().Sub(beat).Round(time.Millisecond))
		default:
			fmt.Fprintln(w, "ok")
		}
	})
	return mux
}

func unixSeconds(t time.Time) float64 {
	return float64(t.UnixNano()) / 1e9
}

// logLimiter lets through at most 5 messages per key per 10 s.
type logLimiter struct {
	m map[string]*limit
}

type limit struct {
	start      time.Time
	n          int
	suppressed int
}

func (l *logLimiter) allow(key string, now time.Time) bool {
	if l.m == nil {
		l.m = map[string]*limit{}
	}
	e := l.m[key]
	if e == nil {
		e = &limit{start: now}
		l.m[key] = e
	}
	if now.Sub(e.start) > 10*time.Second {
		if e.suppressed > 0 {
			slog.Default().Warn("log messages suppressed", "key", key, "count", e.suppressed)
		}
		e.start, e.n, e.suppressed = now, 0, 0
	}
	if e.n < 5 {
		e.n++
		return true
	}
	e.suppressed++
	return false
}
