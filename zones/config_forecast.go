package zones

// ForecastConfig selects and tunes the forecaster used by the advisory
// engine. Owned by the forecasting work; fields may be added here.
type ForecastConfig struct {
	// Model: "hold", "cv", "ca", "kalman-cv", "kalman-ca" or "fitted".
	Model string `yaml:"model"`
	// Gains is the gains file for the fitted model (relative to the config
	// file); empty: the default gains shipped with forereach.
	Gains string `yaml:"gains"`
	// Step and Horizon of the forecast path (default 20ms and 500ms).
	Step    Duration `yaml:"step"`
	Horizon Duration `yaml:"horizon"`
	// Window is the estimation window of the local polynomial estimator.
	Window Duration `yaml:"window"`
	// GapReset: a gap between samples longer than this resets the track.
	GapReset Duration `yaml:"gap_reset"`
	// MeasurementNoise is the position noise standard deviation for the
	// Kalman filters.
	MeasurementNoise Length `yaml:"measurement_noise"`
	// ProcessNoise is σ_w of the Kalman filters' discrete white-noise
	// process: the standard deviation of the acceleration (kalman-cv, m/s²)
	// or jerk (kalman-ca, m/s³) held constant over each sample interval.
	// Always in metres per s² or s³, whatever the file's length unit.
	ProcessNoise float64 `yaml:"process_noise"`
	// Latency: input latency to compensate. "auto" is not a duration: use
	// LatencyAuto to take the live service's measured latency.
	Latency     Duration `yaml:"latency"`
	LatencyAuto bool     `yaml:"latency_auto"`
	// Coverage is the quantile of the uncertainty radius for the fitted
	// model (default 0.95).
	Coverage float64 `yaml:"coverage"`
}
