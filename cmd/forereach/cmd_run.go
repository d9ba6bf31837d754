package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"os/signal"
	"strings"
	"syscall"
	"time"

	"forereach/bus"
	"forereach/safety"
	"forereach/zones"
)

func init() {
	register(&command{
		Name:    "run",
		Summary: "the live service: forecast hands from MQTT and publish advisory slow-down requests",
		Usage: `Usage: forereach run -c CELL.yaml [--broker URL | --embedded-broker HOST:PORT]
                     [--record DIR | --no-record] [--metrics HOST:PORT]
                     [--log-level LEVEL] [--log-format text|json]

Subscribes to the cell's hand samples and robot states on an MQTT broker,
forecasts each hand's path, tests it against the cell's zones and publishes
advisories: every change at QoS 1 on the advisory topic, the current one
retained on the state topic. The service's status (online/offline) is
retained on the status topic; the broker marks it offline through the last
will when the service disappears, so that a consumer can fall back to
reduced speed when forecasts stop. The connection is re-established with
back-off and the subscriptions renewed.

Every accepted sample, rejected message, robot state and advisory is
appended to a JSONL recording (rotated by size, flushed on SIGINT/SIGTERM).

  -c CELL.yaml          the cell configuration (its bus section: broker,
                        topics, TLS, credentials, recording, metrics)
  --broker URL          broker to use instead of bus.broker (tcp://, ssl://)
  --embedded-broker A   start an MQTT broker inside the process on A
                        (loopback only, e.g. 127.0.0.1:1883) and use it
  --record DIR          write the recording in DIR (default bus.recording.dir)
  --no-record           do not record
  --metrics A           serve /metrics and /healthz on A (default bus.metrics)
  --log-level L         debug, info, warn or error (default info)
  --log-format F        text or json (default text), on standard error

Default topics (bus.topics, {cell} is the cell name):
  forereach/{cell}/hands/#         hand samples in (JSON, single or batch)
  forereach/{cell}/robot           robot state in
  forereach/{cell}/advisory/event  advisory changes out (QoS 1)
  forereach/{cell}/advisory/state  current advisory out (retained)
  forereach/{cell}/status          service status out (retained, last will)

Plaintext MQTT to a broker that is not on this machine is refused unless
bus.allow_plaintext is set. Brokers should switch Nagle's algorithm off for
client sockets (Mosquitto: set_tcp_nodelay true), or each hop costs tens of
milliseconds.

Example:
  forereach run -c testdata/pl3-palletiser.yaml --embedded-broker 127.0.0.1:1883`,
		Live: true,
		Run:  runRun,
	})
}

// newLogger makes the structured logger of a live command.
func newLogger(level, format string, w io.Writer) (*slog.Logger, error) {
	var l slog.Level
	if err := l.UnmarshalText([]byte(level)); err != nil {
		return nil, fmt.Errorf("--log-level: %q: want debug, info, warn or error", level)
	}
	o := &slog.HandlerOptions{Level: l}
	switch format {
	case "text":
		return slog.New(slog.NewTextHandler(w, o)), nil
	case "json":
		return slog.New(slog.NewJSONHandler(w, o)), nil
	}
	return nil, fmt.Errorf("--log-format: %q: want text or json", format)
}

// live is a running service with what surrounds it: an embedded broker,
// the recording, the metrics server.
type live struct {
	cfg     *zones.Config
	svc     *bus.Service
	rec     *bus.Recorder
	broker  *bus.Broker
	ops     *http.Server
	opsAddr string
	log     *slog.Logger
}

type liveOptions struct {
	brokerURL  string // overrides bus.broker
	embedded   string // start an embedded broker here
	recordDir  string // "" : none
	metrics    string // "" : none
	source     string // header "source" of the recording
	onAdvisory func(*bus.Advisory)
}

// startLive builds the engine and the service, starts the embedded broker,
// the recording and the metrics server. Run the service with l.svc.Run.
func startLive(cfg *zones.Config, o liveOptions, log *slog.Logger) (*live, error) {
	l := &live{cfg: cfg, log: log}
	eng, err := bus.NewEngine(cfg)
	if err != nil {
		return nil, err
	}
	brokerURL := o.brokerURL
	if o.embedded != "" {
		b, err := bus.StartBroker(o.embedded, log)
		if err != nil {
			return nil, err
		}
		l.broker = b
		brokerURL = b.URL()
		log.Info("embedded broker listening", "addr", b.Addr())
	}
	src := o.source
	if src == "" {
		src = brokerURL
		if src == "" {
			src = cfg.Bus.Broker
		}
	}
	if o.recordDir != "" {
		l.rec, err = bus.CreateRecording(o.recordDir, bus.Header{Cell: cfg.Cell, ConfigDigest: cfg.Digest,
			Version: version, Start: time.Now(), Source: src}, cfg.Bus.Recording.MaxBytes)
		if err != nil {
			l.close()
			return nil, err
		}
	}
	metrics := bus.NewMetrics()
	l.svc, err = bus.NewService(bus.ServiceOptions{Config: cfg, Engine: eng, Version: version, Broker: brokerURL,
		Recorder: l.rec, Metrics: metrics, Logger: log, OnAdvisory: o.onAdvisory})
	if err != nil {
		l.close()
		return nil, err
	}
	if o.metrics != "" {
		ln, err := net.Listen("tcp", o.metrics)
		if err != nil {
			l.close()
			return nil, fmt.Errorf("metrics: %w", err)
		}
		l.opsAddr = ln.Addr().String()
		l.ops = &http.Server{Handler: l.svc.OpsHandler(), ReadHeaderTimeout: 5 * time.Second}
		go func() {
			if err := l.ops.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
				log.Error("metrics server", "err", err)
			}
		}()
		log.Info("serving /metrics and /healthz", "addr", l.opsAddr)
	}
	return l, nil
}

// close stops the metrics server and the broker and closes the recording.
func (l *live) close() error {
	if l.ops != nil {
		ctx, cancel := context.WithTimeout(context.Background(), time.Second)
		l.ops.Shutdown(ctx)
		cancel()
	}
	var err error
	if l.rec != nil {
		err = l.rec.Close()
		if files := l.rec.Files(); len(files) > 0 {
			l.log.Info("recording written", "files", strings.Join(files, " "))
		}
	}
	if l.broker != nil {
		l.broker.Close()
	}
	return err
}

func runRun(args []string, stdout, stderr io.Writer) int {
	c := commands["run"]
	fs := newFlagSet(c, stderr)
	var cellPath, broker, embedded, record, metrics, logLevel, logFormat string
	var noRecord bool
	fs.StringVar(&cellPath, "c", "", "cell configuration file (YAML)")
	fs.StringVar(&broker, "broker", "", "broker URL, instead of bus.broker")
	fs.StringVar(&embedded, "embedded-broker", "", "start an embedded broker on HOST:PORT (loopback) and use it")
	fs.StringVar(&record, "record", "", "recording directory, instead of bus.recording.dir")
	fs.BoolVar(&noRecord, "no-record", false, "do not record")
	fs.StringVar(&metrics, "metrics", "", "listen address of /metrics and /healthz, instead of bus.metrics")
	fs.StringVar(&logLevel, "log-level", "info", "debug, info, warn or error")
	fs.StringVar(&logFormat, "log-format", "text", "text or json")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return 2
	}
	usageErr := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach run: "+format+"\n", a...)
		fmt.Fprintln(stderr, "run 'forereach help run' for usage")
		return 2
	}
	switch {
	case len(pos) > 0:
		return usageErr("unexpected argument %q", pos[0])
	case cellPath == "":
		return usageErr("-c CELL.yaml is required")
	case broker != "" && embedded != "":
		return usageErr("give --broker or --embedded-broker, not both")
	case noRecord && record != "":
		return usageErr("give --record or --no-record, not both")
	}
	log, err := newLogger(logLevel, logFormat, stderr)
	if err != nil {
		return usageErr("%v", err)
	}
	cfg, err := zones.Load(cellPath)
	if err != nil {
		fmt.Fprintln(stderr, err)
		return 1
	}
	if record == "" && !noRecord {
		record = cfg.Bus.Recording.Dir
	}
	if noRecord {
		record = ""
	}
	if metrics == "" {
		metrics = cfg.Bus.Metrics
	}
	log.Warn(safety.Short)
	l, err := startLive(cfg, liveOptions{brokerURL: broker, embedded: embedded, recordDir: record, metrics: metrics}, log)
	if err != nil {
		fmt.Fprintf(stderr, "forereach run: %v\n", err)
		return 1
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	runErr := l.svc.Run(ctx)
	closeErr := l.close()
	if runErr != nil || closeErr != nil {
		fmt.Fprintf(stderr, "forereach run: %v\n", errors.Join(runErr, closeErr))
		return 1
	}
	return 0
}
