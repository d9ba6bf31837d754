package review

import (
	"io"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"forereach/bus"
	"forereach/forecast"
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
// kalman-cv forecast); BenchmarkReviewHourCV with the constant-velocity
// forecast, to show the forecaster's share; BenchmarkMarginsHour sweeps
// the margins over it.

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
