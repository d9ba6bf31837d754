// Package bus is forereach's edge to the outside: the MQTT client and
// embedded broker of the live service, the JSON message schemas, the JSONL
// recording (its schema is defined here, once), and OpenSamples, which reads
// any supported recording (CSV, JSONL, C3D) as a stream of samples.
package bus

import (
	"fmt"
	"io"
	"path/filepath"
	"strings"

	"forereach/forecast"
)

// OpenOptions says how to read a recording file.
type OpenOptions struct {
	// Scale converts the file's length unit to metres (CSV only; 1 for
	// metres, 0.001 for millimetres). Zero means 1.
	Scale float64
	// Markers maps marker labels to track names (C3D only), e.g.
	// {"RFIN": "right", "LFIN": "left"}. Empty: every labelled point is a
	// track named by its label.
	Markers map[string]string
}

// SampleFile is an open recording read as samples.
type SampleFile interface {
	forecast.SampleReader
	io.Closer
}

// OpenSamples opens a recording by its extension (.csv, .jsonl, .c3d; a
// trailing .gz is not supported) and returns its samples in file order.
func OpenSamples(path string, opt OpenOptions) (SampleFile, error) {
	switch ext := strings.ToLower(filepath.Ext(path)); ext {
	case ".csv":
		return openCSV(path, opt)
	case ".jsonl":
		return openJSONL(path, opt)
	case ".c3d":
		return openC3D(path, opt)
	default:
		return nil, fmt.Errorf("%s: unknown recording type %q (want .csv, .jsonl or .c3d)", path, ext)
	}
}
