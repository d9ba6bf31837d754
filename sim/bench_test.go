package sim

import (
	"io"
	"testing"
)

// BenchmarkRecordCSV measures simulated samples per second when writing a
// CSV recording: the demo scenario (4 hands, 100 Hz, 10 s) with every
// sensor effect on, streamed in arrival order into a CSVWriter on
// io.Discard.
func BenchmarkRecordCSV(b *testing.B) {
	sc := loadFile(b, "demo.yaml")
	sc.Sensor.DropFraction, sc.Sensor.DropGap = 0.02, 0.05
	sc.Sensor.OutlierRate, sc.Sensor.OutlierSize = 0.001, 0.3
	b.ReportAllocs()
	samples := 0
	for i := 0; b.Loop(); i++ {
		r := sc.RunN(1, i)
		w := NewCSVWriter(io.Discard)
		for {
			m, ok := r.Next()
			if !ok {
				break
			}
			if err := w.Write(&m); err != nil {
				b.Fatal(err)
			}
			samples++
		}
		if err := w.Flush(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(samples)/b.Elapsed().Seconds(), "samples/s")
}

// BenchmarkNext measures the simulator alone: samples per second from
// Next, without writing.
func BenchmarkNext(b *testing.B) {
	sc := loadFile(b, "demo.yaml")
	b.ReportAllocs()
	samples := 0
	for i := 0; b.Loop(); i++ {
		r := sc.RunN(1, i)
		for {
			if _, ok := r.Next(); !ok {
				break
			}
			samples++
		}
	}
	b.ReportMetric(float64(samples)/b.Elapsed().Seconds(), "samples/s")
}

// Next and CSVWriter.Write allocate nothing once the run is under way.
func TestNextAllocatesNothing(t *testing.T) {
	sc := loadFile(t, "demo.yaml")
	sc.Sensor.DropFraction, sc.Sensor.DropGap = 0.02, 0.05
	r := sc.Run(1)
	w := NewCSVWriter(io.Discard)
	for range 200 { // warm up: the pending heap and the line buffer grow
		m, _ := r.Next()
		w.Write(&m)
	}
	allocs := testing.AllocsPerRun(1000, func() {
		m, ok := r.Next()
		if !ok {
			t.Fatal("run ended during the measurement")
		}
		if err := w.Write(&m); err != nil {
			t.Fatal(err)
		}
	})
	if allocs != 0 {
		t.Errorf("%g allocations per sample, want 0", allocs)
	}
}
