package zones

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
	StoppingDistance Length   `yaml:"stopping_distance"` // Ss; 0: Ss = vr·Ts (upper bound)
	// ReactionTime Tr of the system up to the initiation of the stop. The
	// engine adds the measured input latency of the track to it.
	ReactionTime             Duration `yaml:"reaction_time"`
	Speed                    Speed    `yaml:"speed"`                      // vr towards the operator, when not sent live
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
