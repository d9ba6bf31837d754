package review

import (
	"bytes"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// TestZonesYAMLAccepted writes the zones section with new margins for the
// example cells (one in metres, one in millimetres), puts it in place of
// the file's own zones section and loads the result: the loader accepts
// it, the margins are the new ones, and every zone is the same solid
// (signed distances at random points agree to 1e-9 m).
func TestZonesYAMLAccepted(t *testing.T) {
	for _, name := range []string{"pl3-palletiser.yaml", "kitting-bench-mm.yaml"} {
		path := filepath.Join("..", "testdata", name)
		src, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		orig, err := zones.Parse(src, path)
		if err != nil {
			t.Fatal(err)
		}
		margins := map[string]float64{}
		for i, z := range orig.Zones {
			margins[z.Name] = 0.011 * float64(i+1)
		}
		var frag bytes.Buffer
		if err := WriteZonesYAML(&frag, orig, margins, func(z string) string { return "from the test: " + z }); err != nil {
			t.Fatal(err)
		}
		// Replace the top-level zones section (up to the next top-level key).
		re := regexp.MustCompile(`(?ms)^zones:\n.*?(^[a-z_]+:)`)
		if !re.Match(src) {
			t.Fatalf("%s: no zones section found", name)
		}
		spliced := re.ReplaceAll(src, append(frag.Bytes(), []byte("\n$1")...))
		got, err := zones.Parse(spliced, name+" (new margins)")
		if err != nil {
			t.Fatalf("%s: the loader refuses the fragment: %v\n%s", name, err, frag.String())
		}
		if len(got.Zones) != len(orig.Zones) {
			t.Fatalf("%s: %d zones, want %d", name, len(got.Zones), len(orig.Zones))
		}
		a, err := orig.BuildZones()
		if err != nil {
			t.Fatal(err)
		}
		b, err := got.BuildZones()
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(3, 4))
		for i := 0; i < a.Len(); i++ {
			za, zb := a.Zone(i), b.Zone(i)
			if za.Name != zb.Name || za.Frame != zb.Frame || len(za.Rules) != len(zb.Rules) {
				t.Errorf("%s: zone %d: %q/%q frame %q/%q", name, i, za.Name, zb.Name, za.Frame, zb.Frame)
			}
			if math.Abs(zb.Margin-margins[za.Name]) > 1e-12 {
				t.Errorf("%s: zone %q: margin %g, want %g", name, za.Name, zb.Margin, margins[za.Name])
			}
			bb := za.Bounds()
			for k := 0; k < 200; k++ {
				p := r3.Vec{
					X: bb.Min.X - 0.5 + rng.Float64()*(bb.Max.X-bb.Min.X+1),
					Y: bb.Min.Y - 0.5 + rng.Float64()*(bb.Max.Y-bb.Min.Y+1),
					Z: bb.Min.Z - 0.5 + rng.Float64()*(bb.Max.Z-bb.Min.Z+1),
				}
				if da, db := za.SignedDistance(p), zb.SignedDistance(p); math.Abs(da-db) > 1e-9 {
					t.Fatalf("%s: zone %q at %v: distance %g, after rewriting %g", name, za.Name, p, da, db)
				}
			}
		}
	}
}
