package zones

import "time"

// Config is a cell configuration file after loading (Load, Parse): every
// length is in metres, every speed in metres per second, whatever units the
// file used.
//
// The YAML layout mirrors these structs (yaml tags). Decoding is strict:
// unknown keys are errors. Sections other than cell, units, zones and
// stations are filled by the components that use them (bus, forecast,
// policy, robot); each lives in its own file, config_<section>.go, and may
// fill in defaults and check itself through the Defaulter, UnitScaler and
// Checkable interfaces (see Parse for the order).
type Config struct {
	// Cell names the cell; it goes into MQTT topics, so it has no '/', '+',
	// '#', spaces or control characters. Required.
	Cell string `yaml:"cell"`
	// Units is the length unit of the file: "m" or "mm". Lengths, points
	// and speeds (per second) are converted to metres on load; durations
	// and angles are not. Default "m" (set on load).
	Units    string          `yaml:"units"`
	Zones    []ZoneConfig    `yaml:"zones"`
	Stations []StationConfig `yaml:"stations"` // named work positions (simulator targets)
	Bus      BusConfig       `yaml:"bus"`
	Forecast ForecastConfig  `yaml:"forecast"`
	Policy   PolicyConfig    `yaml:"policy"`
	Robot    RobotConfig     `yaml:"robot"`

	// Source is the file name given to Load or Parse (relative paths in the
	// sections are relative to its directory).
	Source string `yaml:"-"`
	// Digest is the hex SHA-256 of the file's bytes, for status messages.
	Digest string `yaml:"-"`
}

// Length is a length in the file's units, converted to metres on load.
type Length float64

// Speed is a speed in the file's units per second, converted to m/s on load.
type Speed float64

// Point is a position in the file's units, converted to metres on load.
type Point [3]Length

// Duration is written as a Go duration string ("350ms", "1.5s").
type Duration time.Duration

// Seconds returns the duration in seconds.
func (d Duration) Seconds() float64 { return time.Duration(d).Seconds() }

// ZoneConfig is one hazard zone as written in the file. Exactly one shape
// section is set.
type ZoneConfig struct {
	// Name identifies the zone in advisories and reports: required,
	// unique in the cell.
	Name   string `yaml:"name"`
	Margin Length `yaml:"margin"` // advisory margin around the shape, >= 0
	// Frame attaches the zone to a robot frame (see RobotConfig.Frames); the
	// shape is then given in that frame's coordinates. Empty: fixed in the cell.
	Frame string `yaml:"frame"`
	// Rules names the advisory rules that apply to this zone (policy section);
	// empty: the policy's default rules.
	Rules []string `yaml:"rules"`

	Box      *BoxConfig      `yaml:"box"`
	OBox     *OBoxConfig     `yaml:"obox"`
	Sphere   *SphereConfig   `yaml:"sphere"`
	Cylinder *CylinderConfig `yaml:"cylinder"`
	Capsule  *CapsuleConfig  `yaml:"capsule"`
	Prism    *PrismConfig    `yaml:"prism"`
}

// BoxConfig is an axis-aligned box.
type BoxConfig struct {
	Min Point `yaml:"min"`
	Max Point `yaml:"max"`
}

// OBoxConfig is an oriented box: centre, full size along its own axes, and a
// rotation given either as roll/pitch/yaw in degrees (applied as
// Rz(yaw)·Ry(pitch)·Rx(roll)) or as a unit quaternion [w, x, y, z].
type OBoxConfig struct {
	Center Point       `yaml:"center"`
	Size   Point       `yaml:"size"`
	RPY    *[3]float64 `yaml:"rpy"`
	Quat   *[4]float64 `yaml:"quat"`
}

// SphereConfig is a ball.
type SphereConfig struct {
	Center Point  `yaml:"center"`
	Radius Length `yaml:"radius"`
}

// CylinderConfig is a solid cylinder between two end points, any axis.
type CylinderConfig struct {
	A      Point  `yaml:"a"`
	B      Point  `yaml:"b"`
	Radius Length `yaml:"radius"`
}

// CapsuleConfig is the set of points within Radius of segment AB.
type CapsuleConfig struct {
	A      Point  `yaml:"a"`
	B      Point  `yaml:"b"`
	Radius Length `yaml:"radius"`
}

// PrismConfig is a vertical prism: a simple polygon footprint in x,y
// extruded from ZMin to ZMax.
type PrismConfig struct {
	Footprint [][2]Length `yaml:"footprint"`
	ZMin      Length      `yaml:"zmin"`
	ZMax      Length      `yaml:"zmax"`
}

// StationConfig is a named position in the cell where operators work
// (infeed, pallet station, ...), used by the simulator's scenarios.
type StationConfig struct {
	Name string `yaml:"name"`
	At   Point  `yaml:"at"`
}
