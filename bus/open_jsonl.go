package bus

import (
	"fmt"
	"io"
	"os"

	"forereach/forecast"
)

// JSONLSamples reads the accepted samples of a JSONL recording, skipping
// every other kind of line. It implements forecast.SampleReader.
type JSONLSamples struct {
	rr *RecordReader
}

// NewJSONLSamples reads the samples of the recording in r; name is used in
// error messages.
func NewJSONLSamples(r io.Reader, name string) *JSONLSamples {
	return &JSONLSamples{rr: NewRecordReader(r, name)}
}

// Next returns the next sample. A bad line gives a *forecast.RowError
// (file:line:field) and the reader goes on with the next call; io.EOF
// follows the last line.
func (j *JSONLSamples) Next() (forecast.Sample, error) {
	for {
		rec, err := j.rr.Next()
		if err != nil {
			return forecast.Sample{}, err
		}
		if rec.Kind == KindSample {
			return rec.Sample.Sample, nil
		}
	}
}

type jsonlFile struct {
	*JSONLSamples
	f *os.File
}

func (j *jsonlFile) Close() error { return j.f.Close() }

// openJSONL opens a JSONL recording as a stream of samples. Recordings are
// in metres, so opt.Scale does not apply; opt.Markers neither.
func openJSONL(path string, opt OpenOptions) (SampleFile, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("open recording: %w", err)
	}
	return &jsonlFile{JSONLSamples: NewJSONLSamples(f, path), f: f}, nil
}
