package safety

import (
	"errors"
	"fmt"
	"math"
)

// Constants of the ISO 13855:2010 minimum-distance formula for a detection
// zone orthogonal to the direction of approach, in metres and seconds.
// (Subclause numbers below are from memory of ISO 13855:2010: the general
// formula S = K·T + C is clause 5; the orthogonal detection zone with
// detection capability d <= 40 mm is 6.2.3.)
const (
	// HandSpeed is the approach speed K = 2000 mm/s used first.
	HandSpeed = 2.0
	// WalkingSpeed is the approach speed K = 1600 mm/s used when the first
	// result exceeds 500 mm; it is also the approach speed of the human body
	// that ISO/TS 15066 takes from ISO 13855 when no other value is used.
	WalkingSpeed = 1.6
	// RecalcAbove is the distance above which S is recalculated with
	// WalkingSpeed (500 mm), and the floor of the recalculated result.
	RecalcAbove = 0.5
	// MinimumS is the smallest minimum distance the formula gives (100 mm).
	MinimumS = 0.1
	// MaxDetectionCapability is the largest detection capability d within
	// the scope of this formula (40 mm); beyond it the standard uses other
	// formulas (not implemented here).
	MaxDetectionCapability = 0.040
	// fingerD is the detection capability (14 mm) at which the intrusion
	// distance C = 8·(d − 14 mm) is zero.
	fingerD = 0.014
)

// MinimumDistance is the result of the ISO 13855:2010 minimum-distance
// formula. Every length is in metres, every speed in m/s.
type MinimumDistance struct {
	S float64 // minimum distance from the detection zone to the hazard
	K float64 // approach speed used: HandSpeed or WalkingSpeed
	C float64 // intrusion distance 8·(d − 14 mm), never negative
	// Raised is true when S was raised to a floor of the formula
	// (RecalcAbove after recalculation, or MinimumS).
	Raised bool
}

// ErrOutOfScope is returned for a detection capability above 40 mm, which the
// orthogonal formula for d <= 40 mm does not cover.
var ErrOutOfScope = errors.New("detection capability above 40 mm is outside the scope of S = K·T + 8·(d − 14 mm)")

// MinDistanceOrthogonal computes the ISO 13855:2010 minimum distance S for an
// electro-sensitive detection zone orthogonal to the direction of approach,
// with detection capability d <= 40 mm:
//
//	S = K·T + C,  C = 8·(d − 14 mm) (not less than 0)
//	K = 2000 mm/s; if S > 500 mm, recalculate with K = 1600 mm/s, and then
//	S is not less than 500 mm; in every case S is not less than 100 mm.
//
// T is the overall system stopping performance in seconds (detection,
// controller response and machine stopping time, >= 0); d is the detection
// capability in metres (0 < d <= 0.040). The result is in metres.
func MinDistanceOrthogonal(T, d float64) (MinimumDistance, error) {
	if math.IsNaN(T) || math.IsInf(T, 0) || T < 0 {
		return MinimumDistance{}, fmt.Errorf("stopping performance T = %v s: must be finite and >= 0", T)
	}
	if math.IsNaN(d) || math.IsInf(d, 0) || d <= 0 {
		return MinimumDistance{}, fmt.Errorf("detection capability d = %v m: must be finite and > 0", d)
	}
	if d > MaxDetectionCapability {
		return MinimumDistance{}, fmt.Errorf("detection capability d = %g mm: %w", d*1000, ErrOutOfScope)
	}
	c := math.Max(0, 8*(d-fingerD))
	r := MinimumDistance{K: HandSpeed, C: c, S: HandSpeed*T + c}
	if r.S > RecalcAbove {
		r.K = WalkingSpeed
		r.S = WalkingSpeed*T + c
		if r.S < RecalcAbove {
			r.S, r.Raised = RecalcAbove, true
		}
	}
	if r.S < MinimumS {
		r.S, r.Raised = MinimumS, true
	}
	return r, nil
}
