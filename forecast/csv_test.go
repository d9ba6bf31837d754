package forecast

import (
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// readAll drains a reader, returning samples and row errors; it fails the
// test on a fatal error unless wantFatal.
func readAll(t testing.TB, r SampleReader) ([]Sample, []*RowError, error) {
	var ss []Sample
	var rows []*RowError
	for i := 0; i < 1e6; i++ {
		s, err := r.Next()
		if err == io.EOF {
			return ss, rows, nil
		}
		var re *RowError
		if errors.As(err, &re) {
			rows = append(rows, re)
			continue
		}
		if err != nil {
			return ss, rows, err
		}
		ss = append(ss, s)
	}
	t.Fatal("reader does not terminate")
	return nil, nil, nil
}

func TestReadCSV(t *testing.T) {
	in := "\xef\xbb\xbf# pl3-palletiser, infeed side\n" +
		"t,track,x,y,z\n" +
		"0,op1/right,1,2,3\n" +
		"0,op1/left,4,5,6\n" +
		"\n" +
		"0.01,op1/right,1.5,2,3\r\n" +
		"0.01,op1/right,1.5,2,3\n" + // repeat: passed on (the Track drops it)
		"0.005,op1/right,1,1,1\n" + // out of order within the track
		"-0.001,op1/left,1,1,1\n" + // out of order within the other track
		"0.02,op1/right,x,2,3\n" +
		"0.03,op1/right,1,2\n" +
		"0.04,,1,2,3\n" +
		"nan,op1/right,1,2,3\n" +
		"0.05,op1/right,1,1e400,3\n" +
		"0.06,\"op1/right\",2,2,3\n"
	r := NewCSVReader(strings.NewReader(in), "pl3.csv", 0.001)
	ss, rows, err := readAll(t, r)
	if err != nil {
		t.Fatal(err)
	}
	want := []Sample{
		{"op1/right", 0, vec(0.001, 0.002, 0.003)},
		{"op1/left", 0, vec(0.004, 0.005, 0.006)},
		{"op1/right", 0.01, vec(0.0015, 0.002, 0.003)},
		{"op1/right", 0.01, vec(0.0015, 0.002, 0.003)},
		{"op1/right", 0.06, vec(0.002, 0.002, 0.003)},
	}
	if len(ss) != len(want) {
		t.Fatalf("got %d samples %v, want %d", len(ss), ss, len(want))
	}
	for i := range want {
		if ss[i].Track != want[i].Track || ss[i].T != want[i].T || !near(ss[i].P, want[i].P, 1e-15) {
			t.Errorf("sample %d = %+v, want %+v", i, ss[i], want[i])
		}
	}
	wantErr := []string{
		"pl3.csv:8: t: time 0.005 s is before the previous sample of track \"op1/right\" (0.01 s, line 7): rows out of time order",
		"pl3.csv:9: t: time -0.001 s is before the previous sample of track \"op1/left\" (0 s, line 4): rows out of time order",
		"pl3.csv:10: x: \"x\" is not a number",
		"pl3.csv:11: 4 fields, the header has 5",
		"pl3.csv:12: track: empty track name",
		"pl3.csv:13: t: \"nan\" is not a finite number",
		"pl3.csv:14: y: \"1e400\" is out of range",
	}
	if len(rows) != len(wantErr) {
		t.Fatalf("got %d row errors %v, want %d", len(rows), rows, len(wantErr))
	}
	for i, w := range wantErr {
		if rows[i].Error() != w {
			t.Errorf("row error %d = %q, want %q", i, rows[i].Error(), w)
		}
	}
}

func TestReadCSVHeader(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"", "h.csv: no header line"},
		{"t,track,x,y\n0,a,1,2\n", "h.csv:1: header: no column \"z\""},
		{"t,t,track,x,y,z\n", "h.csv:1: header: column \"t\" appears twice"},
	} {
		_, _, err := readAll(t, NewCSVReader(strings.NewReader(c.in), "h.csv", 1))
		if err == nil || !strings.HasPrefix(err.Error(), c.want) {
			t.Errorf("%q: error %v, want prefix %q", c.in, err, c.want)
		}
	}
	// Columns in another order, extra columns ignored.
	ss, rows, err := readAll(t, NewCSVReader(strings.NewReader("frame,Z,Y,X,TRACK,T\n7,3,2,1,a,0.5\n"), "o.csv", 1))
	if err != nil || len(rows) != 0 || len(ss) != 1 || ss[0].P != vec(1, 2, 3) || ss[0].T != 0.5 || ss[0].Track != "a" {
		t.Fatalf("reordered columns: %v %v %v", ss, rows, err)
	}
}

func TestReadCSVLongLine(t *testing.T) {
	in := "t,track,x,y,z\n0,a,1,2,3\n0.1,a," + strings.Repeat("1", 3*maxCSVLine) + ",2,3\n0.2,a,1,2,3\n"
	ss, rows, err := readAll(t, NewCSVReader(strings.NewReader(in), "l.csv", 1))
	if err != nil || len(ss) != 2 || len(rows) != 1 || rows[0].Line != 3 {
		t.Fatalf("got %v %v %v", ss, rows, err)
	}
}

// FuzzReadCSV checks that the reader never panics, always terminates, and
// only yields finite samples with a track name, in time order per track.
func FuzzReadCSV(f *testing.F) {
	f.Add([]byte("t,track,x,y,z\n0,a,1,2,3\n0.1,a,1,2,3\n"))
	f.Add([]byte("t,track,x,y,z\n0,a,1,2,3\n0.1,b,1,2,3\n0.05,a,1,2,3\n"))
	f.Add([]byte("# c\r\nz,y,x,track,t,extra\r\n1,2,3,\"r\",4,\r\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		r := NewCSVReader(strings.NewReader(string(b)), "fuzz.csv", 0.001)
		last := map[string]float64{}
		for i := 0; ; i++ {
			if i > len(b)+2 {
				t.Fatal("more results than lines")
			}
			s, err := r.Next()
			if err == io.EOF {
				return
			}
			var re *RowError
			if errors.As(err, &re) {
				if re.File != "fuzz.csv" || re.Line < 1 {
					t.Fatalf("bad row error %+v", re)
				}
				continue
			}
			if err != nil {
				if _, err2 := r.Next(); err2 == nil {
					t.Fatal("reader goes on after a fatal error")
				}
				return
			}
			if s.Track == "" || !finite(s.P) || math.IsNaN(s.T) || math.IsInf(s.T, 0) {
				t.Fatalf("bad sample %+v", s)
			}
			if lt, ok := last[s.Track]; ok && s.T < lt {
				t.Fatalf("track %q goes back in time: %g after %g", s.Track, s.T, lt)
			}
			last[s.Track] = s.T
		}
	})
}

// The motion data set reads without a single bad row (it is clean: see its
// README).
func TestReadMotionCSV(t *testing.T) {
	dir := motionDir(t)
	files, _ := filepath.Glob(filepath.Join(dir, "*.csv"))
	for _, name := range files {
		fh, err := os.Open(name)
		if err != nil {
			t.Fatal(err)
		}
		ss, rows, err := readAll(t, NewCSVReader(fh, name, 1))
		fh.Close()
		if err != nil || len(rows) > 0 || len(ss) < 1000 {
			t.Fatalf("%s: %d samples, row errors %v, err %v", name, len(ss), rows, err)
		}
	}
}
