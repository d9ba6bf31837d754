package forecast

import (
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

func vec(x, y, z float64) r3.Vec { return r3.Vec{X: x, Y: y, Z: z} }

func near(a, b r3.Vec, tol float64) bool { return r3.Norm(r3.Sub(a, b)) <= tol }

// motionDir returns ../shared/data/motion relative to the repository root (the
// directory holding go.mod), skipping the test when it is absent.
func motionDir(t testing.TB) string {
	t.Helper()
	m, why := findMotionDir()
	if m == "" {
		t.Skip(why)
	}
	return m
}

// findMotionDir locates ../shared/data/motion; "" and the reason when it
// cannot.
func findMotionDir() (string, string) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err.Error()
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			break
		}
		up := filepath.Dir(dir)
		if up == dir {
			return "", "no go.mod above the test directory: cannot locate ../shared/data/motion"
		}
		dir = up
	}
	m := filepath.Join(dir, "..", "shared", "data", "motion")
	if _, err := os.Stat(filepath.Join(m, "01_02.csv")); err != nil {
		return "", "real motion data absent (" + m + "): skipping"
	}
	return m, ""
}
