package main

import (
	"bytes"
	"os"
	"strings"
	"testing"
)

func runCmd(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = run(args, &o, &e)
	return code, o.String(), e.String()
}

func TestZonesCheckValid(t *testing.T) {
	code, out, errOut := runCmd("zones", "check", "../../testdata/pl3-palletiser.yaml")
	if code != 0 {
		t.Fatalf("exit %d, stderr:\n%s", code, errOut)
	}
	lines := strings.Split(strings.TrimRight(out, "\n"), "\n")
	if len(lines) != 2+9 {
		t.Fatalf("want a summary, a header and 9 zone rows, got:\n%s", out)
	}
	if !strings.HasPrefix(lines[0], "cell pl3-palletiser: ../../testdata/pl3-palletiser.yaml (units m, sha256 ") ||
		!strings.HasSuffix(lines[0], "valid, 9 zones, 4 stations") {
		t.Errorf("summary line %q", lines[0])
	}
	// Rows against the file: pallet-a is the box [4.8, 0.6, 0] .. [6, 1.4, 2],
	// volume 1.2 × 0.8 × 2 = 1.92 m³, margin 0.15 m.
	rows := map[string][]string{}
	for _, l := range lines[2:] {
		f := strings.Fields(l)
		rows[f[0]] = f
	}
	want := map[string]string{
		"pallet-a":       "pallet-a box 4.800 0.600 0.000 6.000 1.400 2.000 1.9200 0.150 -",
		"robot-envelope": "robot-envelope prism 1.700 0.300 0.000 6.200 4.600 3.000 51.4200 0.200 -",
		// Tool frame at (3.0, 3.4, 2.1) pointing down: capsule axis from
		// z 2.05 to 1.65, radius 0.35; volume π·0.35²·0.4 + 4/3·π·0.35³.
		"tool-gripper": "tool-gripper capsule 2.650 3.050 1.300 3.350 3.750 2.400 0.3335 0.150 tool (at its configured pose)",
	}
	for name, w := range want {
		if got := strings.Join(rows[name], " "); got != w {
			t.Errorf("row %s:\n got  %s\n want %s", name, got, w)
		}
	}
	if errOut != "" {
		t.Errorf("stderr on success: %q", errOut)
	}
}

func TestZonesCheckMillimetres(t *testing.T) {
	code, out, errOut := runCmd("zones", "check", "../../testdata/kitting-bench-mm.yaml")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	// The bin rack is [1250, 450, 900] .. [1600, 800, 1300] mm: shown in m.
	if !strings.Contains(out, "bin-rack      box         1.250   0.450   0.900    1.600   0.800   1.300") {
		t.Errorf("bin-rack row not in metres:\n%s", out)
	}
}

func TestZonesCheckInvalid(t *testing.T) {
	path := "../../zones/testdata/invalid/many-errors.yaml"
	code, out, errOut := runCmd("zones", "check", path)
	if code != 1 {
		t.Fatalf("exit %d, want 1", code)
	}
	if out != "" {
		t.Errorf("stdout on failure: %q", out)
	}
	lines := strings.Split(strings.TrimRight(errOut, "\n"), "\n")
	if len(lines) != 7 {
		t.Fatalf("want 6 errors and a count, got:\n%s", errOut)
	}
	for _, l := range lines[:6] {
		if !strings.HasPrefix(l, path+":") {
			t.Errorf("error line without file position: %q", l)
		}
	}
	if !strings.Contains(lines[0], `:9:15: zones[0] "robot-pedestal": cylinder.radius: must be > 0`) {
		t.Errorf("first error %q", lines[0])
	}
	if lines[6] != "forereach zones check: "+path+": 6 problems" {
		t.Errorf("last line %q", lines[6])
	}
}

func TestZonesUsage(t *testing.T) {
	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"zones"}, 2, "want a subcommand"},
		{[]string{"zones", "frobnicate"}, 2, `unknown subcommand "frobnicate"`},
		{[]string{"zones", "check"}, 2, "want one cell configuration file, got 0"},
		{[]string{"zones", "check", "a.yaml", "b.yaml"}, 2, "got 2 arguments"},
		{[]string{"zones", "check", "-nosuchflag", "a.yaml"}, 2, "flag provided but not defined"},
		{[]string{"zones", "check", "no/such/file.yaml"}, 1, "no such file"},
	} {
		code, _, errOut := runCmd(c.args...)
		if code != c.code || !strings.Contains(errOut, c.msg) {
			t.Errorf("%v: exit %d, stderr %q; want exit %d and %q", c.args, code, errOut, c.code, c.msg)
		}
	}
	code, out, _ := runCmd("help", "zones")
	if code != 0 || !strings.Contains(out, "forereach zones check CELL.yaml") {
		t.Errorf("help zones: %d %q", code, out)
	}
}

// TestZonesCheckEveryExample: every cell file shipped in testdata is valid.
func TestZonesCheckEveryExample(t *testing.T) {
	files, err := os.ReadDir("../../testdata")
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for _, f := range files {
		if !strings.HasSuffix(f.Name(), ".yaml") {
			continue
		}
		n++
		if code, _, errOut := runCmd("zones", "check", "../../testdata/"+f.Name()); code != 0 {
			t.Errorf("%s: exit %d\n%s", f.Name(), code, errOut)
		}
	}
	if n < 2 {
		t.Errorf("only %d cell files in testdata", n)
	}
}
