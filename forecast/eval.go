package forecast

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat"
)

// TrackData is the whole recorded path of one track, in file order.
type TrackData struct {
	Name string
	T    []float64
	P    []r3.Vec
}

// ReadTracks drains r and groups its samples by track, keeping each
// track's samples in file order. Row errors are collected and reading goes
// on; a fatal error stops it and is returned with what was read so far.
func ReadTracks(r SampleReader) (tracks []TrackData, rowErrs []*RowError, err error) {
	idx := map[string]int{}
	for {
		s, err := r.Next()
		if err == io.EOF {
			return tracks, rowErrs, nil
		}
		var re *RowError
		if errors.As(err, &re) {
			rowErrs = append(rowErrs, re)
			continue
		}
		if err != nil {
			return tracks, rowErrs, err
		}
		i, ok := idx[s.Track]
		if !ok {
			i = len(tracks)
			idx[s.Track] = i
			tracks = append(tracks, TrackData{Name: s.Track})
		}
		tracks[i].T = append(tracks[i].T, s.T)
		tracks[i].P = append(tracks[i].P, s.P)
	}
}

// ErrorStats are the errors of one model at one horizon. Distances are in
// metres.
type ErrorStats struct {
	Model     string  `json:"model"`
	HorizonMS float64 `json:"horizon_ms"`
	Samples   int     `json:"samples"`
	RMSE      float64 `json:"rmse_m"`
	Mean      float64 `json:"mean_m"`
	P50       float64 `json:"p50_m"`
	P90       float64 `json:"p90_m"`
	P95       float64 `json:"p95_m"`
	P99       float64 `json:"p99_m"`
	// R2Disp is 1 − SSE/SST of the predicted displacement from the last
	// sample, SST being the spread of the true displacement about its mean
	// (hold, which predicts no displacement, scores about 0).
	R2Disp float64 `json:"r2_disp"`
	// Coverage is the share of errors no larger than the uncertainty radius.
	Coverage float64 `json:"coverage"`
}

// Scorer accumulates forecast errors per horizon.
type Scorer struct {
	Horizons []float64 // seconds
	acc      []horizonAcc
}

type horizonAcc struct {
	errs    []float32 // for quantiles; float32 halves the memory of long runs
	sum     float64
	sse     float64
	sumD    r3.Vec
	sumD2   float64
	covered int
}

// NewScorer returns a scorer for the given horizons (seconds).
func NewScorer(horizons []float64) *Scorer {
	return &Scorer{Horizons: append([]float64(nil), horizons...), acc: make([]horizonAcc, len(horizons))}
}

// Add records one forecast at horizon index k: the predicted and the true
// displacement from the last sample, and the uncertainty radius.
func (s *Scorer) Add(k int, pred, truth r3.Vec, radius float64) {
	a := &s.acc[k]
	e := r3.Norm(r3.Sub(pred, truth))
	a.errs = append(a.errs, float32(e))
	a.sum += e
	a.sse += e * e
	a.sumD = r3.Add(a.sumD, truth)
	a.sumD2 += r3.Norm2(truth)
	if e <= radius {
		a.covered++
	}
}

// Merge adds the records of o (same horizons) to s.
func (s *Scorer) Merge(o *Scorer) {
	for k := range s.acc {
		a, b := &s.acc[k], &o.acc[k]
		a.errs = append(a.errs, b.errs...)
		a.sum += b.sum
		a.sse += b.sse
		a.sumD = r3.Add(a.sumD, b.sumD)
		a.sumD2 += b.sumD2
		a.covered += b.covered
	}
}

// Errors returns the recorded 3D errors at horizon index k, in the order
// they were added (stored in single precision).
func (s *Scorer) Errors(k int) []float64 {
	out := make([]float64, len(s.acc[k].errs))
	for i, e := range s.acc[k].errs {
		out[i] = float64(e)
	}
	return out
}

// Stats returns one row per horizon.
func (s *Scorer) Stats(model string) []ErrorStats {
	rows := make([]ErrorStats, len(s.Horizons))
	for k, h := range s.Horizons {
		a := &s.acc[k]
		r := ErrorStats{Model: model, HorizonMS: math.Round(h*1e6) / 1e3, Samples: len(a.errs)}
		if n := float64(len(a.errs)); n > 0 {
			sorted := s.Errors(k)
			sort.Float64s(sorted)
			r.RMSE = math.Sqrt(a.sse / n)
			r.Mean = a.sum / n
			r.P50 = stat.Quantile(0.50, stat.Empirical, sorted, nil)
			r.P90 = stat.Quantile(0.90, stat.Empirical, sorted, nil)
			r.P95 = stat.Quantile(0.95, stat.Empirical, sorted, nil)
			r.P99 = stat.Quantile(0.99, stat.Empirical, sorted, nil)
			sst := a.sumD2 - r3.Norm2(a.sumD)/n
			if sst > 0 {
				r.R2Disp = 1 - a.sse/sst
			}
			r.Coverage = float64(a.covered) / n
		}
		rows[k] = r
	}
	return rows
}

// EvalOptions say how forecasts are scored.
type EvalOptions struct {
	// GapReset: a gap longer than this (seconds) resets the track, and no
	// forecast is scored across it. <= 0: DefaultGapReset.
	GapReset float64
	// Warmup: forecasts are scored only once the track has run this long
	// (seconds) since its start or last reset, so that every model is scored
	// on the same samples. <= 0: DefaultWarmup.
	Warmup float64
	// Lead is the input latency compensated (seconds, >= 0): a forecast at
	// horizon h made at a sample's time t is scored against the recorded
	// position at t + Lead + h (see Horizon.Lead).
	Lead float64
}

// DefaultWarmup is long enough for every model's estimation window.
const DefaultWarmup = 0.5

// stepFor returns the largest step (seconds, a whole number of
// milliseconds when possible) dividing every horizon.
func stepFor(horizons []float64) float64 {
	g := 0
	for _, h := range horizons {
		ms := int(math.Round(h * 1000))
		if math.Abs(float64(ms)-h*1000) > 1e-6 || ms <= 0 {
			return 0
		}
		a, b := g, ms
		for b != 0 {
			a, b = b, a%b
		}
		g = a
	}
	return float64(g) / 1000
}

// truthAt interpolates a track linearly at time t, using only the samples
// of segment seg; ok is false when t is not inside it.
type truthCursor struct {
	j int
}

func (c *truthCursor) at(tr *TrackData, seg []int, s int, t float64) (r3.Vec, bool) {
	T := tr.T
	for c.j+1 < len(T) && T[c.j+1] < t {
		c.j++
	}
	j := c.j
	if j+1 >= len(T) || seg[j+1] != s || seg[j] != s || T[j] > t {
		return r3.Vec{}, false
	}
	dt := T[j+1] - T[j]
	if dt <= 0 {
		return tr.P[j+1], true
	}
	w := (t - T[j]) / dt
	return r3.Add(tr.P[j], r3.Scale(w, r3.Sub(tr.P[j+1], tr.P[j]))), true
}

// segments numbers the stretches of a track between gaps longer than gap.
func segments(T []float64, gap float64) []int {
	seg := make([]int, len(T))
	for i := 1; i < len(T); i++ {
		seg[i] = seg[i-1]
		if T[i]-T[i-1] > gap {
			seg[i]++
		}
	}
	return seg
}

// ScoreTrack runs a fresh forecaster of m along tr and records in s its
// errors at every horizon of s, against the recorded positions (linearly
// interpolated between samples).
func ScoreTrack(m Model, tr *TrackData, opt EvalOptions, s *Scorer) error {
	return runTrack(m, tr, opt, s.Horizons, func(k int, pred, truth r3.Vec, r float64) {
		s.Add(k, pred, truth, r)
	})
}

// runTrack runs a forecaster of m along tr and calls fn for every scored
// forecast with the horizon index, the predicted and true displacement from
// the last sample and the radius.
func runTrack(m Model, tr *TrackData, opt EvalOptions, horizons []float64, fn func(k int, pred, truth r3.Vec, r float64)) error {
	step := stepFor(horizons)
	if step <= 0 {
		return fmt.Errorf("horizons %v: each must be a positive whole number of milliseconds", horizons)
	}
	maxH := 0.0
	for _, h := range horizons {
		maxH = math.Max(maxH, h)
	}
	hz := Horizon{Step: step, Span: maxH, Lead: math.Max(opt.Lead, 0)}
	idx := make([]int, len(horizons))
	for k, h := range horizons {
		idx[k] = int(math.Round(h / step))
	}
	var f Forecaster
	var path Path
	var p0 r3.Vec
	return walkTrack(m, tr, opt, horizons, func(fc Forecaster) { f = fc }, func(t float64, p r3.Vec) bool {
		p0 = p
		return f.Predict(&path, hz)
	}, func(k int, truth r3.Vec) {
		fn(k, r3.Sub(path.P[idx[k]], p0), truth, path.R[idx[k]])
	})
}

// walkTrack runs a forecaster of m along tr (dropping repeated and
// out-of-order times, resetting after gaps) and, for every sample past the
// warm-up at which ready reports true, calls fn with each horizon index whose
// true displacement from the sample is known. got receives the forecaster.
func walkTrack(m Model, tr *TrackData, opt EvalOptions, horizons []float64, got func(Forecaster),
	ready func(t float64, p r3.Vec) bool, fn func(k int, truth r3.Vec)) error {
	if opt.GapReset <= 0 {
		opt.GapReset = DefaultGapReset
	}
	if opt.Warmup <= 0 {
		opt.Warmup = DefaultWarmup
	}
	seg := segments(tr.T, opt.GapReset)
	cur := make([]truthCursor, len(horizons))
	track := NewTrack(m, opt.GapReset)
	got(track.F)
	start := math.Inf(1)
	for i, t := range tr.T {
		switch track.Add(t, tr.P[i]) {
		case Accepted:
			if math.IsInf(start, 1) {
				start = t
			}
		case AfterGap:
			start = t
		default:
			continue
		}
		if t-start < opt.Warmup || !ready(t, tr.P[i]) {
			continue
		}
		for k, h := range horizons {
			truth, ok := cur[k].at(tr, seg, seg[i], t+math.Max(opt.Lead, 0)+h)
			if !ok {
				continue
			}
			fn(k, r3.Sub(truth, tr.P[i]))
		}
	}
	return nil
}
