package bus

import (
	"fmt"
	"io"
	"os"
	"slices"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/forecast"
	"forereach/forecast/c3d"
)

// openC3D reads the points of a C3D file as samples, frame by frame through
// the streaming reader (steady memory whatever the file's length).
//
// Tracks come from opt.Markers (label → track). A label matches a point
// label exactly or, when no point label is exactly equal, the one point
// label whose part after the last ':' (the subject prefix some systems
// write, "Human4:RHAN") is equal. Without Markers every labelled point is a
// track named by its label. Positions are converted to metres with
// POINT:UNITS; axes are kept as recorded. A sample's time is (frame - 1) /
// POINT:RATE, so frame 1 is at 0 s. Points marked invalid are gaps: they
// give no sample. A point whose stored reals are not finite gives a
// *forecast.RowError (record = frame number, field = label) and reading
// goes on.
func openC3D(path string, opt OpenOptions) (SampleFile, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	st, err := fh.Stat()
	if err != nil {
		fh.Close()
		return nil, err
	}
	f, err := c3d.Decode(fh, st.Size())
	if err != nil {
		fh.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	tracks, err := c3dTracks(f, opt.Markers)
	if err != nil {
		fh.Close()
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &c3dSamples{path: path, fh: fh, r: f.NewReader(), tracks: tracks}, nil
}

type c3dTrack struct {
	point int    // index in the frame's points
	label string // the file's label
	name  string // track name
}

// c3dTracks resolves the marker map against the file's labels; the result
// is in point order, so that the samples of a frame come in file order.
func c3dTracks(f *c3d.File, markers map[string]string) ([]c3dTrack, error) {
	var tracks []c3dTrack
	if len(markers) == 0 {
		seen := map[string]int{}
		for i, l := range f.Labels {
			if l == "" {
				continue
			}
			if j, dup := seen[l]; dup {
				return nil, fmt.Errorf("points %d and %d are both labelled %q; choose the points to read with --markers", j+1, i+1, l)
			}
			seen[l] = i
			tracks = append(tracks, c3dTrack{point: i, label: l, name: l})
		}
		if len(tracks) == 0 {
			return nil, fmt.Errorf("the file has no labelled points (%d points)", f.Points)
		}
		return tracks, nil
	}
	labels := make([]string, 0, len(markers))
	for l := range markers {
		labels = append(labels, l)
	}
	slices.Sort(labels)
	var missing []string
	byTrack := map[string]string{}
	for _, want := range labels {
		i, err := findLabel(f.Labels, want)
		if err != nil {
			return nil, err
		}
		if i < 0 {
			missing = append(missing, fmt.Sprintf("%q", want))
			continue
		}
		name := markers[want]
		if other, dup := byTrack[name]; dup {
			return nil, fmt.Errorf("marker labels %q and %q both map to track %q", other, want, name)
		}
		byTrack[name] = want
		tracks = append(tracks, c3dTrack{point: i, label: f.Labels[i], name: name})
	}
	if len(missing) > 0 {
		var have []string
		for _, l := range f.Labels {
			if l != "" {
				have = append(have, l)
			}
		}
		what := "marker label"
		if len(missing) > 1 {
			what += "s"
		}
		return nil, fmt.Errorf("%s %s not in the file; its labels are: %s", what, strings.Join(missing, ", "), strings.Join(have, ", "))
	}
	slices.SortFunc(tracks, func(a, b c3dTrack) int { return a.point - b.point })
	for k := 1; k < len(tracks); k++ {
		if tracks[k].point == tracks[k-1].point {
			return nil, fmt.Errorf("tracks %q and %q are the same point %q", tracks[k-1].name, tracks[k].name, tracks[k].label)
		}
	}
	return tracks, nil
}

// findLabel returns the index of the point labelled want: an exact match,
// else the unique label whose part after the last ':' equals want; -1 when
// there is none.
func findLabel(labels []string, want string) (int, error) {
	found := -1
	for i, l := range labels {
		if l == want {
			if found >= 0 {
				return 0, fmt.Errorf("points %d and %d are both labelled %q", found+1, i+1, want)
			}
			found = i
		}
	}
	if found >= 0 {
		return found, nil
	}
	for i, l := range labels {
		if k := strings.LastIndexByte(l, ':'); k >= 0 && l[k+1:] == want {
			if found >= 0 {
				return 0, fmt.Errorf("marker label %q matches both %q and %q; give the full label", want, labels[found], l)
			}
			found = i
		}
	}
	return found, nil
}

type c3dSamples struct {
	path   string
	fh     *os.File
	r      *c3d.Reader
	tracks []c3dTrack
	fr     *c3d.Frame // current frame, nil before the first
	k      int        // next track of fr
}

// Next returns the next valid point of the mapped tracks.
func (s *c3dSamples) Next() (forecast.Sample, error) {
	for {
		if s.fr != nil {
			for s.k < len(s.tracks) {
				tr := s.tracks[s.k]
				s.k++
				p := &s.fr.Points[tr.point]
				if p.Bad {
					return forecast.Sample{}, &forecast.RowError{File: s.path, Line: s.fr.Number, Field: tr.label,
						Msg: "stored coordinates or residual word are not finite numbers"}
				}
				if !p.Valid {
					continue // a gap
				}
				return forecast.Sample{Track: tr.name, T: s.fr.T, P: r3.Vec{X: p.M[0], Y: p.M[1], Z: p.M[2]}}, nil
			}
		}
		fr, err := s.r.Next()
		if err == io.EOF {
			return forecast.Sample{}, io.EOF
		}
		if err != nil {
			return forecast.Sample{}, fmt.Errorf("%s: %w", s.path, err)
		}
		s.fr, s.k = fr, 0
	}
}

func (s *c3dSamples) Close() error { return s.fh.Close() }
