package policy

import (
	"errors"
	"fmt"

	"forereach/forecast"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// NewEngine makes the engine of the cell described by cfg, whose zones are
// zs (built from the same configuration, e.g. with cfg.BuildZones), and
// forecasts every track with a Forecaster of model. It reads cfg.Policy,
// cfg.Forecast (step, horizon, latency, gap_reset) and cfg.Robot; zero
// fields take the defaults (see zones.PolicyConfig). The engine moves the
// attached zones of zs (Robot): give each engine its own zone set.
func NewEngine(cfg *zones.Config, zs *zones.ZoneSet, model forecast.Model, opts Options) (*Engine, error) {
	if zs == nil {
		return nil, errors.New("policy: no zone set")
	}
	return newEngine(cfg, zoneSetSource{zs}, model, opts)
}

// zoneSetSource adapts a *zones.ZoneSet to zoneSource.
type zoneSetSource struct{ s *zones.ZoneSet }

func (z zoneSetSource) count() int { return z.s.Len() }

func (z zoneSetSource) info(i int) (string, string, []string) {
	zn := z.s.Zone(i)
	return zn.Name, zn.Frame, zn.Rules
}

func (z zoneSetSource) sweep(path zones.PathView, cutoff float64, out []zones.SweepResult, skip []bool) {
	z.s.SweepSelected(path, cutoff, out, skip)
}

func (z zoneSetSource) distances(p r3.Vec, out []float64) { z.s.SignedDistances(p, out) }

func (z zoneSetSource) setFrame(frame string, pose zones.Pose) error {
	if z.s.SetFramePose(frame, pose) < 0 {
		return fmt.Errorf("frame %q: pose refused (not finite)", frame)
	}
	return nil
}
