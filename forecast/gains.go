package forecast

import (
	"bytes"
	_ "embed"
	"fmt"
	"io"
	"math"

	"gopkg.in/yaml.v3"
)

// GainsFormat identifies the gains file layout.
const GainsFormat = "forereach-gains/1"

// Gains is the content of a gains file: the fitted model's per-horizon gains,
// radius scale and radius quantiles, with a record of what they were fitted
// on and how they scored in cross-validation.
type Gains struct {
	Format     string   `yaml:"format"`
	FeatureSet string   `yaml:"feature_set"`
	Features   []string `yaml:"features"`
	ScaleTerms []string `yaml:"scale_terms"`
	// Levels are the coverage levels of each horizon's RadiusZ quantiles.
	Levels   []float64      `yaml:"levels"`
	Fitted   Provenance     `yaml:"fitted"`
	Horizons []HorizonGains `yaml:"horizons"`
}

// Provenance records what gains were fitted on and how.
type Provenance struct {
	Date         string     `yaml:"date"` // as given to Fit (the core reads no clock)
	Tool         string     `yaml:"tool,omitempty"`
	SampleRateHz float64    `yaml:"sample_rate_hz"`   // median over the files
	Ridge        float64    `yaml:"ridge"`            // relative ridge penalty; 0: chosen per horizon (HorizonGains.Ridge)
	Method       string     `yaml:"method,omitempty"` // how the gains were fitted
	Folds        string     `yaml:"folds"`
	Files        []FileInfo `yaml:"files"`
	Credit       string     `yaml:"credit,omitempty"`
}

// FileInfo is one file a fit used.
type FileInfo struct {
	Name    string  `yaml:"name"`
	Group   string  `yaml:"group"`
	RateHz  float64 `yaml:"rate_hz"` // median sample rate
	Samples int     `yaml:"samples"`
}

// HorizonGains are the fitted values at one horizon.
type HorizonGains struct {
	MS    float64   `yaml:"ms"`
	Ridge float64   `yaml:"ridge,omitempty"` // the relative ridge penalty the gains were fitted with
	Gains []float64 `yaml:"gains"`           // one per feature
	Scale []float64 `yaml:"scale"`           // one per scale term
	// RadiusZ are quantiles, at Levels, of the error divided by the scale,
	// seen in cross-validation.
	RadiusZ []float64 `yaml:"radius_z"`
	// CV are the cross-validated errors at this horizon (grouped by file
	// group, never scored on a group the gains were fitted on).
	CV CVStats `yaml:"cv"`
}

// CVStats summarise cross-validated errors at one horizon (metres).
type CVStats struct {
	Samples  int     `yaml:"samples"`
	RMSE     float64 `yaml:"rmse_m"`
	P50      float64 `yaml:"p50_m"`
	P90      float64 `yaml:"p90_m"`
	P95      float64 `yaml:"p95_m"`
	P99      float64 `yaml:"p99_m"`
	Coverage float64 `yaml:"coverage"` // of the radius at the coverage of the fit (default 0.95)
}

// maxGain bounds every number of a gains file: fitted values are of order 1,
// and the bound keeps forecasts finite whatever a file says.
const maxGain = 1e3

// Check reports the first problem with g.
func (g *Gains) Check() error {
	if g.Format != GainsFormat {
		return fmt.Errorf("format: %q: want %q", g.Format, GainsFormat)
	}
	if g.FeatureSet != FeatureSet {
		return fmt.Errorf("feature_set: %q: this forereach uses %q (refit the gains)", g.FeatureSet, FeatureSet)
	}
	if len(g.Features) != NumFeatures {
		return fmt.Errorf("features: %d names, want %d", len(g.Features), NumFeatures)
	}
	for i, n := range g.Features {
		if n != featureNames[i] {
			return fmt.Errorf("features[%d]: %q, want %q", i, n, featureNames[i])
		}
	}
	if len(g.ScaleTerms) != NumScale {
		return fmt.Errorf("scale_terms: %d names, want %d", len(g.ScaleTerms), NumScale)
	}
	for i, n := range g.ScaleTerms {
		if n != scaleNames[i] {
			return fmt.Errorf("scale_terms[%d]: %q, want %q", i, n, scaleNames[i])
		}
	}
	if len(g.Levels) == 0 {
		return fmt.Errorf("levels: none")
	}
	for i, l := range g.Levels {
		if !(l > 0 && l < 1) || (i > 0 && l <= g.Levels[i-1]) {
			return fmt.Errorf("levels[%d]: %g: levels must increase within (0, 1)", i, l)
		}
	}
	if len(g.Horizons) == 0 {
		return fmt.Errorf("horizons: none")
	}
	for i, h := range g.Horizons {
		where := fmt.Sprintf("horizons[%d]", i)
		if !(h.MS > 0 && h.MS <= 1e4) || (i > 0 && h.MS <= g.Horizons[i-1].MS) {
			return fmt.Errorf("%s.ms: %g: horizons must be increasing, between 0 and 10000 ms", where, h.MS)
		}
		if len(h.Gains) != NumFeatures {
			return fmt.Errorf("%s.gains: %d values, want %d", where, len(h.Gains), NumFeatures)
		}
		if len(h.Scale) != NumScale {
			return fmt.Errorf("%s.scale: %d values, want %d", where, len(h.Scale), NumScale)
		}
		if len(h.RadiusZ) != len(g.Levels) {
			return fmt.Errorf("%s.radius_z: %d values, want one per level (%d)", where, len(h.RadiusZ), len(g.Levels))
		}
		for j, v := range h.Gains {
			if !(math.Abs(v) <= maxGain) {
				return fmt.Errorf("%s.gains[%d]: %g: must be finite, within ±%g", where, j, v, maxGain)
			}
		}
		for j, v := range h.Scale {
			if !(v >= 0 && v <= maxGain) {
				return fmt.Errorf("%s.scale[%d]: %g: must be between 0 and %g", where, j, v, maxGain)
			}
		}
		for j, v := range h.RadiusZ {
			if !(v >= 0 && v <= maxGain) || (j > 0 && v < h.RadiusZ[j-1]) {
				return fmt.Errorf("%s.radius_z[%d]: %g: must be between 0 and %g, non-decreasing", where, j, v, maxGain)
			}
		}
	}
	return nil
}

// ReadGains decodes and checks a gains file; name is used in messages.
// Unknown keys are errors.
func ReadGains(r io.Reader, name string) (*Gains, error) {
	dec := yaml.NewDecoder(r)
	dec.KnownFields(true)
	var g Gains
	if err := dec.Decode(&g); err != nil {
		if err == io.EOF {
			return nil, fmt.Errorf("%s: empty gains file", name)
		}
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if err := g.Check(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return &g, nil
}

// WriteGains encodes g as YAML.
func WriteGains(w io.Writer, g *Gains) error {
	fmt.Fprintf(w, "# forereach fitted-model gains (%s). Generated by `forereach fit`; see fitted.files for the data.\n", FeatureSet)
	enc := yaml.NewEncoder(w)
	enc.SetIndent(2)
	if err := enc.Encode(g); err != nil {
		return err
	}
	return enc.Close()
}

//go:embed default_gains.yaml
var defaultGainsYAML []byte

// DefaultGainsYAML returns the bytes of the gains file shipped with
// forereach.
func DefaultGainsYAML() []byte { return append([]byte(nil), defaultGainsYAML...) }

// DefaultGains returns the gains shipped with forereach, fitted on the
// development recordings named in its provenance.
func DefaultGains() (*Gains, error) {
	return ReadGains(bytes.NewReader(defaultGainsYAML), "default gains")
}
