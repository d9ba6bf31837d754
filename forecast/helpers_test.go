package forecast

import (
	"testing"

	"forereach/internal/shareddata"

	"gonum.org/v1/gonum/spatial/r3"
)

func vec(x, y, z float64) r3.Vec { return r3.Vec{X: x, Y: y, Z: z} }

func near(a, b r3.Vec, tol float64) bool { return r3.Norm(r3.Sub(a, b)) <= tol }

// motionDir returns ../shared/data/motion, skipping the test when it is
// absent.
func motionDir(t testing.TB) string {
	t.Helper()
	return shareddata.Require(t, "motion", "01_02.csv")
}

// findMotionDir locates ../shared/data/motion; "" and the reason when it
// cannot.
func findMotionDir() (string, string) { return shareddata.Dir("motion", "01_02.csv") }
