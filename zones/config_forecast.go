package zones

import (
	"math"
	"time"
)

// ForecastConfig selects and tunes the forecaster used by the advisory
// engine. Owned by the forecasting work; fields may be added here. The
// defaults (Defaults) are those of package forecast (forecast.Default*);
// a test in cmd/forereach checks that the two agree.
type ForecastConfig struct {
	// Model: "hold", "cv", "ca", "kalman-cv", "kalman-ca" or "fitted"
	// (default fitted). The fitted model scores best on the recorded
	// wrists forereach was tuned on (see `forereach eval`).
	Model string `yaml:"model"`
	// Gains is the gains file for the fitted model (relative to the config
	// file); empty: the default gains shipped with forereach.
	Gains string `yaml:"gains"`
	// Step and Horizon of the forecast path (default 20ms and 500ms).
	Step    Duration `yaml:"step"`
	Horizon Duration `yaml:"horizon"`
	// Window is the estimation window of the local polynomial estimator
	// (cv: linear fit, ca: quadratic fit); empty: the model's default.
	Window Duration `yaml:"window"`
	// GapReset: a gap between samples longer than this resets the track
	// (default 250ms).
	GapReset Duration `yaml:"gap_reset"`
	// MeasurementNoise is the position noise standard deviation for the
	// Kalman filters (default 2 mm).
	MeasurementNoise Length `yaml:"measurement_noise"`
	// ProcessNoise is σ_w of the Kalman filters' discrete white-noise
	// process: the standard deviation of the acceleration (kalman-cv) or
	// jerk (kalman-ca) held constant over each sample interval, in the
	// file's length unit per s² or s³ (defaults 30 m/s² and 300 m/s³).
	ProcessNoise float64 `yaml:"process_noise"`
	// Latency: input latency to compensate. "auto" is not a duration: use
	// LatencyAuto to take the live service's measured latency.
	Latency     Duration `yaml:"latency"`
	LatencyAuto bool     `yaml:"latency_auto"`
	// Coverage is the probability the uncertainty radius is meant to cover,
	// for the Kalman filters and the fitted model (default 0.95).
	Coverage float64 `yaml:"coverage"`
}

// Forecast defaults (the same values as package forecast's).
const (
	DefaultForecastModel     = "fitted"
	DefaultForecastStep      = 20 * time.Millisecond
	DefaultForecastHorizon   = 500 * time.Millisecond
	DefaultForecastGapReset  = 250 * time.Millisecond
	DefaultMeasurementNoise  = 0.002 // m
	DefaultProcessNoiseCV    = 30.0  // m/s²
	DefaultProcessNoiseCA    = 300.0 // m/s³
	DefaultForecastCoverage  = 0.95
	maxForecastHorizon       = 5 * time.Second
	maxForecastPoints        = 1000
	maxForecastWindow        = 2 * time.Second
	forecastModelsForMessage = "hold, cv, ca, kalman-cv, kalman-ca or fitted"
)

// ScaleUnits converts the process noise from the file's length unit.
func (f *ForecastConfig) ScaleUnits(metresPerUnit float64) {
	f.ProcessNoise *= metresPerUnit
}

// Defaults fills in the forecast section.
func (f *ForecastConfig) Defaults() {
	if f.Model == "" {
		f.Model = DefaultForecastModel
	}
	if f.Step == 0 {
		f.Step = Duration(DefaultForecastStep)
	}
	if f.Horizon == 0 {
		f.Horizon = Duration(DefaultForecastHorizon)
	}
	if f.GapReset == 0 {
		f.GapReset = Duration(DefaultForecastGapReset)
	}
	if f.MeasurementNoise == 0 {
		f.MeasurementNoise = DefaultMeasurementNoise
	}
	if f.ProcessNoise == 0 {
		if f.Model == "kalman-ca" {
			f.ProcessNoise = DefaultProcessNoiseCA
		} else {
			f.ProcessNoise = DefaultProcessNoiseCV
		}
	}
	if f.Coverage == 0 {
		f.Coverage = DefaultForecastCoverage
	}
}

// Check checks the forecast section (after defaults).
func (f *ForecastConfig) Check(c *Checker) {
	switch f.Model {
	case "hold", "cv", "ca", "kalman-cv", "kalman-ca", "fitted":
	default:
		c.Errorf("model", "%q is not a forecast model (want %s)", f.Model, forecastModelsForMessage)
	}
	if f.Gains != "" && f.Model != "fitted" {
		c.Errorf("gains", "a gains file is used only by model fitted (model is %q)", f.Model)
	}
	step, hor := time.Duration(f.Step), time.Duration(f.Horizon)
	if step <= 0 {
		c.Errorf("step", "must be > 0")
	}
	if hor <= 0 || hor > maxForecastHorizon {
		c.Errorf("horizon", "%v: must be > 0 and at most %v", hor, maxForecastHorizon)
	} else if step > 0 && step > hor {
		c.Errorf("step", "%v is longer than the horizon %v", step, hor)
	} else if step > 0 && hor/step > maxForecastPoints {
		c.Errorf("step", "%v gives %d path points over %v: at most %d", step, hor/step, hor, maxForecastPoints)
	}
	if w := time.Duration(f.Window); w < 0 || w > maxForecastWindow {
		c.Errorf("window", "%v: must be between 0 (the model's default) and %v", w, maxForecastWindow)
	}
	if f.GapReset <= 0 {
		c.Errorf("gap_reset", "must be > 0")
	}
	if v := float64(f.MeasurementNoise); !(v > 0) || math.IsInf(v, 0) {
		c.Errorf("measurement_noise", "must be > 0")
	}
	if v := f.ProcessNoise; !(v > 0) || math.IsInf(v, 0) {
		c.Errorf("process_noise", "must be > 0")
	}
	if !(f.Coverage > 0 && f.Coverage < 1) {
		c.Errorf("coverage", "%g: must be between 0 and 1 (exclusive)", f.Coverage)
	}
	if f.Latency < 0 {
		c.Errorf("latency", "must be >= 0")
	}
	if f.LatencyAuto && f.Latency != 0 {
		c.Errorf("latency_auto", "give either latency or latency_auto, not both")
	}
}
