package review

import (
	"math"
	"strings"
	"testing"
	"time"

	"forereach/forecast"
	"forereach/zones"
)

// TestMarginReferences checks that the margin sweep reports, beside the
// advisory margins, the ISO 13855:2010 minimum distance for a detection
// zone orthogonal to the direction of approach, S = K·T + C with
// C = 8·(d − 14 mm), K = 2000 mm/s, recalculated with 1600 mm/s when S
// exceeds 500 mm (then not below 500 mm; never below 100 mm) — ISO 13855:2010
// clause 6.2.3 (clause number from memory) — computed by hand for cells
// whose stopping time (system latency 0) is T and whose detection
// capability is d, and the ISO/TS 15066:2016 §5.5.4 protective separation
// distance Sp = v_h·(Tr + Ts) + v_r·Tr + Ss + C + Zd + Zr for stated inputs.
func TestMarginReferences(t *testing.T) {
	model, err := forecast.NewModel(forecast.Settings{Kind: forecast.KindCV})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		T, latency, d float64 // s, s, m
		wantS         float64 // mm
		text          string
	}{
		// 2000·0.32 + 8·(14 − 14) = 640 mm > 500 mm → 1600·0.32 = 512 mm.
		{0.32, 0, 0.014, 512, "1600 mm/s × 0.320 s + 0 mm = 512 mm"},
		// 2000·0.3 + 8·(30 − 14) = 728 mm > 500 mm → 1600·0.3 + 128 = 608 mm.
		{0.3, 0, 0.030, 608, "1600 mm/s × 0.300 s + 128 mm = 608 mm"},
		// 2000·0.1 + 0 = 200 mm (between 100 and 500 mm: kept).
		{0.1, 0, 0.014, 200, "2000 mm/s × 0.100 s + 0 mm = 200 mm"},
		// 2000·0.2 + 8·(40 − 14) = 608 mm > 500 mm → 1600·0.2 + 208 = 528 mm.
		{0.2, 0, 0.040, 528, "1600 mm/s × 0.200 s + 208 mm = 528 mm"},
		// T = stopping time + system latency = 0.25 + 0.07 = 0.32 s: as the
		// first case.
		{0.25, 0.07, 0.014, 512, "1600 mm/s × 0.320 s + 0 mm = 512 mm"},
	}
	for _, c := range cases {
		cfg := exampleCell(t)
		cfg.Robot.StoppingTime = zones.Duration(time.Duration(math.Round(c.T * 1e9)))
		cfg.Robot.SystemLatency = zones.Duration(time.Duration(math.Round(c.latency * 1e9)))
		cfg.Robot.DetectionCapability = zones.Length(c.d)
		m, err := NewMargins(cfg, model, MarginOptions{})
		if err != nil {
			t.Fatal(err)
		}
		res := m.Result()
		ref := res.References
		if ref.MinDistance == nil || math.Abs(*ref.MinDistance*1000-c.wantS) > 1e-6 {
			t.Errorf("T=%g+%g s d=%g mm: S = %v, want %g mm (%s)", c.T, c.latency, c.d*1000, ref.MinDistance, c.wantS, ref.MinDistanceErr)
		}
		var b strings.Builder
		if err := res.WriteText(&b, cfg, 4); err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(b.String(), c.text) {
			t.Errorf("T=%g+%g s d=%g mm: text lacks %q:\n%s", c.T, c.latency, c.d*1000, c.text, b.String())
		}
	}

	// ISO/TS 15066 with the example cell's stopping data: v_h = 1.6 m/s
	// (ISO 13855 walking speed), v_r = 1.0 m/s, Tr = reaction time 100 ms +
	// system latency 60 ms = 0.16 s, Ts = 0.3 s, Ss = 0.20 m (given),
	// C = 0 m, Zd = 0.05 m, Zr = 0.02 m:
	//   Sh = 1.6·(0.16 + 0.3) = 0.736 m, Sr = 1.0·0.16 = 0.16 m,
	//   Sp = 0.736 + 0.16 + 0.20 + 0 + 0.05 + 0.02 = 1.166 m.
	cfg := exampleCell(t)
	m, err := NewMargins(cfg, model, MarginOptions{})
	if err != nil {
		t.Fatal(err)
	}
	res := m.Result()
	sp := res.References.Separation
	if sp == nil || math.Abs(sp.Sp-1.166) > 1e-9 || math.Abs(sp.Sh-0.736) > 1e-9 || math.Abs(sp.Sr-0.16) > 1e-9 {
		t.Errorf("ISO/TS 15066: got %+v, want Sp 1.166 m (Sh 0.736, Sr 0.16)", sp)
	}
	// The same cell for ISO 13855: T = 0.3 + 0.06 = 0.36 s, d = 14 mm,
	// so C = 8·(14 − 14) = 0: 2000·0.36 = 720 mm > 500 → 1600·0.36 = 576 mm.
	if md := res.References.MinDistance; md == nil || math.Abs(*md-0.576) > 1e-9 {
		t.Errorf("ISO 13855 for the example cell: got %v, want 0.576 m", md)
	}
	// Without stopping speed nor distance: no protective separation
	// distance, and the reason says so.
	cfg.Robot.Speed, cfg.Robot.StoppingDistance = 0, 0
	m, _ = NewMargins(cfg, model, MarginOptions{})
	if r := m.Result().References; r.Separation != nil || !strings.Contains(r.SeparationErr, "robot speed") {
		t.Errorf("no robot speed: got %+v", r)
	}
}
