package safety

import (
	"fmt"
	"math"
)

// SeparationInputs are the terms of the ISO/TS 15066:2016 §5.5.4 protective
// separation distance. Every length is in metres, every speed in m/s, every
// time in seconds; every value must be finite and >= 0.
type SeparationInputs struct {
	// HumanSpeed v_h: the operator's speed towards the robot. Use
	// WalkingSpeed (1.6 m/s, from ISO 13855) when no measured value is used.
	HumanSpeed float64
	// RobotSpeed v_r: the robot's speed towards the operator.
	RobotSpeed float64
	// ReactionTime Tr: time for the system to respond to the operator's
	// presence up to the initiation of the robot's stop.
	ReactionTime float64
	// StoppingTime Ts: time for the robot to come to rest once the stop is
	// initiated.
	StoppingTime float64
	// StoppingDistance: the robot's stopping distance Ss when known
	// (used when > 0).
	StoppingDistance float64
	// StoppingSpeed vs: a constant speed during the stop, used as
	// Ss = vs·Ts when StoppingDistance is not given (0) and this is > 0.
	StoppingSpeed float64
	// Intrusion C: distance a body part can intrude into the sensing field
	// before it is detected.
	Intrusion float64
	// HumanUncertainty Zd and RobotUncertainty Zr: position uncertainty of
	// the operator (sensing) and of the robot.
	HumanUncertainty float64
	RobotUncertainty float64
}

// Separation is the protective separation distance with its terms (metres).
type Separation struct {
	Sp float64 // Sh + Sr + Ss + C + Zd + Zr
	Sh float64 // operator's travel during Tr + Ts
	Sr float64 // robot's travel during Tr
	Ss float64 // robot's travel during Ts (stopping)
	C  float64
	Zd float64
	Zr float64
}

// ProtectiveSeparation computes the protective separation distance of
// ISO/TS 15066:2016 §5.5.4,
//
//	Sp = Sh + Sr + Ss + C + Zd + Zr,
//
// with the constant-speed simplification of the integrals:
//
//	Sh = v_h·(Tr + Ts)   the operator keeps approaching until the robot rests,
//	Sr = v_r·Tr          the robot keeps its speed until the stop begins,
//	Ss = StoppingDistance when given (> 0); otherwise vs·Ts when a stopping
//	     speed is given (> 0); otherwise v_r·Ts, i.e. the robot is assumed to
//	     keep its speed for the whole stopping time — an upper bound of the
//	     stopping distance, since the speed does not grow while stopping.
//
// It returns an error naming the first input that is negative or not finite.
func ProtectiveSeparation(in SeparationInputs) (Separation, error) {
	for _, f := range [...]struct {
		name string
		v    float64
	}{
		{"human speed v_h", in.HumanSpeed},
		{"robot speed v_r", in.RobotSpeed},
		{"reaction time Tr", in.ReactionTime},
		{"stopping time Ts", in.StoppingTime},
		{"stopping distance Ss", in.StoppingDistance},
		{"stopping speed vs", in.StoppingSpeed},
		{"intrusion C", in.Intrusion},
		{"human position uncertainty Zd", in.HumanUncertainty},
		{"robot position uncertainty Zr", in.RobotUncertainty},
	} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) || f.v < 0 {
			return Separation{}, fmt.Errorf("protective separation: %s = %v: must be finite and >= 0", f.name, f.v)
		}
	}
	s := Separation{
		Sh: in.HumanSpeed * (in.ReactionTime + in.StoppingTime),
		Sr: in.RobotSpeed * in.ReactionTime,
		C:  in.Intrusion,
		Zd: in.HumanUncertainty,
		Zr: in.RobotUncertainty,
	}
	switch {
	case in.StoppingDistance > 0:
		s.Ss = in.StoppingDistance
	case in.StoppingSpeed > 0:
		s.Ss = in.StoppingSpeed * in.StoppingTime
	default:
		s.Ss = in.RobotSpeed * in.StoppingTime
	}
	s.Sp = s.Sh + s.Sr + s.Ss + s.C + s.Zd + s.Zr
	return s, nil
}
