package bus

import "fmt"

// openC3D is filled in with the C3D reader (forecast/c3d).
func openC3D(path string, opt OpenOptions) (SampleFile, error) {
	return nil, fmt.Errorf("%s: C3D recordings: not yet wired", path)
}
