package sim

import (
	"os"
	"path/filepath"
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

// loadFile loads one of the example scenarios in the example cell.
func loadFile(t testing.TB, name string) *Scenario {
	t.Helper()
	path := filepath.Join("..", "testdata", "scenarios", name)
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc, err := Load(f, path, exampleCell(t))
	if err != nil {
		t.Fatalf("%v", err)
	}
	return sc
}
