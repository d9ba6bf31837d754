package zones

import (
	"math"
	"strconv"
	"time"
)

// RobotConfig names the robot frames that zones may be attached to and the
// robot's stopping data. Owned by the advisory-engine work; fields may be
// added here.
//
// When a speed towards the operator (Speed, or sent live with the robot
// state) and a stopping time (StoppingTime, or live) are known, the advisory
// engine also applies the ISO/TS 15066:2016 §5.5.4 protective separation
// distance Sp = Sh + Sr + Ss + C + Zd + Zr to the zones attached to a robot
// frame, as a further hold rule (see safety.ProtectiveSeparation). All
// values default to 0 (no stopping data: no protective-separation rule).
type RobotConfig struct {
	Name   string        `yaml:"name"`
	Frames []FrameConfig `yaml:"frames"`
	// Stopping data for the protective separation distance (ISO/TS 15066).
	StoppingTime     Duration `yaml:"stopping_time"`     // Ts
	StoppingDistance Length   `yaml:"stopping_distance"` // Ss; 0: Ss = v_r·Ts (upper bound)
	// ReactionTime Tr of the system up to the initiation of the stop. The
	// engine adds the measured input latency of the track to it.
	ReactionTime             Duration `yaml:"reaction_time"`
	Speed                    Speed    `yaml:"speed"`                      // v_r towards the operator, when not sent live
	Intrusion                Length   `yaml:"intrusion"`                  // C
	PositionUncertaintyHuman Length   `yaml:"position_uncertainty_human"` // Zd
	PositionUncertaintyRobot Length   `yaml:"position_uncertainty_robot"` // Zr
	// SystemLatency adds to the stopping time for the horizon the cell
	// needs (margin sizing).
	SystemLatency Duration `yaml:"system_latency"`
	// DetectionCapability d of the sensing, for ISO 13855 (d <= 40 mm).
	DetectionCapability Length `yaml:"detection_capability"`
}

// FrameConfig is a robot frame with its pose before any robot state arrives.
type FrameConfig struct {
	Name string      `yaml:"name"`
	Pos  Point       `yaml:"pos"`
	RPY  *[3]float64 `yaml:"rpy"`
	Quat *[4]float64 `yaml:"quat"`
}

// Check reports negative or implausible stopping data and duplicate frames.
func (r *RobotConfig) Check(c *Checker) {
	for _, d := range []struct {
		field string
		v     Duration
	}{{"stopping_time", r.StoppingTime}, {"reaction_time", r.ReactionTime}, {"system_latency", r.SystemLatency}} {
		if d.v < 0 || time.Duration(d.v) > 10*time.Second {
			c.Errorf(d.field, "must be in [0, 10s], got %v", time.Duration(d.v))
		}
	}
	for _, l := range []struct {
		field string
		v     float64
	}{
		{"stopping_distance", float64(r.StoppingDistance)}, {"speed", float64(r.Speed)},
		{"intrusion", float64(r.Intrusion)}, {"position_uncertainty_human", float64(r.PositionUncertaintyHuman)},
		{"position_uncertainty_robot", float64(r.PositionUncertaintyRobot)},
		{"detection_capability", float64(r.DetectionCapability)},
	} {
		if !(l.v >= 0) || math.IsInf(l.v, 0) {
			c.Errorf(l.field, "must be >= 0, got %g", l.v)
		}
	}
	if r.DetectionCapability > 0.040 {
		c.Errorf("detection_capability", "%g mm: the ISO 13855 formula used here covers d <= 40 mm", float64(r.DetectionCapability)*1000)
	}
	first := map[string]int{}
	for i, f := range r.Frames {
		fc := "frames[" + strconv.Itoa(i) + "]"
		switch {
		case f.Name == "":
			c.Errorf(fc+".name", "missing: every frame needs a name (zones refer to it)")
		default:
			if j, dup := first[f.Name]; dup {
				c.Errorf(fc+".name", "duplicate frame name (also frames[%d])", j)
			} else {
				first[f.Name] = i
			}
		}
		if f.RPY != nil && f.Quat != nil {
			c.Errorf(fc, "give either rpy or quat, not both")
		}
		if f.Quat != nil {
			if _, err := RotationQuat(f.Quat[0], f.Quat[1], f.Quat[2], f.Quat[3]); err != nil {
				c.Errorf(fc+".quat", "not a rotation: [w, x, y, z] must be finite and not all zero")
			}
		}
		if f.RPY != nil {
			for k, a := range f.RPY {
				if math.IsNaN(a) || math.IsInf(a, 0) {
					c.Errorf(fc+".rpy["+strconv.Itoa(k)+"]", "must be finite")
				}
			}
		}
	}
}
