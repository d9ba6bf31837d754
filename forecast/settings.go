package forecast

import (
	"fmt"
	"math"
)

// Model kinds accepted by NewModel.
const (
	KindHold     = "hold"      // last position
	KindCV       = "cv"        // constant velocity from a local linear fit
	KindCA       = "ca"        // constant acceleration from a local quadratic fit
	KindKalmanCV = "kalman-cv" // Kalman filter, constant-velocity process model
	KindKalmanCA = "kalman-ca" // Kalman filter, constant-acceleration process model
	KindFitted   = "fitted"    // per-horizon gains fitted on recordings
)

// Kinds lists the model kinds in the order tables show them.
var Kinds = []string{KindHold, KindCV, KindCA, KindKalmanCV, KindKalmanCA, KindFitted}

// Settings choose and tune a model. Zero fields take the defaults of
// DefaultSettings; all values are SI (metres, seconds).
type Settings struct {
	// Kind is one of the Kind* constants.
	Kind string
	// Window is the estimation window (seconds) of the local polynomial fit
	// used by cv (linear fit) and ca (quadratic fit). Zero: the kind's
	// default (DefaultCVWindow, DefaultCAWindow).
	Window float64
	// MeasurementNoise is the standard deviation (m) of the position noise,
	// per axis, for the Kalman filters.
	MeasurementNoise float64
	// ProcessNoise is σ_w of the discrete white-noise process of the Kalman
	// filters: the standard deviation of the acceleration (kalman-cv, m/s²)
	// or jerk (kalman-ca, m/s³) held constant over each sample interval.
	// Zero: the kind's default.
	ProcessNoise float64
	// Coverage is the probability the uncertainty radius is meant to cover
	// (0 < Coverage < 1; default 0.95). The Kalman filters use the
	// chi-distribution quantile of their predicted covariance; the fitted
	// model the quantiles recorded in its gains file.
	Coverage float64
	// Gains are the fitted model's gains; nil: DefaultGains().
	Gains *Gains
}

// Defaults of the models. The windows come from a search on the recorded
// wrists of ../shared/data/motion (120 Hz motion capture; `forereach eval
// --model cv@20ms,cv@40ms,...`): over all of it the best cv window is 20 ms
// and the best ca window 100 ms, per person 10–50 ms for cv; 30 ms is a
// little more robust to noisier trackers at a cost of 2% in RMSE there. The
// Kalman noises are the best of a search on the same data (σ_w 10–120 m/s²
// for kalman-cv, 30–3000 m/s³ for kalman-ca).
const (
	DefaultCVWindow         = 0.030 // s
	DefaultCAWindow         = 0.100 // s
	DefaultMeasurementNoise = 0.002 // m
	DefaultProcessNoiseCV   = 30.0  // m/s²
	DefaultProcessNoiseCA   = 300   // m/s³
	DefaultCoverage         = 0.95
	DefaultGapReset         = 0.25 // s
	DefaultStep             = 0.02 // s
	DefaultHorizon          = 0.5  // s
	maxWindow               = 2.0  // s, upper bound accepted for Window
)

// withDefaults returns s with zero fields replaced by defaults.
func (s Settings) withDefaults() Settings {
	if s.Window == 0 {
		switch s.Kind {
		case KindCA:
			s.Window = DefaultCAWindow
		default:
			s.Window = DefaultCVWindow
		}
	}
	if s.MeasurementNoise == 0 {
		s.MeasurementNoise = DefaultMeasurementNoise
	}
	if s.ProcessNoise == 0 {
		if s.Kind == KindKalmanCA {
			s.ProcessNoise = DefaultProcessNoiseCA
		} else {
			s.ProcessNoise = DefaultProcessNoiseCV
		}
	}
	if s.Coverage == 0 {
		s.Coverage = DefaultCoverage
	}
	return s
}

// Check reports the first problem with s (after defaults), naming the field.
func (s Settings) Check() error {
	s = s.withDefaults()
	switch s.Kind {
	case KindHold, KindCV, KindCA, KindKalmanCV, KindKalmanCA, KindFitted:
	default:
		return fmt.Errorf("model: %q is not a model (want hold, cv, ca, kalman-cv, kalman-ca or fitted)", s.Kind)
	}
	if !(s.Window > 0 && s.Window <= maxWindow) {
		return fmt.Errorf("window: %g s: must be > 0 and <= %g s", s.Window, maxWindow)
	}
	if !(s.MeasurementNoise > 0) || math.IsInf(s.MeasurementNoise, 0) {
		return fmt.Errorf("measurement_noise: %g m: must be > 0 and finite", s.MeasurementNoise)
	}
	if !(s.ProcessNoise > 0) || math.IsInf(s.ProcessNoise, 0) {
		return fmt.Errorf("process_noise: %g: must be > 0 and finite", s.ProcessNoise)
	}
	if !(s.Coverage > 0 && s.Coverage < 1) {
		return fmt.Errorf("coverage: %g: must be between 0 and 1 (exclusive)", s.Coverage)
	}
	if s.Kind == KindFitted && s.Gains != nil {
		if err := s.Gains.Check(); err != nil {
			return fmt.Errorf("gains: %w", err)
		}
	}
	return nil
}

// NewModel returns the model s describes, with defaults for zero fields.
func NewModel(s Settings) (Model, error) {
	if err := s.Check(); err != nil {
		return nil, err
	}
	s = s.withDefaults()
	switch s.Kind {
	case KindHold:
		return holdModel{}, nil
	case KindCV:
		return &polyModel{name: KindCV, deg: 1, window: s.Window}, nil
	case KindCA:
		return &polyModel{name: KindCA, deg: 2, window: s.Window}, nil
	case KindKalmanCV:
		return newKalmanModel(KindKalmanCV, 2, s)
	case KindKalmanCA:
		return newKalmanModel(KindKalmanCA, 3, s)
	case KindFitted:
		g := s.Gains
		if g == nil {
			var err error
			if g, err = DefaultGains(); err != nil {
				return nil, err
			}
		}
		return newFittedModel(g, s.Coverage)
	}
	return nil, fmt.Errorf("model: %q: not implemented", s.Kind)
}
