package review

import (
	"os"
	"path/filepath"
	"testing"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/sim"
	"forereach/zones"
)

// exampleCell loads the example cell pl3-palletiser.
func exampleCell(t testing.TB) *zones.Config {
	t.Helper()
	cfg, err := zones.Load(filepath.Join("..", "testdata", "pl3-palletiser.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	return cfg
}

// loadScenario reads a scenario of testdata/review in the cell.
func loadScenario(t testing.TB, name string, cfg *zones.Config) *sim.Scenario {
	t.Helper()
	path := filepath.Join("..", "testdata", "review", name)
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := sim.Load(f, path, cfg)
	if err != nil {
		t.Fatal(err)
	}
	return sc
}

// writeRecording runs the scenario and writes its measurements as a JSONL
// recording in a temporary directory. With advisories, an engine of cfg
// (forecasting with model) runs on the samples as the live service would
// and its advisories are recorded after the sample that caused them, as
// the live service records them.
func writeRecording(t testing.TB, sc *sim.Scenario, seed uint64, cfg *zones.Config, model forecast.Model, advisories bool) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "planted.jsonl")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rec, err := bus.NewRecorder(f, bus.Header{Cell: cfg.Cell, Source: "sim"})
	if err != nil {
		t.Fatal(err)
	}
	var eng *policy.Engine
	if advisories {
		zs, err := cfg.BuildZones()
		if err != nil {
			t.Fatal(err)
		}
		if eng, err = policy.NewEngine(cfg, zs, model, policy.Options{}); err != nil {
			t.Fatal(err)
		}
	}
	run := sc.Run(seed)
	var evs []policy.Event
	for {
		m, ok := run.Next()
		if !ok {
			break
		}
		s := forecast.Sample{Track: m.Track, T: m.T, P: m.P}
		if err := rec.Sample(&bus.SampleRecord{Sample: s}); err != nil {
			t.Fatal(err)
		}
		if eng == nil {
			continue
		}
		eng.Sample(s)
		evs = eng.Events(evs[:0])
		for i := range evs {
			if evs[i].Kind != policy.EventAdvisory {
				continue
			}
			a := policy.Advisory{T: evs[i].T, Seq: evs[i].Seq, Level: evs[i].Level, Scale: evs[i].Scale,
				Reasons: evs[i].Reasons, Horizon: eng.Advisory().Horizon}
			ba := bus.FromPolicy(cfg.Cell, &a)
			if err := rec.Advisory(&ba); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := rec.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// replayFile reviews one JSONL recording.
func replayFile(t testing.TB, rv *Reviewer, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := rv.Replay(filepath.Base(path), Records(bus.NewRecordReader(f, path))); err != nil {
		t.Fatal(err)
	}
}
