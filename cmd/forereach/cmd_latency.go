package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"
	"text/tabwriter"
	"time"

	"forereach/bus"
	"forereach/zones"
)

func init() {
	register(&command{
		Name:    "latency",
		Summary: "measure publish-to-advisory latency through a broker, beside a plain echo",
		Usage: `Usage: forereach latency [-c CELL.yaml] [--broker URL] [--rate N] [--duration D] [--model M]

Publishes hand samples at a fixed rate (QoS 0) to the broker and measures,
side by side in one run, two paths through the same broker:

  sample -> broker -> forereach's live service -> broker -> advisory (QoS 1)
  sample -> broker -> a plain echo client (subscribe, republish) -> broker (QoS 1)

The hand moves across the boundary of the cell's first fixed zone eight
times a second and policy.release is set to 1 ms, so that advisories change
often; a latency is counted for every advisory that a sample caused. The
service runs in this process with its recording (to a temporary file). The
first second is a warm-up and is not counted.

  -c CELL.yaml   the cell (default testdata/pl3-palletiser.yaml)
  --broker URL   broker to measure through (default: tcp:// and the
                 FOREREACH_MOSQUITTO address when set, else bus.broker)
  --rate N       samples per second (default 5000)
  --duration D   measuring time after the warm-up (default 10s)
  --model M      forecast model instead of the cell's forecast.model

Mosquitto should run with set_tcp_nodelay true: with its defaults each hop
waits for delayed acknowledgements, tens of milliseconds.

Example:
  mosquitto -c mosquitto.conf   # listener 1883 127.0.0.1, allow_anonymous true, set_tcp_nodelay true
  forereach latency --broker tcp://127.0.0.1:1883 --rate 5000 --duration 20s`,
		Run: runLatency,
	})
}

func runLatency(args []string, stdout, stderr io.Writer) int {
	c := commands["latency"]
	fl := newFlagSet(c, stderr)
	var cellPath, broker, model string
	var rate float64
	var duration time.Duration
	fl.StringVar(&cellPath, "c", demoCell, "cell configuration file (YAML)")
	fl.StringVar(&broker, "broker", "", "broker URL")
	fl.Float64Var(&rate, "rate", 5000, "samples per second")
	fl.DurationVar(&duration, "duration", 10*time.Second, "measuring time after the warm-up")
	fl.StringVar(&model, "model", "", "forecast model instead of the cell's")
	pos, err := parseArgs(fl, args)
	if err != nil {
		return 2
	}
	usageErr := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "forereach latency: "+format+"\n", a...)
		fmt.Fprintln(stderr, "run 'forereach help latency' for usage")
		return 2
	}
	switch {
	case len(pos) > 0:
		return usageErr("unexpected argument %q", pos[0])
	case !(rate > 0 && rate <= 100000):
		return usageErr("--rate must be in (0, 100000], got %g", rate)
	case duration <= 0:
		return usageErr("--duration must be positive, got %v", duration)
	}
	cfg, err := zones.Load(cellPath)
	if err != nil {
		fmt.Fprintln(stderr, err)
		return 1
	}
	if model != "" {
		cfg.Forecast.Model = model
	}
	if broker == "" {
		if a := os.Getenv("FOREREACH_MOSQUITTO"); a != "" {
			broker = "tcp://" + a
		} else {
			broker = cfg.Bus.Broker
		}
	}
	if !strings.Contains(broker, "://") {
		broker = "tcp://" + broker
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	fmt.Fprintf(stderr, "forereach latency: %g samples/s through %s for 1 s + %v ...\n", rate, broker, duration)
	res, err := bus.MeasureLatency(ctx, bus.LatencyOptions{Broker: broker, Config: cfg, Rate: rate, Duration: duration})
	if err != nil {
		fmt.Fprintf(stderr, "forereach latency: %v\n", err)
		return 1
	}
	printLatency(stdout, broker, cfg, res)
	return 0
}

func printLatency(w io.Writer, broker string, cfg *zones.Config, r *bus.LatencyResult) {
	m := cfg.Forecast.Model
	if m == "" {
		m = "kalman-cv"
	}
	fmt.Fprintf(w, "broker %s, cell %s (hand crossing %q), model %s: %d samples at %.0f samples/s; service: %d accepted, %d rejected %v, advisories %v\n",
		broker, cfg.Cell, r.Zone, m, r.Sent, r.Rate, r.Service.Samples, r.Service.RejectedTotal(), r.Service.Rejected, r.Service.Advisories)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "path\tn\tp50\tp90\tp99\tmax\tmean\t")
	row := func(name string, s bus.LatencyStats) {
		ms := func(d time.Duration) string { return fmt.Sprintf("%.2f ms", float64(d)/1e6) }
		fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t%s\t%s\t\n", name, s.N, ms(s.P50), ms(s.P90), ms(s.P99), ms(s.Max), ms(s.Mean))
	}
	row("publish -> advisory (service)", r.Advisory)
	row("publish -> echo (no processing)", r.Echo)
	tw.Flush()
	if r.EchoLost > 0 {
		fmt.Fprintf(w, "%d samples did not come back from the echo (QoS 0 in: the broker may drop under load)\n", r.EchoLost)
	}
}
