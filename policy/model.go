package policy

import (
	"forereach/forecast"
	"forereach/zones"
)

// ModelSettings turns the forecast section of a cell configuration into
// forecast.Settings; an empty model is the configuration default
// (zones.DefaultForecastModel). gains is the fitted model's gains (nil: the
// gains shipped with forereach); only the fitted model uses it. Reading a
// gains file named in the section is the caller's job (bus.ModelFromConfig).
func ModelSettings(fc *zones.ForecastConfig, gains *forecast.Gains) forecast.Settings {
	kind := fc.Model
	if kind == "" {
		kind = zones.DefaultForecastModel
	}
	return forecast.Settings{
		Kind:             kind,
		Window:           fc.Window.Seconds(),
		MeasurementNoise: float64(fc.MeasurementNoise),
		ProcessNoise:     fc.ProcessNoise,
		Coverage:         fc.Coverage,
		Gains:            gains,
	}
}
