package c3d

import (
	"bytes"
	"io"
	"os"
	"path/filepath"
	"testing"
)

// benchFrames reads b.N frames from f, starting over at the end, and
// reports frames per second. One op is one frame.
func benchFrames(b *testing.B, f *File) {
	r := f.NewReader()
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		_, err := r.Next()
		if err == io.EOF {
			r.Seek(0)
			_, err = r.Next()
		}
		if err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "frames/s")
}

// BenchmarkFrames measures frame decoding: the largest sample file (61
// points, real storage) through an *os.File as bus.OpenSamples reads it,
// the same from memory, and a synthetic long recording in each storage.
func BenchmarkFrames(b *testing.B) {
	b.Run("sample37-hands-real/file", func(b *testing.B) {
		path := filepath.Join(sampleDir(b), "sample37", "ART-Human_hands_real_no6dof.c3d")
		fh, err := os.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		defer fh.Close()
		st, _ := fh.Stat()
		f, err := Decode(fh, st.Size())
		if err != nil {
			b.Fatal(err)
		}
		benchFrames(b, f)
	})
	b.Run("sample37-hands-real/memory", func(b *testing.B) {
		raw, err := os.ReadFile(filepath.Join(sampleDir(b), "sample37", "ART-Human_hands_real_no6dof.c3d"))
		if err != nil {
			b.Fatal(err)
		}
		benchFrames(b, decodeBytes(b, raw))
	})
	for _, c := range []struct {
		name  string
		proc  Processor
		float bool
	}{{"synthetic-61pt/intel-int", Intel, false}, {"synthetic-61pt/intel-real", Intel, true}, {"synthetic-61pt/dec-real", DEC, true}, {"synthetic-61pt/mips-real", MIPS, true}} {
		b.Run(c.name, func(b *testing.B) {
			s := newSynth(c.proc, c.float, 0)
			s.analogCh = 0
			s.labels = nil
			row := make([]wPoint, 61)
			for i := range row {
				row[i] = wPoint{X: float32(10 * i), Y: -float32(i), Z: 1000, W: 0x0203}
			}
			for range 20000 {
				s.frames = append(s.frames, row)
			}
			benchFrames(b, decodeBytes(b, s.bytes()))
		})
	}
}

// BenchmarkDecode measures opening a file: header and parameter section.
func BenchmarkDecode(b *testing.B) {
	raw, err := os.ReadFile(filepath.Join(sampleDir(b), "sample01", "Eb015pi.c3d"))
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for i := 0; i < b.N; i++ {
		if _, err := Decode(bytes.NewReader(raw), int64(len(raw))); err != nil {
			b.Fatal(err)
		}
	}
}
