package zones

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"testing"
)

// FuzzParse feeds arbitrary bytes to the loader. It must never panic; every
// error must be a non-empty *ConfigErrors whose entries carry the file name,
// a line and a message; and every configuration it accepts must build into
// a zone set. The seed corpus (testdata/fuzz/FuzzParse) holds the example
// cells and every file of testdata/invalid.
func FuzzParse(f *testing.F) {
	f.Add([]byte("cell: c\nzones:\n  - name: z\n    sphere: {center: [0, 0, 1], radius: 0.2}\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		cfg, err := Parse(data, "fuzz.yaml")
		if err != nil {
			if cfg != nil {
				t.Fatal("Config returned along with an error")
			}
			var ces *ConfigErrors
			if !errors.As(err, &ces) || len(*ces) == 0 {
				t.Fatalf("error %T %v is not a non-empty *ConfigErrors", err, err)
			}
			for _, e := range *ces {
				if e.File != "fuzz.yaml" || e.Line < 1 || e.Col < 0 || e.Msg == "" {
					t.Fatalf("error without a position or message: %+v", e)
				}
			}
			return
		}
		sum := sha256.Sum256(data)
		if cfg.Digest != hex.EncodeToString(sum[:]) {
			t.Fatal("wrong digest")
		}
		zs, err := cfg.BuildZones()
		if err != nil {
			t.Fatalf("accepted configuration does not build: %v", err)
		}
		if zs.Len() != len(cfg.Zones) || zs.Len() == 0 {
			t.Fatalf("zone set of %d zones from %d", zs.Len(), len(cfg.Zones))
		}
	})
}
