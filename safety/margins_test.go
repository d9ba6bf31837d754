package safety

import (
	"errors"
	"math"
	"testing"
)

func TestRecommendMargin(t *testing.T) {
	sweep := []SweepPoint{
		{Margin: 0, Detected: 90, Entries: 100},
		{Margin: 0.05, Detected: 98, Entries: 100},
		{Margin: 0.10, Detected: 99, Entries: 100}, // exactly 99 %: reaches a 0.99 target
		{Margin: 0.15, Detected: 100, Entries: 100},
	}
	p, ok, err := RecommendMargin(sweep, 0.99)
	if err != nil || !ok || p.Margin != 0.10 {
		t.Errorf("target 0.99: got %+v %v %v, want 0.10 m", p, ok, err)
	}
	p, ok, err = RecommendMargin(sweep, 1)
	if err != nil || !ok || p.Margin != 0.15 {
		t.Errorf("target 1: got %+v %v %v, want 0.15 m", p, ok, err)
	}
	short := sweep[:2]
	p, ok, err = RecommendMargin(short, 0.99)
	if err != nil || ok || p.Margin != 0.05 {
		t.Errorf("not reached: got %+v %v %v, want the largest margin and ok false", p, ok, err)
	}
	if _, _, err := RecommendMargin([]SweepPoint{{Margin: 0}}, 0.99); !errors.Is(err, ErrNoEntries) {
		t.Errorf("no entries: got %v", err)
	}
	if _, _, err := RecommendMargin([]SweepPoint{{Margin: 0.1, Entries: 1}, {Margin: 0.05, Entries: 1}}, 0.9); err == nil {
		t.Error("unsorted sweep accepted")
	}
	if _, _, err := RecommendMargin(sweep, 1.5); err == nil {
		t.Error("target 1.5 accepted")
	}
}

// TestReferenceDistances: T = stopping time + system latency, and the
// ISO/TS 15066 reaction time includes the system latency. Hand-computed
// (ISO 13855:2010 6.2.3, clause number from memory; ISO/TS 15066:2016
// 5.5.4): Ts = 0.3 s, latency 0.05 s, Tr = 0.1 s, d = 30 mm, v_r = 1 m/s,
// Ss = v_r·Ts = 0.3 m (no distance given), C = 0.1, Zd = 0.05, Zr = 0.02 m.
//
//	ISO 13855: T = 0.35 s; 2000·0.35 + 8·16 = 828 mm > 500 → 1600·0.35 + 128 = 688 mm.
//	ISO/TS 15066: Tr = 0.15 s; Sh = 1.6·(0.15 + 0.3) = 0.72, Sr = 1·0.15 = 0.15,
//	Sp = 0.72 + 0.15 + 0.3 + 0.1 + 0.05 + 0.02 = 1.34 m.
func TestReferenceDistances(t *testing.T) {
	r := ReferenceDistances(StoppingData{StoppingTime: 0.3, SystemLatency: 0.05, ReactionTime: 0.1,
		RobotSpeed: 1, Intrusion: 0.1, HumanUncertainty: 0.05, RobotUncertainty: 0.02, DetectionCapability: 0.030})
	if math.Abs(r.T-0.35) > 1e-12 || r.MinDistance == nil || math.Abs(r.MinDistance.S-0.688) > 1e-9 {
		t.Errorf("ISO 13855: got T=%g %+v (%s), want 0.688 m", r.T, r.MinDistance, r.MinDistanceErr)
	}
	if r.Separation == nil || math.Abs(r.Separation.Sp-1.34) > 1e-9 || math.Abs(r.SeparationIn.ReactionTime-0.15) > 1e-12 {
		t.Errorf("ISO/TS 15066: got %+v (%s), want Sp 1.34 m", r.Separation, r.SeparationErr)
	}
	r = ReferenceDistances(StoppingData{StoppingTime: 0.3, DetectionCapability: 0.05})
	if r.MinDistance != nil || r.MinDistanceErr == "" {
		t.Errorf("d = 50 mm: got %+v, want out of scope", r)
	}
	r = ReferenceDistances(StoppingData{})
	if r.MinDistance != nil || r.Separation != nil || r.MinDistanceErr == "" || r.SeparationErr == "" {
		t.Errorf("no data: got %+v", r)
	}
}
