package sim

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"forereach/zones"
)

// exampleCell loads the example cell configuration.
func exampleCell(t testing.TB) *zones.Config {
	t.Helper()
	cell, err := zones.Load(filepath.Join("..", "testdata", "pl3-palletiser.yaml"))
	if err != nil {
		t.Fatalf("example cell: %v", err)
	}
	return cell
}

// exampleCells are the example cells by name.
var exampleCells = map[string]string{
	"pl3-palletiser": "pl3-palletiser.yaml",
	"kitting-bench":  "kitting-bench-mm.yaml",
}

// loadFile loads one of the example scenarios in its example cell (the
// cell its cell field names; pl3-palletiser when it names none).
func loadFile(t testing.TB, name string) *Scenario {
	t.Helper()
	path := filepath.Join("..", "testdata", "scenarios", name)
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	cellFile := exampleCells["pl3-palletiser"]
	for _, l := range strings.Split(string(b), "\n") {
		if name, ok := strings.CutPrefix(l, "cell: "); ok {
			if cellFile = exampleCells[strings.TrimSpace(name)]; cellFile == "" {
				t.Fatalf("%s: no example cell %q", path, name)
			}
		}
	}
	cell, err := zones.Load(filepath.Join("..", "testdata", cellFile))
	if err != nil {
		t.Fatalf("example cell: %v", err)
	}
	sc, err := Load(strings.NewReader(string(b)), path, cell)
	if err != nil {
		t.Fatalf("%v", err)
	}
	return sc
}
