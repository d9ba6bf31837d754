package policy

import (
	"forereach/zones"
)

// FramePose is the pose of one named robot frame.
type FramePose struct {
	Frame string
	Pose  zones.Pose
}

// RobotState is one update of the robot: poses of named frames (zones
// attached to a frame move with it) and, when known, the data of the
// ISO/TS 15066 protective separation distance. Lengths in metres, speeds in
// m/s, times in seconds.
type RobotState struct {
	T      float64 // time on the samples' axis; never earlier than the previous state
	Frames []FramePose

	// HasSpeed: Speed is the robot's speed towards the operator (v_r).
	// A negative value (moving away) is taken as 0.
	HasSpeed bool
	Speed    float64

	// HasStopping: StoppingTime (Ts, > 0 to be used) and, when > 0,
	// StoppingDistance (Ss) are the robot's current stopping data. When
	// StoppingDistance is 0 the engine uses v_r·Ts (see
	// safety.ProtectiveSeparation).
	HasStopping      bool
	StoppingTime     float64
	StoppingDistance float64
}
