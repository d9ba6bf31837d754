package bus

import (
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/forecast"
	"forereach/internal/shareddata"
)

// c3dSampleDir returns ../shared/data/c3d beside the repository, or skips the
// test when it is absent.
func c3dSampleDir(t *testing.T) string {
	t.Helper()
	return shareddata.Require(t, "c3d", "README.md")
}

// readC3D opens path through OpenSamples and returns every sample; row
// errors are returned separately.
func readC3D(t *testing.T, path string, markers map[string]string) ([]forecast.Sample, []*forecast.RowError) {
	t.Helper()
	sf, err := OpenSamples(path, OpenOptions{Markers: markers})
	if err != nil {
		t.Fatalf("OpenSamples: %v", err)
	}
	defer sf.Close()
	var out []forecast.Sample
	var rows []*forecast.RowError
	for {
		s, err := sf.Next()
		if err == io.EOF {
			return out, rows
		}
		var re *forecast.RowError
		if errors.As(err, &re) {
			rows = append(rows, re)
			continue
		}
		if err != nil {
			t.Fatalf("Next: %v", err)
		}
		out = append(out, s)
	}
}

func TestOpenC3DMarkers(t *testing.T) {
	path := filepath.Join(c3dSampleDir(t), "sample37", "ART-Human_hands_real_no6dof.c3d")
	got, rows := readC3D(t, path, map[string]string{"Human4:RHAN": "right"})
	if len(rows) != 0 || len(got) != 969 {
		t.Fatalf("%d samples, %d row errors; want 969, 0", len(got), len(rows))
	}
	for i, s := range got {
		if s.Track != "right" || s.T != float64(i)/60 {
			t.Fatalf("sample %d: track %q t %v, want right at %v", i, s.Track, s.T, float64(i)/60)
		}
	}
	// ../shared/data/c3d/README.md, Sample37 hands expected points table,
	// Human4:RHAN at frames 1, 485 and 969, mm printed to 4 decimals
	// (within 1e-4 mm = 1e-7 m).
	for _, c := range []struct {
		frame int
		mm    r3.Vec
	}{
		{1, r3.Vec{X: -362.3200, Y: -233.0069, Z: 1308.1613}},
		{485, r3.Vec{X: -293.2908, Y: 38.6837, Z: 922.9434}},
		{969, r3.Vec{X: 212.0092, Y: -1179.9551, Z: 1101.1696}},
	} {
		p := got[c.frame-1].P
		want := r3.Scale(0.001, c.mm)
		if d := r3.Sub(p, want); math.Abs(d.X) > 1e-7 || math.Abs(d.Y) > 1e-7 || math.Abs(d.Z) > 1e-7 {
			t.Errorf("frame %d: %v m, want %v m", c.frame, p, want)
		}
	}

	// Labels without the subject prefix; samples of a frame in file
	// order (LHAN is point 11, RHAN point 35).
	got, _ = readC3D(t, path, map[string]string{"RHAN": "right", "LHAN": "left"})
	if len(got) != 2*969 || got[0].Track != "left" || got[1].Track != "right" || got[0].T != got[1].T || got[2].T != 1.0/60 {
		t.Fatalf("%d samples, first %+v %+v", len(got), got[0], got[1])
	}
	// README Sample37 hands, frame 1 Human4:LHAN x = 550.5975 mm.
	if math.Abs(got[0].P.X-0.5505975) > 1e-7 {
		t.Errorf("LHAN frame 1 x = %v m", got[0].P.X)
	}
}

func TestOpenC3DMissingLabel(t *testing.T) {
	path := filepath.Join(c3dSampleDir(t), "sample37", "ART-Human_hands_real_no6dof.c3d")
	_, err := OpenSamples(path, OpenOptions{Markers: map[string]string{"RFIN": "right", "Human4:LHAN": "left"}})
	if err == nil {
		t.Fatal("no error for a missing label")
	}
	msg := err.Error()
	for _, want := range []string{path, `"RFIN"`, "Human4:PELV", "Human4:RHAN", "Human4:RFOO"} {
		if !strings.Contains(msg, want) {
			t.Errorf("error %q does not mention %s", msg, want)
		}
	}
	if strings.Contains(msg, `"Human4:LHAN" not`) {
		t.Errorf("error names a label that exists: %q", msg)
	}
	_, err = OpenSamples(path, OpenOptions{Markers: map[string]string{"RHAN": "x", "LHAN": "x"}})
	if err == nil || !strings.Contains(err.Error(), `both map to track "x"`) {
		t.Errorf("two labels on one track: %v", err)
	}
}

// Gaps give no sample: ../shared/data/c3d/README.md, Sample01 "Validity
// runs" (LFT1 valid in frames 26-445 only) and "226 invalid" of 11,700.
func TestOpenC3DGaps(t *testing.T) {
	dir := c3dSampleDir(t)
	got, _ := readC3D(t, filepath.Join(dir, "sample01", "Eb015vr.c3d"), map[string]string{"LFT1": "left"})
	if len(got) != 420 || got[0].T != 25.0/50 || got[len(got)-1].T != 444.0/50 {
		t.Fatalf("%d samples from %v to %v s; want 420 from 0.5 to 8.88", len(got), got[0].T, got[len(got)-1].T)
	}
	// README Sample01 expected points, frame 225 LFT1 (−209.5000,
	// 1188.6667, 108.3333) mm.
	want := r3.Vec{X: -0.2095, Y: 1.1886667, Z: 0.1083333}
	if d := r3.Sub(got[225-26].P, want); r3.Norm(d) > 2e-7 {
		t.Errorf("frame 225: %v, want %v", got[225-26].P, want)
	}
	all, _ := readC3D(t, filepath.Join(dir, "sample01", "Eb015pi.c3d"), nil)
	tracks := map[string]int{}
	for _, s := range all {
		tracks[s.Track]++
	}
	if len(all) != 11700-226 || len(tracks) != 26 || tracks["RFT1"] != 450 || tracks["PV3"] != 403 || tracks["pv4"] == 0 {
		t.Errorf("%d samples on %d tracks (RFT1 %d, PV3 %d)", len(all), len(tracks), tracks["RFT1"], tracks["PV3"])
	}
}

// A non-finite stored real is a row error naming file, frame and label;
// reading goes on. A truncated file is a fatal error naming the data
// section and the byte offset.
func TestOpenC3DBadData(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join(c3dSampleDir(t), "sample01", "Eb015pr.c3d"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	bad := append([]byte(nil), raw...)
	// Data starts at block 11 (byte 5120); frame 1 point 1 (RFT1) x as a
	// little-endian NaN.
	copy(bad[5120:], []byte{0, 0, 0xc0, 0x7f})
	path := filepath.Join(dir, "nan.c3d")
	if err := os.WriteFile(path, bad, 0o644); err != nil {
		t.Fatal(err)
	}
	got, rows := readC3D(t, path, map[string]string{"RFT1": "right"})
	if len(rows) != 1 || rows[0].Line != 1 || rows[0].Field != "RFT1" || rows[0].File != path || len(got) != 449 || got[0].T != 1.0/50 {
		t.Fatalf("rows %v, %d samples", rows, len(got))
	}

	// 26 points × 16 bytes + 64 analog × 4 bytes = 672 bytes per frame;
	// cut inside frame 3.
	path = filepath.Join(dir, "short.c3d")
	if err := os.WriteFile(path, raw[:5120+2*672+100], 0o644); err != nil {
		t.Fatal(err)
	}
	sf, err := OpenSamples(path, OpenOptions{Markers: map[string]string{"RFT1": "right"}})
	if err != nil {
		t.Fatal(err)
	}
	defer sf.Close()
	n := 0
	for {
		_, err = sf.Next()
		if err != nil {
			break
		}
		n++
	}
	if n != 2 || err == io.EOF || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "data section frame 3 at byte 6464") {
		t.Errorf("after %d samples: %v", n, err)
	}
}
