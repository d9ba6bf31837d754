package main

import (
	"flag"
	"fmt"
	"strings"

	"forereach/bus"
)

// recordingFlags are the flags shared by every command that reads
// recordings (eval, fit, review, margins): the length unit of CSV files and
// the marker-to-track map of C3D files.
type recordingFlags struct {
	units   string
	markers string
}

func addRecordingFlags(fs *flag.FlagSet) *recordingFlags {
	r := &recordingFlags{}
	fs.StringVar(&r.units, "units", "m", "length unit of CSV recordings: m or mm")
	fs.StringVar(&r.markers, "markers", "", "C3D marker labels to tracks, e.g. RFIN=right,LFIN=left (default: every label is a track)")
	return r
}

// options turns the flags into bus.OpenOptions.
func (r *recordingFlags) options() (bus.OpenOptions, error) {
	var o bus.OpenOptions
	switch r.units {
	case "m", "":
		o.Scale = 1
	case "mm":
		o.Scale = 0.001
	default:
		return o, fmt.Errorf("--units: %q is not a length unit (want m or mm)", r.units)
	}
	if r.markers != "" {
		o.Markers = map[string]string{}
		for _, kv := range strings.Split(r.markers, ",") {
			label, track, ok := strings.Cut(strings.TrimSpace(kv), "=")
			if !ok || label == "" || track == "" {
				return o, fmt.Errorf("--markers: %q is not LABEL=track", kv)
			}
			if _, dup := o.Markers[label]; dup {
				return o, fmt.Errorf("--markers: label %q given twice", label)
			}
			o.Markers[label] = track
		}
	}
	return o, nil
}
