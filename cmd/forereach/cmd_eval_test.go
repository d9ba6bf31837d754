package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"forereach/forecast"
	"forereach/zones"
)

// writeLineCSV writes a recording of two tracks moving at constant velocity
// (m/s) along straight lines at 120 Hz for dur seconds, in the pl3-palletiser
// cell's frame.
func writeLineCSV(t *testing.T, dir, name string, v float64, dur float64, extra string) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("t,track,x,y,z\n")
	n := int(dur * 120)
	for i := 0; i < n; i++ {
		ti := float64(i) / 120
		fmt.Fprintf(&b, "%.6f,op1/right,%.9f,-1.2,0.95\n", ti, 0.4+v*ti)
		fmt.Fprintf(&b, "%.6f,op1/left,0.1,%.9f,0.95\n", ti, -1.1-v*ti)
	}
	b.WriteString(extra)
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

type evalOut struct {
	Rows []forecast.ErrorStats `json:"rows"`
}

func runForecastCmd(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = run(args, &o, &e)
	return code, o.String(), e.String()
}

// On straight lines at constant speed v, hold's error at horizon h is v·h
// exactly (closed form) and cv's and ca's are zero.
func TestEvalJSONOnStraightLines(t *testing.T) {
	dir := t.TempDir()
	f := writeLineCSV(t, dir, "op1_take1.csv", 0.8, 3, "")
	code, out, errs := runForecastCmd("eval", "--model", "hold,cv,ca@150ms,kalman-cv", "--horizons", "100ms,300ms", "--json", f)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	dec := json.NewDecoder(strings.NewReader(out))
	var res evalOut
	if err := dec.Decode(&res); err != nil {
		t.Fatal(err)
	}
	if _, err := dec.Token(); err != io.EOF {
		t.Fatalf("more than one JSON value on stdout: %q", out)
	}
	// Every documented key is present.
	for _, key := range []string{`"model"`, `"horizon_ms"`, `"samples"`, `"rmse_m"`, `"p50_m"`, `"p90_m"`, `"p95_m"`, `"p99_m"`, `"r2_disp"`, `"coverage"`} {
		if !strings.Contains(out, key) {
			t.Errorf("JSON lacks %s", key)
		}
	}
	if len(res.Rows) != 8 {
		t.Fatalf("%d rows, want 4 models × 2 horizons", len(res.Rows))
	}
	for _, r := range res.Rows {
		if r.Samples < 500 {
			t.Errorf("%s %g ms: %d samples", r.Model, r.HorizonMS, r.Samples)
		}
		want := 0.0
		if r.Model == "hold" {
			want = 0.8 * r.HorizonMS / 1000
		}
		// The times are written with 6 decimals (jitter up to 5e-7 s), so
		// cv and ca are exact only to about v·5e-7·(h/window) m.
		tol := 1e-5
		if r.Model == "kalman-cv" {
			tol = 1e-4 // converges on the line after the warm-up
		}
		if math.Abs(r.RMSE-want) > tol || math.Abs(r.P99-want) > tol {
			t.Errorf("%s %g ms: RMSE %g p99 %g, want %g", r.Model, r.HorizonMS, r.RMSE, r.P99, want)
		}
	}
}

func TestEvalBadRowsAndUsage(t *testing.T) {
	dir := t.TempDir()
	f := writeLineCSV(t, dir, "op1_take1.csv", 0.5, 2, "1.0,op1/right,1,2,3\n2.1,op1/right,zz,2,3\n")
	code, out, errs := runForecastCmd("eval", "--model", "hold", f)
	if code != 0 || !strings.Contains(out, "hold") {
		t.Fatalf("exit %d: %s %s", code, out, errs)
	}
	n := 2*240 + 1 // header line + samples
	for _, want := range []string{
		fmt.Sprintf("%s:%d: t: time 1 s is before the previous sample", f, n+1),
		fmt.Sprintf("%s:%d: x: \"zz\" is not a number", f, n+2),
	} {
		if !strings.Contains(errs, want) {
			t.Errorf("stderr lacks %q:\n%s", want, errs)
		}
	}
	for _, args := range [][]string{
		{"eval", "--model", "nope", f},
		{"eval", "--horizons", "100.5ms", f},
		{"eval", "--model", "hold@20ms", f},
		{"eval"},
		{"eval", "--units", "furlong", f},
	} {
		if code, _, _ := runForecastCmd(args...); code != 2 {
			t.Errorf("%v: exit %d, want 2", args, code)
		}
	}
	if code, _, errs := runForecastCmd("eval", filepath.Join(dir, "missing.csv")); code != 1 || !strings.Contains(errs, "missing.csv") {
		t.Errorf("missing file: exit %d %s", code, errs)
	}
}

// fit writes a gains file that eval reads back; the fitted model is
// cross-validated when no gains file is given (two groups here).
func TestFitThenEval(t *testing.T) {
	dir := t.TempDir()
	a := writeLineCSV(t, dir, "op1_take1.csv", 0.6, 3, "")
	b := writeLineCSV(t, dir, "op2_take1.csv", 0.9, 3, "")
	gains := filepath.Join(dir, "gains.yaml")
	code, out, errs := runForecastCmd("fit", "--horizons", "100ms,200ms", "--date", "2026-12-01", "--out", gains, a, b)
	if code != 0 || !strings.Contains(out, "2 groups (op1, op2)") {
		t.Fatalf("fit: exit %d\n%s\n%s", code, out, errs)
	}
	fh, err := os.Open(gains)
	if err != nil {
		t.Fatal(err)
	}
	g, err := forecast.ReadGains(fh, gains)
	fh.Close()
	if err != nil {
		t.Fatal(err)
	}
	if g.Fitted.Date != "2026-12-01" || len(g.Fitted.Files) != 2 || g.Fitted.SampleRateHz != 120 || len(g.Horizons) != 2 {
		t.Fatalf("provenance %+v", g.Fitted)
	}
	for _, args := range [][]string{
		{"eval", "--model", "fitted", "--gains", gains, "--horizons", "100ms,200ms", "--json", a, b},
		{"eval", "--model", "fitted", "--horizons", "100ms,200ms", "--json", a, b},
	} {
		code, out, errs := runForecastCmd(args...)
		if code != 0 {
			t.Fatalf("%v: exit %d %s", args, code, errs)
		}
		var res evalOut
		if err := json.Unmarshal([]byte(out), &res); err != nil {
			t.Fatal(err)
		}
		// Straight lines: the fitted terms reduce to v·τ, which the fit finds.
		for _, r := range res.Rows {
			if r.Samples == 0 || r.RMSE > 1e-3 {
				t.Errorf("%v: %+v", args, r)
			}
		}
	}
	if code, _, errs := runForecastCmd("fit", "--out", gains, a); code != 1 || !strings.Contains(errs, "two groups") {
		t.Errorf("one group: exit %d %s", code, errs)
	}
}

// The cell configuration's forecast defaults are package forecast's.
func TestForecastConfigDefaultsAgree(t *testing.T) {
	for _, c := range []struct {
		name      string
		cfg, want float64
	}{
		{"step", zones.DefaultForecastStep.Seconds(), forecast.DefaultStep},
		{"horizon", zones.DefaultForecastHorizon.Seconds(), forecast.DefaultHorizon},
		{"gap_reset", zones.DefaultForecastGapReset.Seconds(), forecast.DefaultGapReset},
		{"measurement_noise", zones.DefaultMeasurementNoise, forecast.DefaultMeasurementNoise},
		{"process_noise (cv)", zones.DefaultProcessNoiseCV, forecast.DefaultProcessNoiseCV},
		{"process_noise (ca)", zones.DefaultProcessNoiseCA, forecast.DefaultProcessNoiseCA},
		{"coverage", zones.DefaultForecastCoverage, forecast.DefaultCoverage},
	} {
		if c.cfg != c.want {
			t.Errorf("%s: cell configuration default %g, forecast default %g", c.name, c.cfg, c.want)
		}
	}
	if err := (forecast.Settings{Kind: zones.DefaultForecastModel}).Check(); err != nil {
		t.Errorf("default model: %v", err)
	}
}

func TestEvalPlot(t *testing.T) {
	dir := t.TempDir()
	f := writeLineCSV(t, dir, "op1_take1.csv", 0.8, 2, "")
	svg := filepath.Join(dir, "errors.svg")
	code, _, errs := runForecastCmd("eval", "--model", "hold,cv", "--plot", svg, f)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errs)
	}
	b, err := os.ReadFile(svg)
	if err != nil || !bytes.Contains(b, []byte("<svg")) || !bytes.Contains(b, []byte(">hold<")) {
		t.Fatalf("figure: %v %.200s", err, b)
	}
}
