package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// Admit says what a Track did with a sample.
type Admit int

const (
	Accepted   Admit = iota // fed to the forecaster
	AfterGap                // the gap since the previous sample exceeded the limit: the forecaster was reset, then fed
	Duplicate               // same time as the previous sample: dropped
	OutOfOrder              // earlier than the previous sample: dropped
	Invalid                 // a non-finite time or coordinate: dropped
)

func (a Admit) String() string {
	switch a {
	case Accepted:
		return "accepted"
	case AfterGap:
		return "after-gap"
	case Duplicate:
		return "duplicate"
	case OutOfOrder:
		return "out-of-order"
	case Invalid:
		return "invalid"
	}
	return "unknown"
}

// Track wraps the Forecaster of one track with the bookkeeping every user of
// a forecaster needs: it drops samples whose time is not after the previous
// one (Forecaster.Update needs strictly increasing times) and resets the
// forecaster when the gap since the previous sample exceeds GapReset.
// It allocates nothing.
type Track struct {
	F        Forecaster
	GapReset float64 // seconds; <= 0: DefaultGapReset
	last     float64
	n        int
}

// NewTrack returns a Track for a new forecaster of m.
func NewTrack(m Model, gapReset float64) *Track {
	return &Track{F: m.New(), GapReset: gapReset}
}

// Add feeds one sample and says what was done with it.
func (k *Track) Add(t float64, p r3.Vec) Admit {
	if math.IsNaN(t) || math.IsInf(t, 0) || !finite(p) {
		return Invalid
	}
	gap := k.GapReset
	if gap <= 0 {
		gap = DefaultGapReset
	}
	res := Accepted
	if k.n > 0 {
		switch {
		case t == k.last:
			return Duplicate
		case t < k.last:
			return OutOfOrder
		case t-k.last > gap:
			k.F.Reset()
			k.n = 0
			res = AfterGap
		}
	}
	k.F.Update(t, p)
	k.last = t
	k.n++
	return res
}

// Last returns the time of the last accepted sample and whether there is one
// since the last reset.
func (k *Track) Last() (float64, bool) { return k.last, k.n > 0 }

// Reset forgets the track's history.
func (k *Track) Reset() { k.F.Reset(); k.n = 0 }

func finite(p r3.Vec) bool {
	return !math.IsNaN(p.X) && !math.IsInf(p.X, 0) && !math.IsNaN(p.Y) && !math.IsInf(p.Y, 0) &&
		!math.IsNaN(p.Z) && !math.IsInf(p.Z, 0)
}
