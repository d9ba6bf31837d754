package bus

import (
	"fmt"
	"os"
	"path/filepath"

	"forereach/forecast"
	"forereach/policy"
	"forereach/zones"
)

// ModelFromConfig makes the forecast model the forecast section names. A
// gains file is read relative to the configuration file.
func ModelFromConfig(cfg *zones.Config) (forecast.Model, error) {
	fc := &cfg.Forecast
	var gains *forecast.Gains
	if fc.Gains != "" && (fc.Model == "" || fc.Model == forecast.KindFitted) {
		path := fc.Gains
		if cfg.Source != "" && !filepath.IsAbs(path) {
			path = filepath.Join(filepath.Dir(cfg.Source), path)
		}
		f, err := os.Open(path)
		if err != nil {
			return nil, fmt.Errorf("forecast.gains: %w", err)
		}
		defer f.Close()
		if gains, err = forecast.ReadGains(f, path); err != nil {
			return nil, fmt.Errorf("forecast.gains: %w", err)
		}
	}
	m, err := forecast.NewModel(policy.ModelSettings(fc, gains))
	if err != nil {
		return nil, fmt.Errorf("forecast: %w", err)
	}
	return m, nil
}

// NewEngine builds the cell's zones, its forecast model and the advisory
// engine from a loaded configuration, with at most bus.max_tracks tracks.
func NewEngine(cfg *zones.Config) (*policy.Engine, error) {
	zs, err := cfg.BuildZones()
	if err != nil {
		return nil, err
	}
	m, err := ModelFromConfig(cfg)
	if err != nil {
		return nil, err
	}
	return policy.NewEngine(cfg, zs, m, policy.Options{MaxTracks: cfg.Bus.MaxTracks})
}
