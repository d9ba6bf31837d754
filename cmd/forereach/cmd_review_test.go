package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"forereach/bus"
	"forereach/forecast"
	"forereach/safety"
	"forereach/sim"
	"forereach/zones"
)

const rvCell = "../../testdata/pl3-palletiser.yaml"

// rvCellFile writes a copy of the example cell with the given textual
// replacements (each must apply) and returns its path.
func rvCellFile(t *testing.T, repl ...string) string {
	t.Helper()
	src, err := os.ReadFile(rvCell)
	if err != nil {
		t.Fatal(err)
	}
	s := string(src)
	for i := 0; i+1 < len(repl); i += 2 {
		if !strings.Contains(s, repl[i]) {
			t.Fatalf("cell file has no %q", repl[i])
		}
		s = strings.Replace(s, repl[i], repl[i+1], 1)
	}
	path := filepath.Join(t.TempDir(), "cell.yaml")
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// rvRecording simulates the planted-incident scenario of testdata/review
// into a JSONL or CSV recording (by the extension of name).
func rvRecording(t *testing.T, name string) string {
	t.Helper()
	cfg, err := zones.Load(rvCell)
	if err != nil {
		t.Fatal(err)
	}
	spath := "../../testdata/review/planted.yaml"
	f, err := os.Open(spath)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := sim.Load(f, spath, cfg)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), name)
	out, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer out.Close()
	run := sc.Run(7)
	if strings.HasSuffix(name, ".csv") {
		w := sim.NewCSVWriter(out)
		for m, ok := run.Next(); ok; m, ok = run.Next() {
			if err := w.Write(&m); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Flush(); err != nil {
			t.Fatal(err)
		}
		return path
	}
	rec, err := bus.NewRecorder(out, bus.Header{Cell: cfg.Cell, Source: "test"})
	if err != nil {
		t.Fatal(err)
	}
	for m, ok := run.Next(); ok; m, ok = run.Next() {
		if err := rec.Sample(&bus.SampleRecord{Sample: forecast.Sample{Track: m.Track, T: m.T, P: m.P}}); err != nil {
			t.Fatal(err)
		}
	}
	if err := rec.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// plantedCellFile is the example cell with the hold forecast and no robot
// speed (see the review package's planted test for why).
func plantedCellFile(t *testing.T) string {
	return rvCellFile(t, "model: fitted", "model: hold", "speed: 1.0", "speed: 0")
}

func TestReviewCommand(t *testing.T) {
	cell := plantedCellFile(t)
	rec := rvRecording(t, "planted.jsonl")
	var out, errb bytes.Buffer
	if code := run([]string{"review", "-c", cell, rec}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	text := out.String()
	for _, want := range []string{
		"Summary: 3 entries (1 missed, 2 warned less than 360 ms ahead), 1 near misses (closer than 100 mm), 1 false alarms of 5 warning episodes (window 2 s), 2 tracking losses",
		"Zone entries (3)", "MISSED", "Near misses (1)", "Tracking-loss episodes (2)", "— (not near a zone)",
		strings.SplitN(safety.Notice, "\n", 2)[0],
	} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}

	// --html: one self-contained page with the figures.
	html := filepath.Join(t.TempDir(), "review.html")
	out.Reset()
	errb.Reset()
	if code := run([]string{"review", "-c", cell, "--html", html, rec}, &out, &errb); code != 0 {
		t.Fatalf("--html: exit %d: %s", code, errb.String())
	}
	page, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(page), "<svg"); n != 6 { // plan, 4 incidents, lead times
		t.Errorf("--html: %d figures, want 6", n)
	}

	// --json: exactly one object, the notice on stderr.
	out.Reset()
	errb.Reset()
	if code := run([]string{"review", "--json", "-c", cell, rec}, &out, &errb); code != 0 {
		t.Fatalf("--json: exit %d: %s", code, errb.String())
	}
	dec := json.NewDecoder(&out)
	var res struct {
		Totals struct {
			Entries     int `json:"entries"`
			Missed      int `json:"missed"`
			NearMisses  int `json:"near_misses"`
			FalseAlarms int `json:"false_alarms"`
		} `json:"totals"`
		Entries []struct {
			Lead *float64 `json:"lead_s"`
		} `json:"entries"`
		Notice string `json:"safety_notice"`
	}
	if err := dec.Decode(&res); err != nil {
		t.Fatal(err)
	}
	if dec.More() {
		t.Error("more than one JSON value")
	}
	if res.Totals.Entries != 3 || res.Totals.Missed != 1 || res.Totals.NearMisses != 1 || res.Totals.FalseAlarms != 1 ||
		len(res.Entries) != 3 || res.Notice != safety.Notice {
		t.Errorf("JSON: %+v", res)
	}
	if !strings.Contains(errb.String(), "ADVISORY ONLY") {
		t.Error("--json: no safety notice on stderr")
	}
}

// TestReviewCommandCSV reviews the same scenario from a CSV file (through
// bus.OpenSamples): the same counts.
func TestReviewCommandCSV(t *testing.T) {
	cell := plantedCellFile(t)
	rec := rvRecording(t, "planted.csv")
	var out, errb bytes.Buffer
	if code := run([]string{"review", "-c", cell, rec}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	if !strings.Contains(out.String(), "Summary: 3 entries (1 missed") {
		t.Errorf("CSV review:\n%s", out.String())
	}
}

// TestReviewBadLines: unreadable lines are reported with file:line:field
// and the rest of the recording is reviewed.
func TestReviewBadLines(t *testing.T) {
	cell := plantedCellFile(t)
	rec := rvRecording(t, "planted.jsonl")
	src, err := os.ReadFile(rec)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(string(src), "\n")
	lines[10] = `{"v":1,"kind":"sample","t":0.05,"track":"op1/right","pos":[1,2]}` + "\n"
	lines[20] = "not json\n"
	bad := filepath.Join(t.TempDir(), "bad.jsonl")
	if err := os.WriteFile(bad, []byte(strings.Join(lines, "")), 0o644); err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	if code := run([]string{"review", "-c", cell, bad}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	text := out.String()
	for _, want := range []string{bad + ":11: pos: want 3 numbers", bad + ":21: ", "2 unreadable lines", "Zone entries (3)"} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}
}

func TestReviewUsage(t *testing.T) {
	cell := plantedCellFile(t)
	csv := rvRecording(t, "planted.csv")
	for _, args := range [][]string{
		{"review", csv},                                 // no -c
		{"review", "-c", cell},                          // no recording
		{"review", "-c", cell, "--as-recorded", csv},    // as recorded needs JSONL
		{"review", "-c", cell, "--windows", "-1", csv},  // bad window count
		{"review", "-c", cell, "--units", "inch", csv},  // bad unit
		{"margins", "-c", cell, "--target", "1.5", csv}, // bad target
		{"margins", "-c", cell, "--step", "600mm", csv}, // step above max
		{"margins", "-c", cell, "--max", "wide", csv},   // not a length
	} {
		var out, errb bytes.Buffer
		if code := run(args, &out, &errb); code != 2 {
			t.Errorf("%v: exit %d, want 2 (stderr %s)", args, code, errb.String())
		}
	}
	// A recording that does not exist: exit 1 with the file named.
	var out, errb bytes.Buffer
	if code := run([]string{"review", "-c", cell, "/nonexistent/x.jsonl"}, &out, &errb); code != 1 || !strings.Contains(errb.String(), "/nonexistent/x.jsonl") {
		t.Errorf("missing file: exit %d, stderr %q", code, errb.String())
	}
}
