package main

import (
	"encoding/xml"
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"forereach/zones"
)

// TestZonesDraw: the SVG is well-formed XML and names every zone of the
// cell in its text.
func TestZonesDraw(t *testing.T) {
	for _, cell := range []string{"pl3-palletiser.yaml", "kitting-bench-mm.yaml"} {
		path := "../../testdata/" + cell
		out := filepath.Join(t.TempDir(), "layout.svg")
		code, stdout, stderr := runCmd("zones", "draw", path, "-o", out)
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", cell, code, stderr)
		}
		if !strings.HasPrefix(stdout, "wrote "+out) {
			t.Errorf("stdout %q", stdout)
		}
		f, err := os.Open(out)
		if err != nil {
			t.Fatal(err)
		}
		var text strings.Builder
		dec := xml.NewDecoder(f)
		for {
			tok, err := dec.Token()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatalf("%s: not XML: %v", cell, err)
			}
			if cd, ok := tok.(xml.CharData); ok {
				text.Write(cd)
				text.WriteByte('\n')
			}
		}
		f.Close()
		cfg, err := zones.Load(path)
		if err != nil {
			t.Fatal(err)
		}
		for _, z := range cfg.Zones {
			if !strings.Contains(text.String(), z.Name) {
				t.Errorf("%s: zone %q not in the SVG", cell, z.Name)
			}
		}
	}
}

func TestZonesDrawUsage(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct {
		args []string
		code int
		msg  string
	}{
		{[]string{"zones", "draw", "../../testdata/pl3-palletiser.yaml"}, 2, "-o FILE is required"},
		{[]string{"zones", "draw", "../../testdata/pl3-palletiser.yaml", "-o", dir + "/x.svg", "-views", "top"}, 2, `unknown view "top"`},
		{[]string{"zones", "draw", "../../testdata/pl3-palletiser.yaml", "-o", dir + "/x.svg", "-grid", "-1"}, 2, "-grid -1"},
		{[]string{"zones", "draw", "../../zones/testdata/invalid/nan.yaml", "-o", dir + "/x.svg"}, 1, "nan.yaml:5:26:"},
	} {
		code, _, errOut := runCmd(c.args...)
		if code != c.code || !strings.Contains(errOut, c.msg) {
			t.Errorf("%v: exit %d, stderr %q; want exit %d and %q", c.args, code, errOut, c.code, c.msg)
		}
	}
	if _, err := os.Stat(dir + "/x.svg"); err == nil {
		t.Error("an SVG was written for a failed draw")
	}
	// Only the plan, to standard output.
	code, out, _ := runCmd("zones", "draw", "../../testdata/pl3-palletiser.yaml", "-o", "-", "-views", "plan")
	if code != 0 || !strings.Contains(out, "<svg") || strings.Contains(out, "side elevation") {
		t.Errorf("-o - -views plan: exit %d, %d bytes", code, len(out))
	}
}
