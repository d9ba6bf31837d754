package review

import (
	"forereach/forecast"
	"forereach/policy"
	"forereach/zones"
)

// NewModel makes the forecast model the cell configuration asks for, with
// gains for the fitted model (nil: the gains shipped with forereach).
func NewModel(cfg *zones.Config, gains *forecast.Gains) (forecast.Model, error) {
	return forecast.NewModel(policy.ModelSettings(&cfg.Forecast, gains))
}
