package forecast

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"
)

// maxCSVLine is the longest CSV line accepted (bytes); longer lines are
// reported and skipped.
const maxCSVLine = 1 << 16

// CSVReader reads a recording in CSV: a header line naming the columns t,
// track, x, y and z (in any order; other columns are ignored), then one
// sample per line. t is in seconds, x, y, z in the file's length unit
// (multiplied by the reader's scale to give metres). Blank lines and lines
// starting with '#' are skipped. Times may be irregular and have gaps and
// repeats; a time earlier than the previous one of the same track is an
// error for that row, which is then skipped.
//
// Next returns *RowError for a bad row and goes on with the next one; any
// other error (a missing or unusable header, a read error) is fatal.
type CSVReader struct {
	name  string
	scale float64
	br    *bufio.Reader
	line  int
	col   [5]int // column index of t, track, x, y, z
	ncol  int
	ready bool
	fatal error
	// tracks interns track names and remembers each track's last time and
	// the line it was on.
	tracks map[string]*csvTrack
	fields [][]byte
	long   []byte
}

type csvTrack struct {
	name string
	t    float64
	line int
}

var csvColumns = [5]string{"t", "track", "x", "y", "z"}

// NewCSVReader returns a reader of the CSV recording r. name is used in
// error messages (the file name as given); scale converts the file's length
// unit to metres (1 for metres, 0.001 for millimetres; 0 means 1).
func NewCSVReader(r io.Reader, name string, scale float64) *CSVReader {
	if scale == 0 {
		scale = 1
	}
	return &CSVReader{name: name, scale: scale, br: bufio.NewReaderSize(r, 64<<10), tracks: map[string]*csvTrack{}}
}

// readLine returns the next line without its end-of-line bytes. A line
// longer than maxCSVLine is returned as nil with tooLong set, after skipping
// it. At the end of input it returns io.EOF.
func (c *CSVReader) readLine() (line []byte, tooLong bool, err error) {
	c.long = c.long[:0]
	for {
		b, err := c.br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			if len(c.long)+len(b) <= maxCSVLine {
				c.long = append(c.long, b...)
			} else {
				tooLong = true
			}
			continue
		}
		if err == io.EOF && len(b) == 0 && len(c.long) == 0 && !tooLong {
			return nil, false, io.EOF
		}
		if err != nil && err != io.EOF {
			return nil, false, err
		}
		c.line++
		if tooLong || len(c.long)+len(b) > maxCSVLine {
			return nil, true, nil
		}
		if len(c.long) > 0 {
			c.long = append(c.long, b...)
			b = c.long
		}
		b = bytes.TrimRight(b, "\r\n")
		return b, false, nil
	}
}

func (c *CSVReader) rowErr(field, format string, a ...any) *RowError {
	return &RowError{File: c.name, Line: c.line, Field: field, Msg: fmt.Sprintf(format, a...)}
}

func (c *CSVReader) split(b []byte) [][]byte {
	c.fields = c.fields[:0]
	for {
		i := bytes.IndexByte(b, ',')
		if i < 0 {
			c.fields = append(c.fields, unquote(bytes.TrimSpace(b)))
			return c.fields
		}
		c.fields = append(c.fields, unquote(bytes.TrimSpace(b[:i])))
		b = b[i+1:]
	}
}

func unquote(b []byte) []byte {
	if len(b) >= 2 && b[0] == '"' && b[len(b)-1] == '"' {
		return bytes.TrimSpace(b[1 : len(b)-1])
	}
	return b
}

func (c *CSVReader) readHeader() error {
	for {
		b, long, err := c.readLine()
		if err == io.EOF {
			return fmt.Errorf("%s: no header line (want a header naming the columns t,track,x,y,z)", c.name)
		}
		if err != nil {
			return fmt.Errorf("%s: %w", c.name, err)
		}
		if long {
			return fmt.Errorf("%s:%d: header line longer than %d bytes", c.name, c.line, maxCSVLine)
		}
		if c.line == 1 {
			b = bytes.TrimPrefix(b, []byte("\xef\xbb\xbf"))
		}
		if len(bytes.TrimSpace(b)) == 0 || b[0] == '#' {
			continue
		}
		f := c.split(b)
		c.ncol = len(f)
		for i := range c.col {
			c.col[i] = -1
		}
		for j, name := range f {
			for i, want := range csvColumns {
				if string(bytes.ToLower(name)) == want {
					if c.col[i] >= 0 {
						return fmt.Errorf("%s:%d: header: column %q appears twice", c.name, c.line, want)
					}
					c.col[i] = j
				}
			}
		}
		for i, want := range csvColumns {
			if c.col[i] < 0 {
				return fmt.Errorf("%s:%d: header: no column %q (want columns t,track,x,y,z; got %q)", c.name, c.line, want, b)
			}
		}
		return nil
	}
}

// Next returns the next sample in file order.
func (c *CSVReader) Next() (Sample, error) {
	if c.fatal != nil {
		return Sample{}, c.fatal
	}
	if !c.ready {
		if err := c.readHeader(); err != nil {
			c.fatal = err
			return Sample{}, err
		}
		c.ready = true
	}
	for {
		b, long, err := c.readLine()
		if err == io.EOF {
			c.fatal = io.EOF
			return Sample{}, io.EOF
		}
		if err != nil {
			c.fatal = fmt.Errorf("%s:%d: %w", c.name, c.line, err)
			return Sample{}, c.fatal
		}
		if long {
			return Sample{}, c.rowErr("", "line longer than %d bytes, skipped", maxCSVLine)
		}
		if len(bytes.TrimSpace(b)) == 0 || b[0] == '#' {
			continue
		}
		return c.parseRow(b)
	}
}

func (c *CSVReader) parseRow(b []byte) (Sample, error) {
	f := c.split(b)
	if len(f) != c.ncol {
		return Sample{}, c.rowErr("", "%d fields, the header has %d", len(f), c.ncol)
	}
	var s Sample
	var err error
	if s.T, err = c.number(f[c.col[0]], "t", 1); err != nil {
		return Sample{}, err
	}
	var xyz [3]float64
	for i := 0; i < 3; i++ {
		if xyz[i], err = c.number(f[c.col[2+i]], csvColumns[2+i], c.scale); err != nil {
			return Sample{}, err
		}
	}
	s.P = r3.Vec{X: xyz[0], Y: xyz[1], Z: xyz[2]}
	name := f[c.col[1]]
	if len(name) == 0 {
		return Sample{}, c.rowErr("track", "empty track name")
	}
	tr := c.tracks[string(name)] // no allocation for the lookup
	if tr == nil {
		tr = &csvTrack{name: string(name), t: math.Inf(-1)}
		c.tracks[tr.name] = tr
	}
	s.Track = tr.name
	if s.T < tr.t {
		return Sample{}, c.rowErr("t", "time %g s is before the previous sample of track %q (%g s, line %d): rows out of time order",
			s.T, tr.name, tr.t, tr.line)
	}
	tr.t, tr.line = s.T, c.line
	return s, nil
}

func (c *CSVReader) number(b []byte, field string, scale float64) (float64, error) {
	if len(b) == 0 {
		return 0, c.rowErr(field, "empty")
	}
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		var ne *strconv.NumError
		if errors.As(err, &ne) && ne.Err == strconv.ErrRange {
			return 0, c.rowErr(field, "%q is out of range", b)
		}
		return 0, c.rowErr(field, "%q is not a number", b)
	}
	v *= scale
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, c.rowErr(field, "%q is not a finite number", b)
	}
	return v, nil
}
