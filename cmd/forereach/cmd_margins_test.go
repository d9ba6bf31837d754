package main

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"forereach/zones"
)

// TestMarginsReferenceDistances runs `forereach margins` for cells whose
// stopping time T (system latency 0) and detection capability d are set,
// and checks the ISO 13855:2010 minimum distance it reports against hand
// calculations of S = K·T + C, C = 8·(d − 14 mm), K = 2000 mm/s,
// recalculated with 1600 mm/s when S > 500 mm (then not below 500 mm),
// never below 100 mm (ISO 13855:2010 6.2.3; clause number from memory).
func TestMarginsReferenceDistances(t *testing.T) {
	rec := rvRecording(t, "planted.csv")
	for _, c := range []struct {
		ts, d, want string
	}{
		{"320ms", "0.014", "S = K·T + C = 1600 mm/s × 0.320 s + 0 mm = 512 mm"},   // 640 > 500 → 1600·0.32 = 512
		{"300ms", "0.030", "S = K·T + C = 1600 mm/s × 0.300 s + 128 mm = 608 mm"}, // 728 > 500 → 480 + 128
		{"100ms", "0.014", "S = K·T + C = 2000 mm/s × 0.100 s + 0 mm = 200 mm"},   // 200
		{"200ms", "0.040", "S = K·T + C = 1600 mm/s × 0.200 s + 208 mm = 528 mm"}, // 608 > 500 → 320 + 208
	} {
		cell := rvCellFile(t, "stopping_time: 300ms", "stopping_time: "+c.ts, "system_latency: 60ms", "system_latency: 0s",
			"detection_capability: 0.014", "detection_capability: "+c.d)
		var out, errb bytes.Buffer
		if code := run([]string{"margins", "-c", cell, rec}, &out, &errb); code != 0 {
			t.Fatalf("T=%s d=%s: exit %d: %s", c.ts, c.d, code, errb.String())
		}
		if !strings.Contains(out.String(), c.want) {
			t.Errorf("T=%s d=%s: output lacks %q:\n%s", c.ts, c.d, c.want, out.String())
		}
	}
}

// TestMarginsCommand: the text report, the --json object with the zones
// section, and --yaml writing a zones section the loader accepts in place
// of the file's own.
func TestMarginsCommand(t *testing.T) {
	cell := rvCellFile(t, "model: fitted", "model: cv", "speed: 1.0", "speed: 0")
	rec := rvRecording(t, "planted.jsonl")
	yamlOut := filepath.Join(t.TempDir(), "zones.yaml")
	svgOut := filepath.Join(t.TempDir(), "sweep.svg")
	var out, errb bytes.Buffer
	if code := run([]string{"margins", "-c", cell, "--yaml", yamlOut, "--svg", svgOut, rec}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	svg, err := os.ReadFile(svgOut)
	if err != nil {
		t.Fatal(err)
	}
	if err := xml.Unmarshal(svg, new(struct{})); err != nil || !bytes.Contains(svg, []byte("robot-envelope")) {
		t.Errorf("--svg: not the sweep figure (%v)", err)
	}
	text := out.String()
	for _, want := range []string{
		"Horizon the cell needs: 360 ms = robot stopping time 300 ms + system latency 60 ms",
		// v_r = 0 here, Ss = 0.20 m given, C = 0 (d = 14 mm): Sh =
		// 1.6·(0.1 + 0.06 + 0.3) = 0.736 m, Sr = 0,
		// Sp = 0.736 + 0 + 0.20 + 0 + 0.05 + 0.02 = 1.006 m
		// (ISO/TS 15066:2016 5.5.4).
		"Sweep: robot-envelope", "= 736 + 0 + 200 + 0 + 50 + 20 = 1006 mm", "zones:\n  - name: \"robot-envelope\"",
		"ADVISORY ONLY",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}
	frag, err := os.ReadFile(yamlOut)
	if err != nil {
		t.Fatal(err)
	}
	src, err := os.ReadFile(cell)
	if err != nil {
		t.Fatal(err)
	}
	i, j := strings.Index(string(src), "\nzones:\n"), strings.Index(string(src), "\nstations:\n")
	spliced := string(src[:i+1]) + string(frag) + string(src[j:])
	if _, err := zones.Parse([]byte(spliced), "spliced"); err != nil {
		t.Errorf("the loader refuses the zones section: %v\n%s", err, frag)
	}

	out.Reset()
	errb.Reset()
	if code := run([]string{"margins", "--json", "-c", cell, rec}, &out, &errb); code != 0 {
		t.Fatalf("--json: exit %d: %s", code, errb.String())
	}
	var res struct {
		Horizon float64 `json:"horizon_s"`
		Zones   []struct {
			Name    string `json:"name"`
			Entries int    `json:"entries"`
			Sweep   []struct {
				Detected int `json:"detected"`
			} `json:"sweep"`
		} `json:"zones"`
		YAML string `json:"zones_yaml"`
	}
	if err := json.Unmarshal(out.Bytes(), &res); err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Horizon-0.36) > 1e-9 || len(res.Zones) != 9 || res.Zones[0].Entries != 3 || len(res.Zones[0].Sweep) != 101 ||
		!strings.HasPrefix(res.YAML, "zones:\n") {
		t.Errorf("JSON: horizon %g, %d zones, first %+v", res.Horizon, len(res.Zones), res.Zones[0].Entries)
	}
}
