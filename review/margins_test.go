package review

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"forereach/bus"
	"forereach/forecast"
	"forereach/sim"
	"forereach/zones"
)

// sweepCell is the example cell with the single advisory rule the margin
// sweep models: reduce when the forecast path (radius and margin included)
// touches the zone within the horizon the cell needs, H = stopping time +
// system latency = 0.3 s + 60 ms; the forecast spans exactly H with no
// latency lead. The robot's speed is cleared so that the protective
// separation rule (a hold the sweep does not model) stays out. The model is
// the constant-velocity extrapolation (radius 0): with the cell's
// kalman-cv, whose 95 % radius at 0.66 s is about 2.7 m for a hand at rest,
// every hand within two metres of a zone warns at every margin and the
// sweep would not tell margins apart.
func sweepCell(t testing.TB) *zones.Config {
	cfg := exampleCell(t)
	cfg.Forecast.Model = forecast.KindCV
	h := cfg.Robot.StoppingTime + cfg.Robot.SystemLatency
	if h != zones.Duration(360e6) {
		t.Fatalf("example cell changed: horizon %v", h)
	}
	cfg.Policy.Rules = []zones.RuleConfig{{Name: "warn", Level: "reduce", Scale: 0.5, EntryWithin: h}}
	for i := range cfg.Zones {
		cfg.Zones[i].Rules = nil
	}
	cfg.Forecast.Horizon = h
	cfg.Forecast.Latency = 0
	cfg.Robot.Speed = 0
	return cfg
}

func sweepRecordings(t testing.TB, cfg *zones.Config, model forecast.Model) []string {
	var paths []string
	paths = append(paths, writeRecording(t, loadScenario(t, "planted.yaml", cfg), 7, cfg, model, false))
	// The demo scenario of the example cell: reaches into the infeed
	// pick and a near pass along the envelope, with 2 mm sensor noise.
	f, err := os.Open(filepath.Join("..", "testdata", "scenarios", "demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := sim.Load(f, "demo.yaml", cfg)
	if err != nil {
		t.Fatal(err)
	}
	paths = append(paths, writeRecording(t, sc, 3, cfg, model, false))
	return paths
}

// TestSweepMatchesEngineReplays checks the one-pass sweep against the
// definition it implements: replaying the recordings through the advisory
// engine with every zone's margin set to m gives, per zone, the entries
// whose lead (engine's own) is at least H, the warning episodes and the
// false alarms; the sweep's row for margin m must give the same counts.
func TestSweepMatchesEngineReplays(t *testing.T) {
	cfg := sweepCell(t)
	model, err := NewModel(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	paths := sweepRecordings(t, cfg, model)
	mg, err := NewMargins(cfg, model, MarginOptions{MaxMargin: 0.3, Step: 0.05})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range paths {
		addFile(t, mg, p)
	}
	sweep := mg.Result()
	h := sweep.Horizon
	entries := 0
	for _, z := range sweep.Zones {
		entries += z.Entries
	}
	if entries < 5 {
		t.Fatalf("only %d entries in the test recordings", entries)
	}
	for _, margin := range []float64{0, 0.05, 0.15, 0.3} {
		c := *cfg
		c.Zones = append([]zones.ZoneConfig(nil), cfg.Zones...)
		for i := range c.Zones {
			c.Zones[i].Margin = zones.Length(margin)
		}
		rv, err := New(&c, model, Options{Windows: -1})
		if err != nil {
			t.Fatal(err)
		}
		for _, p := range paths {
			replayFile(t, rv, p)
		}
		res := rv.Result()
		for zi, z := range sweep.Zones {
			var row *struct{ det, ent, fa, warn int }
			for _, sp := range z.Sweep {
				if math.Abs(sp.Margin-margin) < 1e-12 {
					row = &struct{ det, ent, fa, warn int }{sp.Detected, sp.Entries, sp.FalseAlarms, sp.Warnings}
				}
			}
			if row == nil {
				t.Fatalf("zone %s: no sweep row at %g m", z.Name, margin)
			}
			det, ent := 0, 0
			for _, e := range res.Entries {
				if e.Zone != z.Name {
					continue
				}
				ent++
				// An entry at the first sample after a tracking loss is
				// warned by the engine's fail-safe hold, if at all: the
				// sweep sizes forecast warnings only and counts it missed.
				if e.Lead != nil && !e.Missed && *e.Lead >= h-1e-9 && !afterLoss(res, e) {
					det++
				}
			}
			rz := res.Zones[zi]
			if row.ent != ent || row.det != det || row.warn != rz.Warnings || row.fa != rz.FalseAlarms {
				t.Errorf("margin %.2f m, zone %s: sweep entries %d detected %d warnings %d false alarms %d; "+
					"engine replay %d, %d, %d, %d", margin, z.Name, row.ent, row.det, row.warn, row.fa,
					ent, det, rz.Warnings, rz.FalseAlarms)
			}
		}
	}
}

// TestSweepMonotone checks on a real sweep of the example cell (its own
// rules, the constant-velocity forecast) that the detection rate never decreases as the
// margin grows, and that the recommendation is the first margin reaching
// the target.
func TestSweepMonotone(t *testing.T) {
	cfg := exampleCell(t)
	cfg.Robot.Speed = 0
	cfg.Forecast.Model = forecast.KindCV // see sweepCell
	model, err := NewModel(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	mg, err := NewMargins(cfg, model, MarginOptions{Target: 0.99})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range sweepRecordings(t, cfg, model) {
		addFile(t, mg, p)
	}
	res := mg.Result()
	withEntries := 0
	for _, z := range res.Zones {
		if z.Entries == 0 {
			continue
		}
		withEntries++
		prev := -1.0
		for _, sp := range z.Sweep {
			d := sp.Detection()
			if d < prev {
				t.Errorf("zone %s: detection %.3f at %.3f m below %.3f at a smaller margin", z.Name, d, sp.Margin, prev)
			}
			prev = d
		}
		if z.From == "sweep" {
			for _, sp := range z.Sweep {
				if sp.Margin < *z.Recommended-1e-12 && sp.Detection() >= 0.99 {
					t.Errorf("zone %s: %.3f m reaches the target before the recommended %.3f m", z.Name, sp.Margin, *z.Recommended)
				}
			}
			if z.AtRec.Detection() < 0.99 {
				t.Errorf("zone %s: recommended margin detects %.3f", z.Name, z.AtRec.Detection())
			}
		}
	}
	if withEntries == 0 {
		t.Fatal("no zone with entries")
	}
}

// TestErrHistQuantiles compares the histogram quantiles with the empirical
// quantiles of the sorted errors (gonum's definition is not needed: both
// are within one bin of each other by construction of the bins); the
// tolerance is the bin width.
func TestErrHistQuantiles(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var h errHist
	var all []float64
	for i := 0; i < 20000; i++ {
		e := math.Abs(rng.NormFloat64()) * 0.03
		if i%1000 == 0 {
			e = 2.5 // beyond the histogram: counted, only the maximum kept
		}
		h.add(e)
		all = append(all, e)
	}
	sort.Float64s(all)
	for _, q := range []float64{0.5, 0.9, 0.95, 0.99} {
		want := all[int(math.Ceil(q*float64(len(all))))-1] // empirical quantile, inverse of the CDF
		if got := h.quantile(q); math.Abs(got-want) > errBin {
			t.Errorf("q%.2f: histogram %.5f m, sorted %.5f m", q, got, want)
		}
	}
	if h.quantile(0.9999) != 2.5 || h.max != 2.5 {
		t.Errorf("beyond the bins: got %g, max %g", h.quantile(0.9999), h.max)
	}
}

func afterLoss(res *Result, e Entry) bool {
	for _, l := range res.TrackingLosses {
		if l.Recording == e.Recording && l.Track == e.Track && l.Regained != nil && *l.Regained == e.T {
			return true
		}
	}
	return false
}

func addFile(t testing.TB, m *Margins, path string) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if err := m.Add(filepath.Base(path), Records(bus.NewRecordReader(f, path))); err != nil {
		t.Fatal(err)
	}
}
