// Package forecast estimates the state of tracked hands from timestamped
// positions and predicts each hand's path over the next few hundred
// milliseconds, with an uncertainty radius per predicted point. It also fits
// per-horizon gains on recordings and scores forecasters by horizon.
//
// The package is pure: no I/O beyond io.Reader/io.Writer arguments, no
// goroutines, no wall clock. Time comes from the samples.
package forecast

import (
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"
)

// Sample is one timestamped position of one tracked point (a hand).
type Sample struct {
	Track string  // track id, e.g. "op1/right"
	T     float64 // source time, seconds
	P     r3.Vec  // position, metres, cell frame (right-handed, z up)
}

// Path is a forecast of one track. Point 0 is the estimated position "now"
// (the time of the last sample plus the latency lead); point k is k steps
// later. T holds absolute times on the samples' time axis, P positions in
// metres and R the uncertainty radius in metres (non-decreasing in practice,
// never negative). The slices always have equal length.
type Path struct {
	T []float64
	P []r3.Vec
	R []float64
}

// Len returns the number of points in the path.
func (p *Path) Len() int { return len(p.T) }

// Resize sets the path length to n, reusing the backing arrays when their
// capacity suffices, so that a path reused sample after sample allocates
// nothing in steady state.
func (p *Path) Resize(n int) {
	if cap(p.T) < n {
		p.T = make([]float64, n)
		p.P = make([]r3.Vec, n)
		p.R = make([]float64, n)
	}
	p.T, p.P, p.R = p.T[:n], p.P[:n], p.R[:n]
}

// Horizon says which points a prediction produces: point 0 at Lead after the
// last sample, then points at Lead + k·Step for k = 1 … round(Span/Step).
// Lead is the input latency to compensate (seconds, >= 0), so that forecasts
// refer to wall-clock time.
type Horizon struct {
	Step float64 // seconds, > 0
	Span float64 // seconds, > 0; the forecast reaches Lead + Span
	Lead float64 // seconds, >= 0
}

// Points returns the number of path points the horizon produces (including
// point 0).
func (h Horizon) Points() int {
	if h.Step <= 0 {
		return 1
	}
	return 1 + int(h.Span/h.Step+0.5)
}

// Forecaster holds the estimated state of one track and predicts its path.
// Implementations must not allocate in Update or Predict once warmed up.
type Forecaster interface {
	// Update feeds the next sample of the track. Times are strictly
	// increasing; the caller rejects anything else before it gets here.
	Update(t float64, p r3.Vec)
	// Predict writes the path forecast from the latest update into dst.
	// It returns false (and leaves dst empty) while the track has too little
	// history to predict.
	Predict(dst *Path, h Horizon) bool
	// Reset forgets all history (used after a gap).
	Reset()
}

// Model makes Forecasters of one kind; one Forecaster per track.
type Model interface {
	Name() string
	New() Forecaster
}

// SampleReader yields the samples of a recording in file order. Next returns
// io.EOF after the last sample. An error of type *RowError reports one bad
// row or record (file:line:field and what is wrong); the reader stays usable
// and the caller may go on calling Next. Any other error is fatal.
type SampleReader interface {
	Next() (Sample, error)
}

// RowError is a recoverable error about one row or record of a recording.
type RowError struct {
	File  string // file name as given
	Line  int    // 1-based line (or record number for binary formats)
	Field string // column or field name, "" when the whole row is bad
	Msg   string
}

func (e *RowError) Error() string {
	if e.Field == "" {
		return e.File + ":" + strconv.Itoa(e.Line) + ": " + e.Msg
	}
	return e.File + ":" + strconv.Itoa(e.Line) + ": " + e.Field + ": " + e.Msg
}
