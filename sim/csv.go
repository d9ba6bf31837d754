package sim

import (
	"bufio"
	"io"
	"strconv"
)

// CSVWriter writes measurements as a CSV recording: the header
// "t,track,x,y,z", then one line per sample with the source time in seconds
// and the measured position in metres, the format forecast's CSV reader
// reads. Numbers are written in the shortest form that reads back exactly.
type CSVWriter struct {
	w   *bufio.Writer
	buf []byte
	err error
}

// NewCSVWriter writes the header to w and returns the writer. Nothing
// reaches w before Flush beyond what the buffer holds.
func NewCSVWriter(w io.Writer) *CSVWriter {
	c := &CSVWriter{w: bufio.NewWriterSize(w, 64<<10)}
	_, c.err = c.w.WriteString("t,track,x,y,z\n")
	return c
}

// Write appends one sample. It allocates nothing in steady state. Errors
// are sticky.
func (c *CSVWriter) Write(m *Measurement) error {
	if c.err != nil {
		return c.err
	}
	b := strconv.AppendFloat(c.buf[:0], m.T, 'f', -1, 64)
	b = append(b, ',')
	b = append(b, m.Track...)
	for _, x := range [3]float64{m.P.X, m.P.Y, m.P.Z} {
		b = append(b, ',')
		b = strconv.AppendFloat(b, x, 'f', -1, 64)
	}
	b = append(b, '\n')
	c.buf = b
	_, c.err = c.w.Write(b)
	return c.err
}

// Flush writes buffered lines to the underlying writer.
func (c *CSVWriter) Flush() error {
	if c.err != nil {
		return c.err
	}
	c.err = c.w.Flush()
	return c.err
}
