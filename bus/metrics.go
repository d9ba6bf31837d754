package bus

import (
	"bufio"
	"net/http"

	"forereach/policy"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
	"github.com/prometheus/common/expfmt"
)

// Metrics are the live service's Prometheus metrics
// (github.com/prometheus/client_golang), in a registry of their own, so
// that several services can live in one process (as in tests). Names:
//
//	forereach_samples_total                      accepted hand samples
//	forereach_rejected_total{reason}             refused samples and messages
//	forereach_robot_states_total                 accepted robot states
//	forereach_advisories_total{level}            advisory changes published, by new level
//	forereach_advisory_level                     current level (0 clear, 1 reduce, 2 hold)
//	forereach_advisory_scale                     current speed scale
//	forereach_processing_seconds                 message arrival to advisory decided and published (histogram)
//	forereach_input_latency_seconds              arrival minus source time of accepted samples (histogram)
//	forereach_input_latency_implausible_total    samples whose latency was negative or over 10 s
//	forereach_track_input_latency_seconds{track} smoothed input latency per track
//	forereach_broker_connected                   1 while connected to the broker
//	forereach_broker_connects_total              successful (re)connections
//	forereach_recording_errors_total             failed writes to the recording
//
// and the Go runtime and process collectors (go_*, process_*).
type Metrics struct {
	Registry *prometheus.Registry

	samples, robot, implausible, connects, recErrors prometheus.Counter
	rejected, advisories                             *prometheus.CounterVec
	trackLatency                                     *prometheus.GaugeVec
	level, scale, connected                          prometheus.Gauge
	processing, inputLatency                         prometheus.Histogram
}

// NewMetrics makes the service's metrics in a new registry.
func NewMetrics() *Metrics {
	counter := func(name, help string) prometheus.Counter {
		return prometheus.NewCounter(prometheus.CounterOpts{Name: name, Help: help})
	}
	gauge := func(name, help string) prometheus.Gauge {
		return prometheus.NewGauge(prometheus.GaugeOpts{Name: name, Help: help})
	}
	m := &Metrics{
		Registry:   prometheus.NewRegistry(),
		samples:    counter("forereach_samples_total", "Accepted hand samples."),
		rejected:   prometheus.NewCounterVec(prometheus.CounterOpts{Name: "forereach_rejected_total", Help: "Refused samples and messages, by reason."}, []string{"reason"}),
		robot:      counter("forereach_robot_states_total", "Accepted robot states."),
		advisories: prometheus.NewCounterVec(prometheus.CounterOpts{Name: "forereach_advisories_total", Help: "Advisory changes published, by new level (advisory only)."}, []string{"level"}),
		level:      gauge("forereach_advisory_level", "Current advisory level: 0 clear, 1 reduce, 2 hold (advisory only)."),
		scale:      gauge("forereach_advisory_scale", "Current requested speed scale (advisory only)."),
		processing: prometheus.NewHistogram(prometheus.HistogramOpts{Name: "forereach_processing_seconds",
			Help:    "Time from a message's arrival to its samples processed and any advisory published.",
			Buckets: []float64{25e-6, 50e-6, 100e-6, 200e-6, 500e-6, 1e-3, 2e-3, 5e-3, 10e-3, 20e-3, 50e-3, 0.1}}),
		inputLatency: prometheus.NewHistogram(prometheus.HistogramOpts{Name: "forereach_input_latency_seconds",
			Help:    "Arrival time minus source time of accepted samples (needs synchronised clocks).",
			Buckets: []float64{0.5e-3, 1e-3, 2e-3, 5e-3, 10e-3, 20e-3, 40e-3, 80e-3, 0.16, 0.32, 0.64, 1.28}}),
		implausible:  counter("forereach_input_latency_implausible_total", "Samples whose arrival minus source time was negative or above 10 s (unsynchronised or non-Unix source clock)."),
		trackLatency: prometheus.NewGaugeVec(prometheus.GaugeOpts{Name: "forereach_track_input_latency_seconds", Help: "Smoothed input latency per track."}, []string{"track"}),
		connected:    gauge("forereach_broker_connected", "1 while connected to the MQTT broker."),
		connects:     counter("forereach_broker_connects_total", "Successful connections to the broker."),
		recErrors:    counter("forereach_recording_errors_total", "Failed writes to the recording."),
	}
	m.Registry.MustRegister(m.samples, m.rejected, m.robot, m.advisories, m.level, m.scale, m.processing,
		m.inputLatency, m.implausible, m.trackLatency, m.connected, m.connects, m.recErrors,
		collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	for _, r := range Reasons {
		m.rejected.WithLabelValues(r)
	}
	for _, r := range policy.RejectReasons() {
		m.rejected.WithLabelValues(r.String())
	}
	for _, l := range []policy.Level{policy.LevelClear, policy.LevelReduce, policy.LevelHold} {
		m.advisories.WithLabelValues(l.String())
	}
	m.scale.Set(1)
	return m
}

func (m *Metrics) rejectedBy(reason string) prometheus.Counter {
	return m.rejected.WithLabelValues(reason)
}
func (m *Metrics) advisoriesBy(level string) prometheus.Counter {
	return m.advisories.WithLabelValues(level)
}
func (m *Metrics) trackLatencyOf(track string) prometheus.Gauge {
	return m.trackLatency.WithLabelValues(track)
}

// Handler serves the metrics in the Prometheus exposition formats.
func (m *Metrics) Handler() http.Handler {
	return promhttp.HandlerFor(m.Registry, promhttp.HandlerOpts{Registry: m.Registry})
}

// Write writes every metric in the Prometheus text format.
func (m *Metrics) Write(w *bufio.Writer) error {
	mfs, err := m.Registry.Gather()
	if err != nil {
		return err
	}
	enc := expfmt.NewEncoder(w, expfmt.NewFormat(expfmt.TypeTextPlain))
	for _, mf := range mfs {
		if err := enc.Encode(mf); err != nil {
			return err
		}
	}
	return nil
}
