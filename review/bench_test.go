package review

import (
	"io"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"

	"gonum.org/v1/gonum/spatial/r3"
)

// The review benchmarks run on one hour of a 240 Hz tracker following both
// hands of an operator at the infeed of the example cell
// (testdata/review/bench-hour.yaml: about 1.7 million samples, 270 MB of
// JSONL), generated once per test binary into a temporary directory:
//
//	go test ./review -run '^$' -bench Hour -benchtime 1x
//
// BenchmarkDecodeHour only decodes the file (bus.OpenSamples and Next);
// BenchmarkReviewHour reviews it with the example cell as configured (its
// fitted forecast); BenchmarkReviewHourCV with the constant-velocity
// forecast, to show the forecaster's share; BenchmarkMarginsHour sweeps
// the margins over it. The goal is a review at most twice as long as the
// decoding alone. The review's source (Records) reads ahead on a goroutine
// of its own, so that with two processors or more decoding and the engine
// share the time; -cpu 1 times a review on one processor:
//
//	go test ./review -run '^$' -bench 'DecodeHour|ReviewHour$' -benchtime 1x -cpu 1,2
//
// The engine's share, without the decoder (samples decoded beforehand):
//
//	go test ./review -run '^$' -bench 'EngineHour|ForecastHour|EngineOnly' -benchtime 1x
//
// BenchmarkEngineHour is the advisory engine per forecast model, the
// forecaster included; BenchmarkForecastHour the forecaster alone on the
// same samples; BenchmarkEngineOnly the engine with the fitted forecasts
// computed beforehand, i.e. its own work per sample (sweeps, rules,
// bookkeeping). ns/sample is the time per sample.

var benchHour struct {
	once sync.Once
	dir  string
	path string
	n    int
	err  error
}

func TestMain(m *testing.M) {
	code := m.Run()
	if benchHour.dir != "" {
		os.RemoveAll(benchHour.dir)
	}
	os.Exit(code)
}

func hourRecording(b *testing.B) (string, int) {
	benchHour.once.Do(func() {
		cfg := exampleCell(b)
		sc := loadScenario(b, "bench-hour.yaml", cfg)
		dir, err := os.MkdirTemp("", "forereach-bench-review-")
		if err != nil {
			benchHour.err = err
			return
		}
		benchHour.dir = dir
		benchHour.path = filepath.Join(dir, "hour.jsonl")
		f, err := os.Create(benchHour.path)
		if err != nil {
			benchHour.err = err
			return
		}
		defer f.Close()
		rec, err := bus.NewRecorder(f, bus.Header{Cell: cfg.Cell, Source: "sim"})
		if err != nil {
			benchHour.err = err
			return
		}
		run := sc.Run(sc.Seed)
		for m, ok := run.Next(); ok; m, ok = run.Next() {
			if err := rec.Sample(&bus.SampleRecord{Sample: forecast.Sample{Track: m.Track, T: m.T, P: m.P}, Arrival: m.Arrival}); err != nil {
				benchHour.err = err
				return
			}
			benchHour.n++
		}
		benchHour.err = rec.Close()
	})
	if benchHour.err != nil {
		b.Fatal(benchHour.err)
	}
	return benchHour.path, benchHour.n
}

func reportRate(b *testing.B, n int) {
	b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "samples/s")
}

func BenchmarkDecodeHour(b *testing.B) {
	path, n := hourRecording(b)
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		sf, err := bus.OpenSamples(path, bus.OpenOptions{})
		if err != nil {
			b.Fatal(err)
		}
		got := 0
		for {
			_, err := sf.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				b.Fatal(err)
			}
			got++
		}
		sf.Close()
		if got != n {
			b.Fatalf("decoded %d samples, want %d", got, n)
		}
	}
	b.StopTimer()
	reportRate(b, n)
}

func benchReview(b *testing.B, model string) {
	path, n := hourRecording(b)
	cfg := exampleCell(b)
	if model != "" {
		cfg.Forecast.Model = model
	}
	m, err := NewModel(cfg, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rv, err := New(cfg, m, Options{})
		if err != nil {
			b.Fatal(err)
		}
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		if err := rv.Replay("hour", Records(bus.NewRecordReader(f, path))); err != nil {
			b.Fatal(err)
		}
		f.Close()
		if res := rv.Result(); res.Totals.Samples != uint64(n) {
			b.Fatalf("reviewed %d samples, want %d", res.Totals.Samples, n)
		}
	}
	b.StopTimer()
	reportRate(b, n)
}

func BenchmarkReviewHour(b *testing.B)   { benchReview(b, "") }
func BenchmarkReviewHourCV(b *testing.B) { benchReview(b, forecast.KindCV) }

// BenchmarkMarginsHour sweeps 101 margins (0 to 500 mm) over the hour with
// the constant-velocity forecast.
func BenchmarkMarginsHour(b *testing.B) {
	path, n := hourRecording(b)
	cfg := exampleCell(b)
	cfg.Forecast.Model = forecast.KindCV
	m, err := NewModel(cfg, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		mg, err := NewMargins(cfg, m, MarginOptions{})
		if err != nil {
			b.Fatal(err)
		}
		f, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		if err := mg.Add("hour", Records(bus.NewRecordReader(f, path))); err != nil {
			b.Fatal(err)
		}
		f.Close()
		if res := mg.Result(); res.Samples != uint64(n) {
			b.Fatalf("swept %d samples, want %d", res.Samples, n)
		}
	}
	b.StopTimer()
	reportRate(b, n)
}

var benchSamples struct {
	once sync.Once
	s    []forecast.Sample
	err  error
}

// hourSamples decodes the hour recording into memory once (about 80 MB),
// so that the engine and the forecaster can be timed without the decoder.
func hourSamples(b *testing.B) []forecast.Sample {
	path, n := hourRecording(b)
	benchSamples.once.Do(func() {
		sf, err := bus.OpenSamples(path, bus.OpenOptions{})
		if err != nil {
			benchSamples.err = err
			return
		}
		defer sf.Close()
		out := make([]forecast.Sample, 0, n)
		ids := map[string]string{}
		for {
			s, err := sf.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				benchSamples.err = err
				return
			}
			if id, ok := ids[s.Track]; ok {
				s.Track = id
			} else {
				ids[s.Track] = s.Track
			}
			out = append(out, s)
		}
		benchSamples.s = out
	})
	if benchSamples.err != nil {
		b.Fatal(benchSamples.err)
	}
	return benchSamples.s
}

// BenchmarkEngineHour feeds the hour's samples, decoded beforehand, to the
// advisory engine of the example cell (events drained after every sample),
// per forecast model: the engine's cost per sample including the
// forecaster. BenchmarkForecastHour is the forecaster's share alone
// (forecast.Track.Add and Predict on the same samples); the difference is
// the engine's own work (sweep, rules, bookkeeping).
func BenchmarkEngineHour(b *testing.B) {
	for _, model := range []string{forecast.KindFitted, forecast.KindCV} {
		b.Run(model, func(b *testing.B) {
			samples := hourSamples(b)
			cfg := exampleCell(b)
			cfg.Forecast.Model = model
			m, err := NewModel(cfg, nil)
			if err != nil {
				b.Fatal(err)
			}
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				zs, err := cfg.BuildZones()
				if err != nil {
					b.Fatal(err)
				}
				e, err := policy.NewEngine(cfg, zs, m, policy.Options{})
				if err != nil {
					b.Fatal(err)
				}
				var evs []policy.Event
				for _, s := range samples {
					e.Sample(s)
					evs = e.Events(evs[:0])
				}
				if st := e.Stats(); st.Samples != uint64(len(samples)) {
					b.Fatalf("engine saw %d samples, want %d", st.Samples, len(samples))
				}
			}
			b.StopTimer()
			reportRate(b, len(samples))
			b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(b.N)/float64(len(samples)), "ns/sample")
		})
	}
}

func BenchmarkForecastHour(b *testing.B) {
	for _, model := range []string{forecast.KindFitted, forecast.KindCV} {
		b.Run(model, func(b *testing.B) {
			samples := hourSamples(b)
			cfg := exampleCell(b)
			cfg.Forecast.Model = model
			m, err := NewModel(cfg, nil)
			if err != nil {
				b.Fatal(err)
			}
			h := forecast.Horizon{Step: cfg.Forecast.Step.Seconds(), Span: cfg.Forecast.Horizon.Seconds(), Lead: cfg.Forecast.Latency.Seconds()}
			b.ReportAllocs()
			b.ResetTimer()
			predicted := 0
			for i := 0; i < b.N; i++ {
				tracks := map[string]*forecast.Track{}
				var path forecast.Path
				predicted = 0
				for _, s := range samples {
					tr := tracks[s.Track]
					if tr == nil {
						tr = forecast.NewTrack(m, cfg.Forecast.GapReset.Seconds())
						tracks[s.Track] = tr
					}
					tr.Add(s.T, s.P)
					if tr.F.Predict(&path, h) {
						predicted++
					}
				}
			}
			b.StopTimer()
			if predicted < len(samples)/2 {
				b.Fatalf("%d of %d samples predicted", predicted, len(samples))
			}
			reportRate(b, len(samples))
			b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(b.N)/float64(len(samples)), "ns/sample")
		})
	}
}

// replayModel hands out forecasts computed beforehand: the i-th forecaster
// it makes replays, one per Update, the paths of the i-th track to appear.
// With it the engine's own work per sample can be timed without the
// forecaster's.
type replayModel struct {
	paths [][]forecast.Path // per track, per sample
	made  int
}

func (m *replayModel) Name() string { return "replay" }
func (m *replayModel) New() forecast.Forecaster {
	f := &replayForecaster{paths: m.paths[m.made%len(m.paths)]}
	m.made++
	return f
}

type replayForecaster struct {
	paths []forecast.Path
	next  int
}

func (f *replayForecaster) Update(float64, r3.Vec) { f.next++ }
func (f *replayForecaster) Reset()                 {}
func (f *replayForecaster) Predict(dst *forecast.Path, _ forecast.Horizon) bool {
	p := &f.paths[f.next-1]
	if p.Len() == 0 {
		dst.Resize(0)
		return false
	}
	dst.Resize(p.Len())
	copy(dst.T, p.T)
	copy(dst.P, p.P)
	copy(dst.R, p.R)
	return true
}

// BenchmarkEngineOnly feeds the first 100 000 samples of the hour (about
// 3.5 minutes of both hands) to the engine of the example cell with the
// forecasts of its fitted model computed beforehand and replayed: the
// engine's own work per sample (sweeps, rules, bookkeeping), which the
// forecaster's cost would otherwise hide.
func BenchmarkEngineOnly(b *testing.B) {
	samples := hourSamples(b)[:100000]
	cfg := exampleCell(b)
	fm, err := NewModel(cfg, nil)
	if err != nil {
		b.Fatal(err)
	}
	// The forecasts the engine would make: per track, in sample order, with
	// the engine's horizon and gap reset.
	h := forecast.Horizon{Step: cfg.Forecast.Step.Seconds(), Span: cfg.Forecast.Horizon.Seconds(), Lead: cfg.Forecast.Latency.Seconds()}
	m := &replayModel{}
	index := map[string]int{}
	tracks := []*forecast.Track{}
	for _, s := range samples {
		i, ok := index[s.Track]
		if !ok {
			i = len(tracks)
			index[s.Track] = i
			tracks = append(tracks, forecast.NewTrack(fm, cfg.Forecast.GapReset.Seconds()))
			m.paths = append(m.paths, nil)
		}
		tracks[i].Add(s.T, s.P)
		var p forecast.Path
		tracks[i].F.Predict(&p, h)
		m.paths[i] = append(m.paths[i], p)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		zs, err := cfg.BuildZones()
		if err != nil {
			b.Fatal(err)
		}
		m.made = 0
		e, err := policy.NewEngine(cfg, zs, m, policy.Options{})
		if err != nil {
			b.Fatal(err)
		}
		var evs []policy.Event
		for _, s := range samples {
			e.Sample(s)
			evs = e.Events(evs[:0])
		}
		if st := e.Stats(); st.Accepted != uint64(len(samples)) {
			b.Fatalf("engine accepted %d samples, want %d", st.Accepted, len(samples))
		}
	}
	b.StopTimer()
	b.ReportMetric(b.Elapsed().Seconds()*1e9/float64(b.N)/float64(len(samples)), "ns/sample")
}
