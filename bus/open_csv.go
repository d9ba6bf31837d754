package bus

import (
	"os"

	"forereach/forecast"
)

// csvFile is an open CSV recording.
type csvFile struct {
	*forecast.CSVReader
	f *os.File
}

func (c *csvFile) Close() error { return c.f.Close() }

// openCSV opens a CSV recording (header t,track,x,y,z) with forecast's CSV
// reader; opt.Scale converts its length unit to metres.
func openCSV(path string, opt OpenOptions) (SampleFile, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	return &csvFile{CSVReader: forecast.NewCSVReader(f, path, opt.Scale), f: f}, nil
}
