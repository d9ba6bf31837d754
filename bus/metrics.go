//go:build !promclient

package bus

import (
	"bufio"
	"math"
	"net/http"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"forereach/policy"
)

// Metrics are the live service's metrics, served in the Prometheus text
// exposition format (version 0.0.4). This implementation stands in for
// github.com/prometheus/client_golang (metrics_prom.go, build tag
// promclient) while go.sum lacks that module's dependencies; both give the
// same names and values. Names:
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
//	go_goroutines, go_memstats_heap_alloc_bytes  of the process
type Metrics struct {
	mu   sync.Mutex
	list []*family

	samples, robot, implausible, connects, recErrors *series
	rejected, advisories, trackLatency               *family
	level, scale, connected                          *series
	processing, inputLatency                         *series
}

type family struct {
	name, help, typ string
	label           string // the one label name, "" for none
	buckets         []float64
	series          map[string]*series
}

// series is one time series: a value, or a histogram.
type series struct {
	mu     *sync.Mutex
	value  float64
	counts []uint64 // per bucket (not cumulative), histograms
	sum    float64
	count  uint64
	bounds []float64
}

func (s *series) Inc() { s.Add(1) }

func (s *series) Add(v float64) {
	s.mu.Lock()
	s.value += v
	s.mu.Unlock()
}

func (s *series) Set(v float64) {
	s.mu.Lock()
	s.value = v
	s.mu.Unlock()
}

func (s *series) Observe(v float64) {
	if math.IsNaN(v) {
		return
	}
	i := sort.SearchFloat64s(s.bounds, v) // first bound >= v: le semantics
	s.mu.Lock()
	if i < len(s.counts) {
		s.counts[i]++
	}
	s.sum += v
	s.count++
	s.mu.Unlock()
}

func (m *Metrics) family(name, typ, help, label string, buckets []float64) *family {
	f := &family{name: name, help: help, typ: typ, label: label, buckets: buckets, series: map[string]*series{}}
	m.list = append(m.list, f)
	return f
}

func (f *family) with(mu *sync.Mutex, v string) *series {
	if s := f.series[v]; s != nil {
		return s
	}
	s := &series{mu: mu, bounds: f.buckets}
	if f.buckets != nil {
		s.counts = make([]uint64, len(f.buckets))
	}
	f.series[v] = s
	return s
}

// NewMetrics makes the service's metrics.
func NewMetrics() *Metrics {
	m := &Metrics{}
	one := func(name, typ, help string, buckets []float64) *series {
		return m.family(name, typ, help, "", buckets).with(&m.mu, "")
	}
	m.samples = one("forereach_samples_total", "counter", "Accepted hand samples.", nil)
	m.rejected = m.family("forereach_rejected_total", "counter", "Refused samples and messages, by reason.", "reason", nil)
	m.robot = one("forereach_robot_states_total", "counter", "Accepted robot states.", nil)
	m.advisories = m.family("forereach_advisories_total", "counter", "Advisory changes published, by new level (advisory only).", "level", nil)
	m.level = one("forereach_advisory_level", "gauge", "Current advisory level: 0 clear, 1 reduce, 2 hold (advisory only).", nil)
	m.scale = one("forereach_advisory_scale", "gauge", "Current requested speed scale (advisory only).", nil)
	m.processing = one("forereach_processing_seconds", "histogram", "Time from a message's arrival to its samples processed and any advisory published.",
		[]float64{25e-6, 50e-6, 100e-6, 200e-6, 500e-6, 1e-3, 2e-3, 5e-3, 10e-3, 20e-3, 50e-3, 0.1})
	m.inputLatency = one("forereach_input_latency_seconds", "histogram", "Arrival time minus source time of accepted samples (needs synchronised clocks).",
		[]float64{0.5e-3, 1e-3, 2e-3, 5e-3, 10e-3, 20e-3, 40e-3, 80e-3, 0.16, 0.32, 0.64, 1.28})
	m.implausible = one("forereach_input_latency_implausible_total", "counter", "Samples whose arrival minus source time was negative or above 10 s (unsynchronised or non-Unix source clock).", nil)
	m.trackLatency = m.family("forereach_track_input_latency_seconds", "gauge", "Smoothed input latency per track.", "track", nil)
	m.connected = one("forereach_broker_connected", "gauge", "1 while connected to the MQTT broker.", nil)
	m.connects = one("forereach_broker_connects_total", "counter", "Successful connections to the broker.", nil)
	m.recErrors = one("forereach_recording_errors_total", "counter", "Failed writes to the recording.", nil)
	for _, r := range Reasons {
		m.rejected.with(&m.mu, r)
	}
	for _, r := range policy.RejectReasons() {
		m.rejected.with(&m.mu, r.String())
	}
	for _, l := range []policy.Level{policy.LevelClear, policy.LevelReduce, policy.LevelHold} {
		m.advisories.with(&m.mu, l.String())
	}
	m.scale.Set(1)
	return m
}

func (m *Metrics) rejectedBy(reason string) *series {
	m.mu.Lock()
	s := m.rejected.series[reason]
	m.mu.Unlock()
	if s != nil {
		return s
	}
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.rejected.with(&m.mu, reason)
}

func (m *Metrics) advisoriesBy(level string) *series {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.advisories.with(&m.mu, level)
}

func (m *Metrics) trackLatencyOf(track string) *series {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.trackLatency.with(&m.mu, track)
}

// Handler serves the metrics in the Prometheus text format.
func (m *Metrics) Handler() http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "text/plain; version=0.0.4; charset=utf-8")
		bw := bufio.NewWriter(w)
		m.Write(bw)
		bw.Flush()
	})
}

// Write writes every metric in the text format.
func (m *Metrics) Write(w *bufio.Writer) {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	m.mu.Lock()
	defer m.mu.Unlock()
	for _, f := range m.list {
		w.WriteString("# HELP " + f.name + " " + f.help + "\n# TYPE " + f.name + " " + f.typ + "\n")
		keys := make([]string, 0, len(f.series))
		for k := range f.series {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			s := f.series[k]
			lbl := ""
			if f.label != "" {
				lbl = f.label + `="` + escapeLabel(k) + `"`
			}
			if f.buckets == nil {
				w.WriteString(f.name + braces(lbl) + " " + fmtValue(s.value) + "\n")
				continue
			}
			var cum uint64
			for i, b := range f.buckets {
				cum += s.counts[i]
				w.WriteString(f.name + "_bucket" + braces(joinLabels(lbl, `le="`+fmtValue(b)+`"`)) + " " + strconv.FormatUint(cum, 10) + "\n")
			}
			w.WriteString(f.name + "_bucket" + braces(joinLabels(lbl, `le="+Inf"`)) + " " + strconv.FormatUint(s.count, 10) + "\n")
			w.WriteString(f.name + "_sum" + braces(lbl) + " " + fmtValue(s.sum) + "\n")
			w.WriteString(f.name + "_count" + braces(lbl) + " " + strconv.FormatUint(s.count, 10) + "\n")
		}
	}
	w.WriteString("# HELP go_goroutines Number of goroutines that currently exist.\n# TYPE go_goroutines gauge\n")
	w.WriteString("go_goroutines " + strconv.Itoa(runtime.NumGoroutine()) + "\n")
	w.WriteString("# HELP go_memstats_heap_alloc_bytes Number of heap bytes allocated and still in use.\n# TYPE go_memstats_heap_alloc_bytes gauge\n")
	w.WriteString("go_memstats_heap_alloc_bytes " + strconv.FormatUint(ms.HeapAlloc, 10) + "\n")
}

func braces(l string) string {
	if l == "" {
		return ""
	}
	return "{" + l + "}"
}

func joinLabels(a, b string) string {
	if a == "" {
		return b
	}
	return a + "," + b
}

func escapeLabel(s string) string {
	return strings.NewReplacer(`\`, `\\`, "\n", `\n`, `"`, `\"`).Replace(s)
}

func fmtValue(v float64) string {
	switch {
	case math.IsInf(v, 1):
		return "+Inf"
	case math.IsInf(v, -1):
		return "-Inf"
	case math.IsNaN(v):
		return "NaN"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
