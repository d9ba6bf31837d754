package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"os/signal"
	"sort"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"
	"forereach/sim"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

func init() {
	register(&command{
		Name:    "demo",
		Summary: "a live demonstration: embedded broker, simulated operators, the service and a terminal view",
		Usage: `Usage: forereach demo [-c CELL.yaml] [--scenario FILE] [--duration D] [--seed N]
                      [--record DIR | --no-record] [--metrics HOST:PORT]

Starts an MQTT broker inside the process, simulated operators working in the
example cell (pl3-palletiser, the end-of-line palletising cell of a
fictional biscuit packaging line) and a simulated robot moving its tool
between the infeed and the pallet, and the live service itself, which takes
the samples and robot states from the broker like 'forereach run' does. A
terminal view shows every advisory change with its reasons, the count of
advisories per level and the samples per second. It stops after --duration
or Ctrl-C and leaves the recording behind for 'forereach review'.

  -c CELL.yaml      the cell (default testdata/pl3-palletiser.yaml)
  --scenario FILE   the simulator's scenario, played in a loop (default
                    testdata/scenarios/demo.yaml; "builtin" for a small
                    built-in approach-and-withdraw generator)
  --duration D      how long to run (default 30s)
  --seed N          seed of the simulated runs (default: the scenario's)
  --record DIR      where the recording goes (default bus.recording.dir,
                    else recordings)
  --no-record       do not record
  --metrics A       serve /metrics and /healthz on A
  --log-level L     log level on standard error (default warn)

Example:
  forereach demo --duration 10s`,
		Live: true,
		Run:  runDemo,
	})
}

const (
	demoCell     = "testdata/pl3-palletiser.yaml"
	demoScenario = "testdata/scenarios/demo.yaml"
	demoGap      = 1.0 // s between scenario runs, so that tracks are lost and found again
)

func runDemo(args []string, stdout, stderr io.Writer) int {
	c := commands["demo"]
	fl := newFlagSet(c, stderr)
	var cellPath, scenario, record, metrics, logLevel, seedFlag string
	var noRecord bool
	var duration time.Duration
	fl.StringVar(&cellPath, "c", demoCell, "cell configuration file (YAML)")
	fl.StringVar(&scenario, "scenario", demoScenario, `scenario file, or "builtin"`)
	fl.DurationVar(&duration, "duration", 30*time.Second, "how long to run")
	fl.StringVar(&seedFlag, "seed", "", "seed (default: the scenario's)")
	fl.StringVar(&record, "record", "", "recording directory")
	fl.BoolVar(&noRecord, "no-record", false, "do not record")
	fl.StringVar(&metrics, "metrics", "", "listen address of /metrics and /healthz")
	fl.StringVar(&logLevel, "log-level", "warn", "debug, info, warn or error")
	pos, err := parseArgs(fl, args)
	if err != nil {
		return 2
	}
	usageErr := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach demo: "+format+"\n", a...)
		fmt.Fprintln(stderr, "run 'forereach help demo' for usage")
		return 2
	}
	switch {
	case len(pos) > 0:
		return usageErr("unexpected argument %q", pos[0])
	case duration <= 0:
		return usageErr("--duration must be positive, got %v", duration)
	case noRecord && record != "":
		return usageErr("give --record or --no-record, not both")
	}
	var seed uint64
	if seedFlag != "" {
		if seed, err = strconv.ParseUint(seedFlag, 10, 64); err != nil {
			return usageErr("--seed: %q is not a whole number >= 0", seedFlag)
		}
	}
	log, err := newLogger(logLevel, "text", stderr)
	if err != nil {
		return usageErr("%v", err)
	}
	cfg, err := zones.Load(cellPath)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) && cellPath == demoCell {
			fmt.Fprintf(stderr, "forereach demo: %v\n(run the demo from the top of the forereach source tree, or give -c CELL.yaml)\n", err)
		} else {
			fmt.Fprintln(stderr, err)
		}
		return 1
	}
	src, srcName, err := demoSource(cfg, scenario, seedFlag != "", seed)
	if err != nil {
		fmt.Fprintf(stderr, "forereach demo: %v\n", err)
		return 1
	}
	if !noRecord && record == "" {
		record = cfg.Bus.Recording.Dir
		if record == "" {
			record = "recordings"
		}
	}

	view := newDemoView(stdout, cfg.Cell)
	l, err := startLive(cfg, liveOptions{embedded: "127.0.0.1:0", recordDir: record, metrics: metrics,
		source: "demo: " + srcName, onAdvisory: view.advisory}, log)
	if err != nil {
		fmt.Fprintf(stderr, "forereach demo: %v\n", err)
		return 1
	}
	samplesTopic, robotTopic, _, _, _ := l.svc.Topics()
	pubTopic := strings.TrimSuffix(strings.TrimSuffix(samplesTopic, "#"), "/")
	if strings.ContainsAny(pubTopic, "+#") {
		l.close()
		fmt.Fprintf(stderr, "forereach demo: the samples topic %q has wildcards inside; the demo cannot pick a topic to publish on\n", samplesTopic)
		return 1
	}

	fmt.Fprintf(stdout, "forereach demo: cell %s, %s, %v; embedded broker %s\n", cfg.Cell, srcName, duration, l.broker.Addr())
	fmt.Fprintln(stdout, safety.Short)

	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	ctx, cancel := context.WithTimeout(ctx, duration)
	defer cancel()
	svcCtx, stopSvc := context.WithCancel(context.Background())
	svcDone := make(chan error, 1)
	go func() { svcDone <- l.svc.Run(svcCtx) }()

	// The simulated tracker and robot controller publish through the
	// broker like real ones would.
	pub, err := bus.DialPublisher(l.broker.URL(), "forereach-demo-source")
	if err != nil {
		stopSvc()
		<-svcDone
		l.close()
		fmt.Fprintf(stderr, "forereach demo: %v\n", err)
		return 1
	}
	var wg sync.WaitGroup
	wg.Add(3)
	start := time.Now()
	var srcErr error
	go func() { defer wg.Done(); srcErr = src.play(ctx, pub, pubTopic, start) }()
	go func() { defer wg.Done(); playRobot(ctx, pub, robotTopic, cfg, start) }()
	go func() { defer wg.Done(); view.run(ctx, l.svc, start) }()
	wg.Wait()
	pub.Close()
	// Let the last samples through the broker before the service stops.
	time.Sleep(100 * time.Millisecond)
	stopSvc()
	runErr := <-svcDone
	closeErr := l.close()
	view.summary(l.svc.Counters(), l.rec)
	if err := errors.Join(srcErr, runErr, closeErr); err != nil {
		fmt.Fprintf(stderr, "forereach demo: %v\n", err)
		return 1
	}
	return 0
}

// demoSamples is what the demo plays: the simulator's scenario in a loop,
// or the built-in generator.
type demoSamples struct {
	sc   *sim.Scenario
	seed uint64
}

func demoSource(cfg *zones.Config, path string, haveSeed bool, seed uint64) (*demoSamples, string, error) {
	if path == "builtin" {
		return &demoSamples{}, "built-in approach generator", nil
	}
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) && path == demoScenario {
			return &demoSamples{}, "built-in approach generator", nil
		}
		return nil, "", err
	}
	defer f.Close()
	sc, err := sim.Load(f, path, cfg)
	if err != nil {
		return nil, "", err
	}
	if !haveSeed {
		seed = sc.Seed
	}
	return &demoSamples{sc: sc, seed: seed}, fmt.Sprintf("scenario %s (seed %d)", sc.Name, seed), nil
}

// play publishes samples paced by their (simulated) arrival times, with
// source times on the Unix clock, until ctx ends.
func (d *demoSamples) play(ctx context.Context, c *bus.Publisher, topic string, start time.Time) error {
	base := float64(start.UnixNano()) / 1e9
	offset := 0.0 // seconds of the current run after start
	publish := func(track string, t, arrival float64, p r3.Vec) error {
		due := start.Add(time.Duration((offset + arrival) * float64(time.Second)))
		if w := time.Until(due); w > 0 {
			select {
			case <-ctx.Done():
				return ctx.Err()
			case <-time.After(w):
			}
		} else if ctx.Err() != nil {
			return ctx.Err()
		}
		s := bus.SampleRecord{Sample: forecast.Sample{Track: track, T: base + offset + t, P: p}}
		if err := c.Sample(topic, &s); err != nil {
			return fmt.Errorf("demo source: publish on %s: %w", topic, err)
		}
		return nil
	}
	for i := 0; ; i++ {
		var dur float64
		var err error
		if d.sc != nil {
			r := d.sc.RunN(d.seed, i)
			for {
				m, ok := r.Next()
				if !ok {
					break
				}
				if err = publish(m.Track, m.T, m.Arrival, m.P); err != nil {
					break
				}
			}
			dur = r.Duration()
		} else {
			dur, err = builtinApproach(publish)
		}
		if err != nil {
			if ctx.Err() != nil {
				return nil
			}
			return err
		}
		offset += dur + demoGap
	}
}

// builtinApproach is one cycle of the built-in generator: a right hand at
// 100 Hz that waits in the walkway, reaches into the robot envelope with a
// minimum-jerk profile (Flash & Hogan, 1985), holds, withdraws and waits.
func builtinApproach(publish func(track string, t, arrival float64, p r3.Vec) error) (float64, error) {
	from := r3.Vec{X: 1.0, Y: 0.8, Z: 1.0}
	to := r3.Vec{X: 3.3, Y: 0.8, Z: 1.0}
	const rate, latency = 100.0, 0.02
	mj := func(tau float64) float64 {
		tau = math.Max(0, math.Min(1, tau))
		return tau * tau * tau * (10 - 15*tau + 6*tau*tau)
	}
	pos := func(t float64) r3.Vec {
		var s float64
		switch {
		case t < 1:
			s = 0
		case t < 2.5:
			s = mj((t - 1) / 1.5)
		case t < 3.5:
			s = 1
		case t < 5:
			s = 1 - mj((t-3.5)/1.5)
		}
		return r3.Add(from, r3.Scale(s, r3.Sub(to, from)))
	}
	const dur = 7.0
	for k := 0; float64(k)/rate <= dur; k++ {
		t := float64(k) / rate
		if err := publish("op1/right", t, t+latency, pos(t)); err != nil {
			return 0, err
		}
	}
	return dur, nil
}

// playRobot publishes the state of a simulated robot at 50 Hz: its tool
// moves between the infeed pick position and the pallet, gripper down.
func playRobot(ctx context.Context, c *bus.Publisher, topic string, cfg *zones.Config, start time.Time) {
	if _, err := cfg.FramePose("tool"); err != nil {
		return // a cell without a tool frame: no robot
	}
	pick := r3.Vec{X: 2.5, Y: 3.9, Z: 1.6}
	place := r3.Vec{X: 5.4, Y: 1.0, Z: 2.3}
	const period = 6.0 // s per pick-and-place cycle
	tick := time.NewTicker(20 * time.Millisecond)
	defer tick.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case now := <-tick.C:
			t := now.Sub(start).Seconds()
			s := (1 - math.Cos(2*math.Pi*t/period)) / 2
			p := r3.Add(pick, r3.Scale(s, r3.Sub(place, pick)))
			p.Z += 0.4 * math.Sin(math.Pi*s)
			st := bus.RobotState{T: float64(now.UnixNano()) / 1e9,
				Frames: []bus.FramePos{{Name: "tool", Pos: [3]float64{p.X, p.Y, p.Z}, Quat: [4]float64{0, 1, 0, 0}}}}
			c.Robot(topic, &st) // a lost connection shows in the samples' publishing
		}
	}
}

// demoView is the terminal view: advisory changes as lines, and a status
// line (redrawn in place on a terminal, every 5 s otherwise).
type demoView struct {
	w     io.Writer
	term  bool
	cell  string
	mu    sync.Mutex
	adv   chan bus.Advisory
	drops int
}

func newDemoView(w io.Writer, cell string) *demoView {
	return &demoView{w: w, term: isTerminal(w), cell: cell, adv: make(chan bus.Advisory, 256)}
}

// advisory is the service's callback; it must not block.
func (v *demoView) advisory(a *bus.Advisory) {
	select {
	case v.adv <- *a:
	default:
		v.mu.Lock()
		v.drops++
		v.mu.Unlock()
	}
}

func (v *demoView) run(ctx context.Context, svc *bus.Service, start time.Time) {
	fmt.Fprintf(v.w, "%7s  %-6s %5s  %s\n", "time", "level", "scale", "reasons")
	status := time.NewTicker(250 * time.Millisecond)
	defer status.Stop()
	var lastSamples uint64
	lastT := start
	lastPrinted := start
	rate := 0.0
	statusShown := false
	for {
		select {
		case <-ctx.Done():
			for {
				select {
				case a := <-v.adv:
					v.line(a, start, &statusShown)
				default:
					if statusShown {
						fmt.Fprintln(v.w)
					}
					return
				}
			}
		case a := <-v.adv:
			v.line(a, start, &statusShown)
		case now := <-status.C:
			c := svc.Counters()
			if dt := now.Sub(lastT).Seconds(); dt >= 1 {
				rate = float64(c.Samples-lastSamples) / dt
				lastSamples, lastT = c.Samples, now
			}
			s := fmt.Sprintf("%6.1fs  %s %.2f | %4.0f samples/s | advisories: %s | rejected %d%s",
				now.Sub(start).Seconds(), c.Level, c.Scale, rate, perLevel(c.Advisories), c.RejectedTotal(), connNote(c))
			if v.term {
				fmt.Fprintf(v.w, "\r\x1b[K%s", s)
				statusShown = true
			} else if now.Sub(lastPrinted) >= 5*time.Second {
				fmt.Fprintln(v.w, s)
				lastPrinted = now
			}
		}
	}
}

func connNote(c bus.Counters) string {
	if !c.Connected {
		return " | broker: not connected"
	}
	return ""
}

func (v *demoView) line(a bus.Advisory, start time.Time, statusShown *bool) {
	if *statusShown {
		fmt.Fprint(v.w, "\r\x1b[K")
		*statusShown = false
	}
	when := time.Duration(a.Issued*1e9) - time.Duration(start.UnixNano())
	// The most severe reasons first (the order within a level is the
	// engine's: tracks as they appeared, then zones).
	sort.SliceStable(a.Reasons, func(i, j int) bool {
		return levelRank(a.Reasons[i].Level) > levelRank(a.Reasons[j].Level)
	})
	var rs []string
	for i, r := range a.Reasons {
		if i == 2 {
			rs = append(rs, fmt.Sprintf("+%d more", len(a.Reasons)-2))
			break
		}
		rs = append(rs, r.Text)
	}
	if len(rs) == 0 {
		rs = []string{"-"}
	}
	fmt.Fprintf(v.w, "%6.2fs  %-6s %5.2f  %s\n", when.Seconds(), a.Level, a.Scale, strings.Join(rs, "; "))
}

func levelRank(s string) int {
	l, _ := policy.ParseLevel(s)
	return int(l)
}

func perLevel(m map[string]uint64) string {
	var parts []string
	for _, l := range []policy.Level{policy.LevelClear, policy.LevelReduce, policy.LevelHold} {
		parts = append(parts, fmt.Sprintf("%s %d", l, m[l.String()]))
	}
	return strings.Join(parts, ", ")
}

func (v *demoView) summary(c bus.Counters, rec *bus.Recorder) {
	fmt.Fprintf(v.w, "\n%d samples, %d robot states, %d rejected", c.Samples, c.RobotStates, c.RejectedTotal())
	if len(c.Rejected) > 0 {
		var rs []string
		for r, n := range c.Rejected {
			rs = append(rs, fmt.Sprintf("%s %d", r, n))
		}
		sort.Strings(rs)
		fmt.Fprintf(v.w, " (%s)", strings.Join(rs, ", "))
	}
	fmt.Fprintf(v.w, "; advisories: %s\n", perLevel(c.Advisories))
	if v.drops > 0 {
		fmt.Fprintf(v.w, "(%d advisories were not shown: the view fell behind; all are in the recording)\n", v.drops)
	}
	if rec != nil {
		for _, f := range rec.Files() {
			fmt.Fprintf(v.w, "recording: %s\n", f)
		}
	}
	fmt.Fprintln(v.w, safety.Short)
}
