package zones

import (
	"strings"
	"testing"
	"time"
)

const forecastTestCell = `cell: pl3-palletiser
zones:
  - name: pallet-a
    box: {min: [4.8, 0.6, 0.0], max: [6.0, 1.4, 2.0]}
`

func TestForecastDefaultsAndUnits(t *testing.T) {
	cfg, err := Parse([]byte(forecastTestCell), "cell.yaml")
	if err != nil {
		t.Fatal(err)
	}
	f := cfg.Forecast
	if f.Model != "fitted" || time.Duration(f.Step) != 20*time.Millisecond || time.Duration(f.Horizon) != 500*time.Millisecond ||
		time.Duration(f.GapReset) != 250*time.Millisecond || f.MeasurementNoise != 0.002 || f.ProcessNoise != 30 || f.Coverage != 0.95 {
		t.Errorf("defaults %+v", f)
	}
	// A millimetre file: lengths and the process noise are converted.
	src := "units: mm\n" + strings.ReplaceAll(strings.ReplaceAll(forecastTestCell, "4.8, 0.6, 0.0", "4800, 600, 0"), "6.0, 1.4, 2.0", "6000, 1400, 2000") +
		"forecast: {model: kalman-ca, measurement_noise: 3, process_noise: 250000}\n"
	cfg, err = Parse([]byte(src), "cell-mm.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if f := cfg.Forecast; f.MeasurementNoise != 0.003 || f.ProcessNoise != 250 {
		t.Errorf("mm file: measurement_noise %g m, process_noise %g m/s³", f.MeasurementNoise, f.ProcessNoise)
	}
}

func TestForecastChecks(t *testing.T) {
	src := forecastTestCell + `forecast:
  model: kalman
  gains: my-gains.yaml
  step: 600ms
  horizon: 400ms
  coverage: 1.5
  latency: 40ms
  latency_auto: true
`
	_, err := Parse([]byte(src), "cell.yaml")
	if err == nil {
		t.Fatal("accepted")
	}
	for _, want := range []string{
		`cell.yaml:6:10: forecast.model: "kalman" is not a forecast model`,
		`cell.yaml:7:10: forecast.gains: a gains file is used only by model fitted`,
		`cell.yaml:8:9: forecast.step: 600ms is longer than the horizon 400ms`,
		`cell.yaml:10:13: forecast.coverage: 1.5: must be between 0 and 1`,
		`cell.yaml:12:17: forecast.latency_auto: give either latency or latency_auto`,
	} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error lacks %q:\n%v", want, err)
		}
	}
}
