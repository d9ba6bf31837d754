package forecast

import (
	"bytes"
	"math"
	"sort"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat"
)

func TestTrackGapsRepeatsOrder(t *testing.T) {
	k := NewTrack(mustModel(t, Settings{Kind: KindCV, Window: 0.05}), 0.1)
	var p Path
	h := Horizon{Step: 0.02, Span: 0.1}
	steps := []struct {
		t    float64
		want Admit
	}{
		{0, Accepted}, {0.01, Accepted}, {0.01, Duplicate}, {0.005, OutOfOrder},
		{0.02, Accepted}, {0.5, AfterGap}, {0.51, Accepted},
	}
	for _, s := range steps {
		if got := k.Add(s.t, vec(s.t, 0, 0)); got != s.want {
			t.Fatalf("t=%g: %v, want %v", s.t, got, s.want)
		}
		if s.want == AfterGap {
			// Only one sample since the reset: a linear fit cannot predict.
			if k.F.Predict(&p, h) || p.Len() != 0 {
				t.Fatal("forecaster not reset after the gap")
			}
		}
	}
	if !k.F.Predict(&p, h) {
		t.Fatal("no prediction after two samples")
	}
	if got := k.Add(math.NaN(), r3.Vec{}); got != Invalid {
		t.Fatalf("NaN time: %v", got)
	}
	if got := k.Add(1, vec(math.Inf(1), 0, 0)); got != Invalid {
		t.Fatalf("infinite position: %v", got)
	}
}

// Scorer statistics against direct computation with gonum on known errors,
// and R² by its definition: a perfect forecast scores 1, hold about 0.
func TestScorerStats(t *testing.T) {
	s := NewScorer([]float64{0.1, 0.3})
	truths := []r3.Vec{vec(1, 0, 0), vec(0, 2, 0), vec(0, 0, 3), vec(-1, -1, 0), vec(0.5, 0.5, 0.5)}
	var errs []float64
	for i, d := range truths {
		pred := r3.Scale(0.5, d)
		s.Add(0, pred, d, 0.6+0.1*float64(i))
		errs = append(errs, r3.Norm(r3.Sub(pred, d)))
		s.Add(1, d, d, 0)
	}
	r := s.Stats("x")
	sorted := append([]float64(nil), errs...)
	sort.Float64s(sorted)
	sse, covered := 0.0, 0
	for i, e := range errs {
		sse += e * e
		if e <= 0.6+0.1*float64(i) {
			covered++
		}
	}
	// Quantiles come from errors stored in single precision.
	if r[0].Samples != 5 || math.Abs(r[0].RMSE-math.Sqrt(sse/5)) > 1e-15 ||
		math.Abs(r[0].P95-stat.Quantile(0.95, stat.Empirical, sorted, nil)) > 1e-7 || math.Abs(r[0].P50-sorted[2]) > 1e-7 ||
		math.Abs(r[0].Coverage-float64(covered)/5) > 1e-15 || r[0].HorizonMS != 100 {
		t.Fatalf("stats %+v", r[0])
	}
	// SST about the mean displacement, by hand.
	var mean r3.Vec
	for _, d := range truths {
		mean = r3.Add(mean, r3.Scale(0.2, d))
	}
	sst := 0.0
	for _, d := range truths {
		sst += r3.Norm2(r3.Sub(d, mean))
	}
	if want := 1 - sse/sst; math.Abs(r[0].R2Disp-want) > 1e-12 {
		t.Fatalf("R² %g, want %g", r[0].R2Disp, want)
	}
	if r[1].R2Disp != 1 || r[1].RMSE != 0 || r[1].Coverage != 1 {
		t.Fatalf("perfect forecast: %+v", r[1])
	}
}

func TestGainsRoundTripAndChecks(t *testing.T) {
	g, err := DefaultGains()
	if err != nil {
		t.Fatal(err)
	}
	if g.FeatureSet != FeatureSet || len(g.Horizons) != 10 || g.Fitted.SampleRateHz != 120 || len(g.Fitted.Files) != 19 {
		t.Fatalf("default gains: %+v", g.Fitted)
	}
	var buf bytes.Buffer
	if err := WriteGains(&buf, g); err != nil {
		t.Fatal(err)
	}
	g2, err := ReadGains(&buf, "rt.yaml")
	if err != nil {
		t.Fatal(err)
	}
	for i := range g.Horizons {
		for j := range g.Horizons[i].Gains {
			if g.Horizons[i].Gains[j] != g2.Horizons[i].Gains[j] {
				t.Fatal("gains do not survive a round trip exactly")
			}
		}
	}
	bad := []struct{ edit, want string }{
		{"feature_set: " + FeatureSet, "feature_set: \"old\": this forereach uses"},
		{"format: forereach-gains/1", "format: \"x\""},
		{"  - 0.95\n", "horizons[0].radius_z: 6 values, want one per level (5)"},
	}
	src := string(DefaultGainsYAML())
	for _, b := range bad {
		var mod string
		switch {
		case strings.HasPrefix(b.edit, "feature_set"):
			mod = strings.Replace(src, b.edit, "feature_set: old", 1)
		case strings.HasPrefix(b.edit, "format"):
			mod = strings.Replace(src, b.edit, "format: x", 1)
		default:
			mod = strings.Replace(src, b.edit, "", 1)
		}
		_, err := ReadGains(strings.NewReader(mod), "bad.yaml")
		if err == nil || !strings.Contains(err.Error(), b.want) || !strings.HasPrefix(err.Error(), "bad.yaml: ") {
			t.Errorf("edit %q: error %v, want it to mention %q", b.edit, err, b.want)
		}
	}
	if _, err := ReadGains(strings.NewReader(src+"extra: 1\n"), "x.yaml"); err == nil || !strings.Contains(err.Error(), "extra") {
		t.Errorf("unknown key accepted: %v", err)
	}
	// A coverage outside the recorded levels is refused by name.
	if _, err := NewModel(Settings{Kind: KindFitted, Coverage: 0.999}); err == nil || !strings.Contains(err.Error(), "coverage 0.999") {
		t.Errorf("coverage 0.999: %v", err)
	}
}

// FuzzReadGains: the gains decoder never panics, and what it accepts makes a
// working model whose forecasts are finite.
func FuzzReadGains(f *testing.F) {
	f.Add(DefaultGainsYAML())
	f.Add([]byte("format: forereach-gains/1\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		g, err := ReadGains(bytes.NewReader(b), "fuzz.yaml")
		if err != nil {
			return
		}
		m, err := NewModel(Settings{Kind: KindFitted, Gains: g, Coverage: g.Levels[len(g.Levels)/2]})
		if err != nil {
			return
		}
		fc := m.New()
		var p Path
		for i := 0; i < 100; i++ {
			ti := float64(i) / 100
			fc.Update(ti, handPath(ti))
		}
		if fc.Predict(&p, Horizon{Step: 0.05, Span: 0.5}) {
			for k := range p.T {
				if !finite(p.P[k]) || math.IsNaN(p.R[k]) || p.R[k] < 0 {
					t.Fatalf("point %d: %v r=%g", k, p.P[k], p.R[k])
				}
			}
		}
	})
}
