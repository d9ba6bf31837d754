package zones

import (
	"fmt"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
)

// Vec returns the point as a vector in metres.
func (p Point) Vec() r3.Vec { return r3.Vec{X: float64(p[0]), Y: float64(p[1]), Z: float64(p[2])} }

// Rotation returns the box's rotation: from rpy (degrees, applied as
// Rz(yaw)·Ry(pitch)·Rx(roll)) or quat [w, x, y, z], the identity when
// neither is given.
func (o *OBoxConfig) Rotation() (r3.Rotation, error) {
	return rotationOf(o.RPY, o.Quat)
}

func rotationOf(rpy *[3]float64, quat *[4]float64) (r3.Rotation, error) {
	switch {
	case rpy != nil && quat != nil:
		return r3.Rotation{}, &ShapeError{Field: "quat", Msg: "give the rotation as rpy or as quat, not both"}
	case quat != nil:
		q, err := RotationQuat(quat[0], quat[1], quat[2], quat[3])
		if err != nil {
			return r3.Rotation{}, &ShapeError{Field: "quat", Msg: err.(*ShapeError).Msg}
		}
		return q, nil
	case rpy != nil:
		if !finite(rpy[0]) || !finite(rpy[1]) || !finite(rpy[2]) {
			return r3.Rotation{}, &ShapeError{Field: "rpy", Msg: "NaN/Inf"}
		}
		return RotationRPY(rpy[0], rpy[1], rpy[2]), nil
	}
	return r3.Rotation{Real: 1}, nil
}

// Shape builds the zone's shape, in the zone's own frame (the cell for a
// fixed zone, the robot frame for an attached one). The error is a
// *ShapeError whose Field is relative to the shape section, or a plain
// error when the zone does not have exactly one shape.
func (z *ZoneConfig) Shape() (Shape, error) { return z.shape() }

func (z *ZoneConfig) shape() (Shape, error) {
	switch set := z.shapeSections(); len(set) {
	case 0:
		return nil, fmt.Errorf("zone %q has no shape", z.Name)
	case 1:
	default:
		return nil, fmt.Errorf("zone %q has %d shapes (%v), want one", z.Name, len(set), set)
	}
	switch {
	case z.Box != nil:
		return NewBox(z.Box.Min.Vec(), z.Box.Max.Vec())
	case z.OBox != nil:
		rot, err := z.OBox.Rotation()
		if err != nil {
			return nil, err
		}
		return NewOBox(z.OBox.Center.Vec(), z.OBox.Size.Vec(), rot)
	case z.Sphere != nil:
		return NewSphere(z.Sphere.Center.Vec(), float64(z.Sphere.Radius))
	case z.Cylinder != nil:
		return NewCylinder(z.Cylinder.A.Vec(), z.Cylinder.B.Vec(), float64(z.Cylinder.Radius))
	case z.Capsule != nil:
		return NewCapsule(z.Capsule.A.Vec(), z.Capsule.B.Vec(), float64(z.Capsule.Radius))
	default:
		fp := make([]r2.Vec, len(z.Prism.Footprint))
		for i, p := range z.Prism.Footprint {
			fp[i] = r2.Vec{X: float64(p[0]), Y: float64(p[1])}
		}
		return NewPrism(fp, float64(z.Prism.ZMin), float64(z.Prism.ZMax))
	}
}

// FramePose returns the configured pose of the robot frame called name
// (robot.frames): the pose attached zones take before any robot state
// arrives.
func (c *Config) FramePose(name string) (Pose, error) {
	for _, f := range c.Robot.Frames {
		if f.Name != name {
			continue
		}
		rot, err := rotationOf(f.RPY, f.Quat)
		if err != nil {
			return Pose{}, fmt.Errorf("robot frame %q: %w", name, err)
		}
		p := Pose{Pos: f.Pos.Vec(), Rot: rot}
		if err := p.Validate(); err != nil {
			return Pose{}, fmt.Errorf("robot frame %q: %w", name, err)
		}
		return p, nil
	}
	return Pose{}, fmt.Errorf("no robot frame %q in robot.frames", name)
}

// BuildZones turns the loaded configuration into a ZoneSet, in the order of
// the file. Zones attached to a robot frame start at the frame's
// configured pose (robot.frames) until robot state moves them. A
// configuration returned by Load or Parse always builds; an error means the
// Config was made or changed by other means.
func (c *Config) BuildZones() (*ZoneSet, error) {
	zs := make([]Zone, len(c.Zones))
	for i := range c.Zones {
		zc := &c.Zones[i]
		s, err := zc.shape()
		if err != nil {
			return nil, fmt.Errorf("zones[%d] %q: %w", i, zc.Name, err)
		}
		z := Zone{Name: zc.Name, Shape: s, Margin: float64(zc.Margin), Frame: zc.Frame}
		if len(zc.Rules) > 0 {
			z.Rules = append([]string(nil), zc.Rules...)
		}
		if zc.Frame != "" {
			z.Pose, err = c.FramePose(zc.Frame)
			if err != nil {
				return nil, fmt.Errorf("zones[%d] %q: %w", i, zc.Name, err)
			}
		}
		zs[i] = z
	}
	return NewZoneSet(zs)
}
