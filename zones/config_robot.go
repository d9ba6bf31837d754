package zones

// RobotConfig names the robot frames that zones may be attached to and the
// robot's stopping data. Owned by the advisory-engine work; fields may be
// added here.
type RobotConfig struct {
	Name   string        `yaml:"name"`
	Frames []FrameConfig `yaml:"frames"`
	// Stopping data for the protective separation distance (ISO/TS 15066).
	StoppingTime             Duration `yaml:"stopping_time"`              // Ts
	StoppingDistance         Length   `yaml:"stopping_distance"`          // Ss
	ReactionTime             Duration `yaml:"reaction_time"`              // Tr
	Speed                    Speed    `yaml:"speed"`                      // vr towards the operator, when not sent live
	Intrusion                Length   `yaml:"intrusion"`                  // C
	PositionUncertaintyHuman Length   `yaml:"position_uncertainty_human"` // Zd
	PositionUncertaintyRobot Length   `yaml:"position_uncertainty_robot"` // Zr
	// SystemLatency adds to the stopping time for the horizon the cell needs.
	SystemLatency Duration `yaml:"system_latency"`
	// DetectionCapability d of the sensing, for ISO 13855 (mm-based formula).
	DetectionCapability Length `yaml:"detection_capability"`
}

// FrameConfig is a robot frame with its pose before any robot state arrives.
type FrameConfig struct {
	Name string      `yaml:"name"`
	Pos  Point       `yaml:"pos"`
	RPY  *[3]float64 `yaml:"rpy"`
	Quat *[4]float64 `yaml:"quat"`
}
