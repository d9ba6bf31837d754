package safety

import (
	"math"
	"testing"
)

// TestProtectiveSeparation checks Sp against hand calculations of
// ISO/TS 15066:2016 §5.5.4 (formula Sp = Sh + Sr + Ss + C + Zd + Zr) with the
// constant-speed simplification Sh = v_h·(Tr + Ts), Sr = v_r·Tr. Inputs and
// arithmetic are stated for each case.
func TestProtectiveSeparation(t *testing.T) {
	cases := []struct {
		name string
		in   SeparationInputs
		want Separation
	}{
		{
			// ISO/TS 15066:2016 §5.5.4: v_h = 1.6 m/s, v_r = 1.0 m/s, Tr = 0.1 s,
			// Ts = 0.3 s, Ss = 0.15 m, C = 0.1 m, Zd = 0.05 m, Zr = 0.02 m:
			// Sh = 1.6·0.4 = 0.64; Sr = 1.0·0.1 = 0.1; Ss = 0.15;
			// Sp = 0.64 + 0.1 + 0.15 + 0.1 + 0.05 + 0.02 = 1.06 m.
			"stopping distance given",
			SeparationInputs{HumanSpeed: 1.6, RobotSpeed: 1.0, ReactionTime: 0.1, StoppingTime: 0.3,
				StoppingDistance: 0.15, Intrusion: 0.1, HumanUncertainty: 0.05, RobotUncertainty: 0.02},
			Separation{Sp: 1.06, Sh: 0.64, Sr: 0.1, Ss: 0.15, C: 0.1, Zd: 0.05, Zr: 0.02},
		},
		{
			// ISO/TS 15066:2016 §5.5.4: as above but only a stopping speed
			// vs = 0.4 m/s: Ss = vs·Ts = 0.12 m; Sp = 0.64 + 0.1 + 0.12 + 0.17 = 1.03 m.
			"stopping speed only",
			SeparationInputs{HumanSpeed: 1.6, RobotSpeed: 1.0, ReactionTime: 0.1, StoppingTime: 0.3,
				StoppingSpeed: 0.4, Intrusion: 0.1, HumanUncertainty: 0.05, RobotUncertainty: 0.02},
			Separation{Sp: 1.03, Sh: 0.64, Sr: 0.1, Ss: 0.12, C: 0.1, Zd: 0.05, Zr: 0.02},
		},
		{
			// ISO/TS 15066:2016 §5.5.4: neither stopping distance nor speed:
			// Ss = v_r·Ts = 1.0·0.3 = 0.3 m (upper bound);
			// Sp = 0.64 + 0.1 + 0.3 + 0.17 = 1.21 m.
			"robot speed bound",
			SeparationInputs{HumanSpeed: 1.6, RobotSpeed: 1.0, ReactionTime: 0.1, StoppingTime: 0.3,
				Intrusion: 0.1, HumanUncertainty: 0.05, RobotUncertainty: 0.02},
			Separation{Sp: 1.21, Sh: 0.64, Sr: 0.1, Ss: 0.3, C: 0.1, Zd: 0.05, Zr: 0.02},
		},
		{
			// ISO/TS 15066:2016 §5.5.4: robot at rest, v_h = 1.6 m/s,
			// Tr = 0.2 s, Ts = 0.5 s: Sh = 1.6·0.7 = 1.12 m, Sr = Ss = 0;
			// Sp = 1.12 m.
			"robot at rest",
			SeparationInputs{HumanSpeed: 1.6, ReactionTime: 0.2, StoppingTime: 0.5},
			Separation{Sp: 1.12, Sh: 1.12},
		},
		{
			// ISO/TS 15066:2016 §5.5.4: measured hand speed v_h = 2.5 m/s,
			// v_r = 0.25 m/s, Tr = 0.08 s, Ts = 0.12 s, Ss = 0.02 m, C = 0.208 m
			// (8·(40−14) mm), Zd = Zr = 0: Sh = 2.5·0.2 = 0.5; Sr = 0.02;
			// Sp = 0.5 + 0.02 + 0.02 + 0.208 = 0.748 m.
			"hand speed",
			SeparationInputs{HumanSpeed: 2.5, RobotSpeed: 0.25, ReactionTime: 0.08, StoppingTime: 0.12,
				StoppingDistance: 0.02, Intrusion: 0.208},
			Separation{Sp: 0.748, Sh: 0.5, Sr: 0.02, Ss: 0.02, C: 0.208},
		},
	}
	near := func(a, b float64) bool { return math.Abs(a-b) <= tol }
	for _, c := range cases {
		got, err := ProtectiveSeparation(c.in)
		if err != nil {
			t.Errorf("%s: unexpected error %v", c.name, err)
			continue
		}
		w := c.want
		if !near(got.Sp, w.Sp) || !near(got.Sh, w.Sh) || !near(got.Sr, w.Sr) || !near(got.Ss, w.Ss) ||
			!near(got.C, w.C) || !near(got.Zd, w.Zd) || !near(got.Zr, w.Zr) {
			t.Errorf("%s: got %+v, want %+v", c.name, got, w)
		}
	}
}

func TestProtectiveSeparationRejects(t *testing.T) {
	ok := SeparationInputs{HumanSpeed: 1.6, RobotSpeed: 1, ReactionTime: 0.1, StoppingTime: 0.3}
	set := []func(*SeparationInputs, float64){
		func(in *SeparationInputs, v float64) { in.HumanSpeed = v },
		func(in *SeparationInputs, v float64) { in.RobotSpeed = v },
		func(in *SeparationInputs, v float64) { in.ReactionTime = v },
		func(in *SeparationInputs, v float64) { in.StoppingTime = v },
		func(in *SeparationInputs, v float64) { in.StoppingDistance = v },
		func(in *SeparationInputs, v float64) { in.StoppingSpeed = v },
		func(in *SeparationInputs, v float64) { in.Intrusion = v },
		func(in *SeparationInputs, v float64) { in.HumanUncertainty = v },
		func(in *SeparationInputs, v float64) { in.RobotUncertainty = v },
	}
	for i, f := range set {
		for _, v := range []float64{-0.01, math.NaN(), math.Inf(1)} {
			in := ok
			f(&in, v)
			if _, err := ProtectiveSeparation(in); err == nil {
				t.Errorf("field %d = %v: accepted, want an error", i, v)
			}
		}
	}
	if _, err := ProtectiveSeparation(ok); err != nil {
		t.Errorf("valid inputs rejected: %v", err)
	}
}
