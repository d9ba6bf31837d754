package c3d

import (
	"bytes"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"testing"
)

var writeCorpus = flag.Bool("c3d.writecorpus", false, "rewrite testdata/fuzz/FuzzDecode from the synthetic seeds")

// fuzzSeeds are small synthetic files (never copies of real recordings):
// each processor and storage, a file without analog data, a truncated one
// and one with a bad parameter record.
func fuzzSeeds() map[string][]byte {
	seeds := map[string][]byte{}
	for _, proc := range []Processor{Intel, DEC, MIPS} {
		for _, float := range []bool{false, true} {
			seeds[fmt.Sprintf("%s-%s", map[Processor]string{Intel: "intel", DEC: "dec", MIPS: "mips"}[proc], map[bool]string{false: "int", true: "real"}[float])] =
				newSynth(proc, float, 3).bytes()
		}
	}
	s := newSynth(Intel, true, 2)
	s.analogCh = 0
	seeds["intel-real-no-analog"] = s.bytes()
	b := newSynth(MIPS, false, 3).bytes()
	seeds["mips-int-truncated"] = b[:len(b)-5]
	b = newSynth(DEC, false, 2).bytes()
	b[BlockSize+4] = 0x7f // first record's name length corrupted
	seeds["dec-bad-record"] = b
	return seeds
}

// TestFuzzCorpus keeps testdata/fuzz/FuzzDecode in step with fuzzSeeds;
// run with -c3d.writecorpus to rewrite it.
func TestFuzzCorpus(t *testing.T) {
	dir := filepath.Join("testdata", "fuzz", "FuzzDecode")
	for name, b := range fuzzSeeds() {
		want := "go test fuzz v1\n[]byte(" + strconv.Quote(string(b)) + ")\n"
		path := filepath.Join(dir, "seed-"+name)
		if *writeCorpus {
			if err := os.MkdirAll(dir, 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, []byte(want), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		got, err := os.ReadFile(path)
		if err != nil || string(got) != want {
			t.Errorf("%s is missing or stale (err %v); run go test ./forecast/c3d -run TestFuzzCorpus -c3d.writecorpus", path, err)
		}
	}
}

// FuzzDecode: any input either decodes or gives an *Error naming a section
// and a non-negative offset; decoding never panics, every frame read is
// consistent with the file's layout and no valid point holds a NaN.
func FuzzDecode(f *testing.F) {
	for _, b := range fuzzSeeds() {
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		file, err := Decode(bytes.NewReader(b), int64(len(b)))
		if err != nil {
			checkError(t, err)
			return
		}
		if len(file.Labels) != file.Points || file.Frames < 0 || file.FrameSize < 0 {
			t.Fatalf("inconsistent file: %d points, %d labels, %d frames of %d bytes", file.Points, len(file.Labels), file.Frames, file.FrameSize)
		}
		if file.Frames > 0 && file.DataStart+int64(file.FrameSize) > int64(len(b)) {
			t.Fatalf("first frame (%d bytes at %d) beyond the %d-byte file", file.FrameSize, file.DataStart, len(b))
		}
		r := file.NewReader()
		n := 0
		for {
			fr, err := r.Next()
			if err == io.EOF {
				break
			}
			if err != nil {
				checkError(t, err)
				break
			}
			if fr.Index != n || len(fr.Points) != file.Points {
				t.Fatalf("frame %d: index %d, %d points", n, fr.Index, len(fr.Points))
			}
			for _, p := range fr.Points {
				if p.Valid && !(finite(p.P[0]) && finite(p.P[1]) && finite(p.P[2]) && finite(p.Residual)) {
					t.Fatalf("frame %d: valid point %+v", n, p)
				}
				if p.Valid && p.Bad {
					t.Fatalf("frame %d: point both valid and bad", n)
				}
			}
			n++
		}
		if n > file.Frames {
			t.Fatalf("read %d frames of %d", n, file.Frames)
		}
	})
}

func checkError(t *testing.T, err error) {
	t.Helper()
	var e *Error
	if !errors.As(err, &e) {
		t.Fatalf("error %v (%T), want *Error", err, err)
	}
	if e.Section == "" || e.Offset < 0 || e.Msg == "" {
		t.Fatalf("error without section, offset or message: %#v", e)
	}
}
