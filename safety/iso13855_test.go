package safety

import (
	"errors"
	"math"
	"testing"
)

// tol is the tolerance of the hand-computed cases: the formulas are a few
// floating-point operations on values given in millimetres and converted to
// metres, so 1 nm is ample.
const tol = 1e-9

// TestMinDistanceOrthogonal checks S = K·T + C against hand calculations of
// ISO 13855:2010 (clause 6.2.3, detection zone orthogonal to the direction of
// approach, d <= 40 mm; subclause number from memory). Each case states its
// inputs and the arithmetic in millimetres.
func TestMinDistanceOrthogonal(t *testing.T) {
	cases := []struct {
		name   string
		T, d   float64 // s, m
		wantS  float64 // m
		wantK  float64 // m/s
		wantC  float64 // m
		raised bool
	}{
		// ISO 13855:2010 6.2.3: 2000·0.32 + 8·(14−14) = 640 mm > 500 mm →
		// 1600·0.32 + 0 = 512 mm (>= 500 mm, kept).
		{"T=0.32s d=14mm", 0.32, 0.014, 0.512, 1.6, 0, false},
		// ISO 13855:2010 6.2.3: 2000·0.3 + 8·(30−14) = 600 + 128 = 728 mm >
		// 500 mm → 1600·0.3 + 128 = 608 mm.
		{"T=0.3s d=30mm", 0.3, 0.030, 0.608, 1.6, 0.128, false},
		// ISO 13855:2010 6.2.3: 2000·0.1 + 0 = 200 mm <= 500 mm, >= 100 mm.
		{"T=0.1s d=14mm", 0.1, 0.014, 0.200, 2.0, 0, false},
		// ISO 13855:2010 6.2.3: 2000·0.2 + 8·(40−14) = 400 + 208 = 608 mm >
		// 500 mm → 1600·0.2 + 208 = 528 mm.
		{"T=0.2s d=40mm", 0.2, 0.040, 0.528, 1.6, 0.208, false},
		// ISO 13855:2010 6.2.3: 2000·0.26 = 520 mm > 500 mm → 1600·0.26 =
		// 416 mm < 500 mm → raised to 500 mm.
		{"T=0.26s d=14mm raised to 500", 0.26, 0.014, 0.500, 1.6, 0, true},
		// ISO 13855:2010 6.2.3: 2000·0.25 = 500 mm, not above 500 mm → no
		// recalculation, K stays 2000 mm/s.
		{"T=0.25s d=14mm boundary", 0.25, 0.014, 0.500, 2.0, 0, false},
		// ISO 13855:2010 6.2.3: 2000·0.02 = 40 mm < 100 mm → raised to 100 mm.
		{"T=0.02s d=14mm raised to 100", 0.02, 0.014, 0.100, 2.0, 0, true},
		// ISO 13855:2010 6.2.3: C = 8·(d − 14) is not less than 0 (from
		// memory): d = 10 mm → C = 0; 2000·0.1 = 200 mm.
		{"T=0.1s d=10mm C floored", 0.1, 0.010, 0.200, 2.0, 0, false},
		// ISO 13855:2010 6.2.3: T = 0 → 8·(20−14) = 48 mm < 100 mm → 100 mm.
		{"T=0 d=20mm", 0, 0.020, 0.100, 2.0, 0.048, true},
	}
	for _, c := range cases {
		got, err := MinDistanceOrthogonal(c.T, c.d)
		if err != nil {
			t.Errorf("%s: unexpected error %v", c.name, err)
			continue
		}
		if math.Abs(got.S-c.wantS) > tol || got.K != c.wantK || math.Abs(got.C-c.wantC) > tol || got.Raised != c.raised {
			t.Errorf("%s: got S=%.9f K=%g C=%.9f raised=%v, want S=%.3f K=%g C=%.3f raised=%v",
				c.name, got.S, got.K, got.C, got.Raised, c.wantS, c.wantK, c.wantC, c.raised)
		}
	}
}

func TestMinDistanceOrthogonalRejects(t *testing.T) {
	if _, err := MinDistanceOrthogonal(0.2, 0.041); !errors.Is(err, ErrOutOfScope) {
		t.Errorf("d = 41 mm: got %v, want ErrOutOfScope", err)
	}
	bad := []struct{ T, d float64 }{
		{-0.1, 0.014}, {math.NaN(), 0.014}, {math.Inf(1), 0.014},
		{0.1, 0}, {0.1, -0.01}, {0.1, math.NaN()}, {0.1, math.Inf(1)},
	}
	for _, b := range bad {
		if _, err := MinDistanceOrthogonal(b.T, b.d); err == nil {
			t.Errorf("T=%v d=%v: accepted, want an error", b.T, b.d)
		}
	}
}

// TestMinDistanceOrthogonalMonotone checks a property every result must
// have: S never decreases with T or d, and never falls below the floors.
func TestMinDistanceOrthogonalMonotone(t *testing.T) {
	prev := 0.0
	for i := 0; i <= 1000; i++ {
		T := float64(i) * 0.001
		r, err := MinDistanceOrthogonal(T, 0.030)
		if err != nil {
			t.Fatal(err)
		}
		if r.S < MinimumS || (r.K == WalkingSpeed && r.S < RecalcAbove) {
			t.Fatalf("T=%g: S=%g below a floor", T, r.S)
		}
		// The switch from K=2000 to K=1600 at 500 mm is a drop in the raw
		// formula; the 500 mm floor makes the result continuous there.
		if r.S < prev-tol {
			t.Fatalf("T=%g: S=%g decreased from %g", T, r.S, prev)
		}
		prev = r.S
	}
}
