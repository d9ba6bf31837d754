package review

import (
	"forereach/forecast"
	"forereach/zones"
)

// ModelSettings turns the forecast section of a cell configuration into
// forecast.Settings. gains is the fitted model's gains (nil: the default
// gains); it is used only by the fitted model.
func ModelSettings(fc *zones.ForecastConfig, gains *forecast.Gains) forecast.Settings {
	kind := fc.Model
	if kind == "" {
		kind = forecast.KindFitted
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

// NewModel makes the forecast model the cell configuration asks for.
func NewModel(cfg *zones.Config, gains *forecast.Gains) (forecast.Model, error) {
	return forecast.NewModel(ModelSettings(&cfg.Forecast, gains))
}
