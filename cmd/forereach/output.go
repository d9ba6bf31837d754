package main

import (
	"io"
	"os"
	"path/filepath"
)

// writeFile writes path through write, by way of a temporary file in the
// same directory renamed into place, so that a failure leaves no
// half-written report, figure or gains file behind. The file is readable by
// everyone (0644), like a file os.Create would make under the usual umask.
func writeFile(path string, write func(io.Writer) error) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	if err := write(f); err != nil {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return err
	}
	if err := os.Chmod(tmp, 0o644); err != nil {
		os.Remove(tmp)
		return err
	}
	return os.Rename(tmp, path)
}
