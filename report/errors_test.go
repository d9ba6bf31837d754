package report

import (
	"bytes"
	"strings"
	"testing"

	"forereach/forecast"
	"forereach/safety"
)

func TestErrorsFigure(t *testing.T) {
	var rows []forecast.ErrorStats
	for _, m := range []string{"hold", "cv", "fitted"} {
		for i, h := range []float64{100, 200, 300} {
			rows = append(rows, forecast.ErrorStats{Model: m, HorizonMS: h, Samples: 10, RMSE: 0.01 * float64(i+1), P95: 0.02 * float64(i+1)})
		}
	}
	var b bytes.Buffer
	if err := ErrorsFigure(&b, rows, ErrorsOptions{Title: "pl3-palletiser infeed takes"}); err != nil {
		t.Fatal(err)
	}
	svg := b.String()
	for _, want := range []string{"<svg", "pl3-palletiser infeed takes", "RMSE", "95th percentile", ">hold<", ">fitted<", safety.Short} {
		if !strings.Contains(svg, want) {
			t.Errorf("figure lacks %q", want)
		}
	}
	if err := ErrorsFigure(&b, nil, ErrorsOptions{}); err == nil {
		t.Error("no rows: no error")
	}
}
