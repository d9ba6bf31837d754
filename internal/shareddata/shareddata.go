// Package shareddata locates the real recordings that tests read at test
// time from ../shared/data beside the repository (motion/: recorded human
// wrists; c3d/: C3D conformance samples). They are never copied into the
// repository; tests that need them skip with a message when they are absent.
package shareddata

import (
	"fmt"
	"os"
	"path/filepath"
	"testing"
)

// Dir returns ../shared/data/<sub> beside the repository root (the directory
// holding go.mod, searched upwards from the working directory), provided
// that file probe exists in it; otherwise "" and the reason.
func Dir(sub, probe string) (string, string) {
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
			return "", fmt.Sprintf("no go.mod above the test directory: cannot locate ../shared/data/%s", sub)
		}
		dir = up
	}
	d := filepath.Join(dir, "..", "shared", "data", sub)
	if _, err := os.Stat(filepath.Join(d, probe)); err != nil {
		return "", fmt.Sprintf("real data absent (want %s beside the repository): %v", d, err)
	}
	return d, ""
}

// Require is Dir for a test: it skips the test, saying why, when the data
// is absent.
func Require(t testing.TB, sub, probe string) string {
	t.Helper()
	d, why := Dir(sub, probe)
	if d == "" {
		t.Skip(why)
	}
	return d
}
