package review

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"forereach/bus"
	"forereach/forecast"

	"gonum.org/v1/gonum/spatial/r3"
)

// scripted yields n items, a *forecast.RowError in place of every item
// whose index is a multiple of bad (bad > 0), then end (io.EOF or a fatal
// error) on every later call; it counts its calls, and when strict fails
// the test when called past the end.
type scripted struct {
	t      *testing.T
	n, bad int
	end    error
	strict bool
	calls  int
}

func (s *scripted) next() (Item, error) {
	i := s.calls
	s.calls++
	switch {
	case i > s.n:
		if s.strict {
			s.t.Errorf("next called %d times, after the end", s.calls)
		}
		return Item{}, s.end
	case i == s.n:
		return Item{}, s.end
	case s.bad > 0 && i%s.bad == 0:
		return Item{}, &forecast.RowError{File: "f", Line: i + 1, Msg: "bad"}
	case i%50 == 7:
		return Item{Kind: ItemRobot, Robot: &bus.RobotState{T: float64(i)}}, nil
	}
	return Item{Kind: ItemSample, Sample: forecast.Sample{Track: fmt.Sprint("h", i%3), T: float64(i), P: r3.Vec{X: float64(i)}}}, nil
}

type readStep struct {
	it  Item
	err string
}

// readAll reads src to its end and twice more.
func readAll(src Source) []readStep {
	var out []readStep
	after := 0
	for after < 3 {
		it, err := src.Next()
		st := readStep{it: it}
		if err != nil {
			st.err = err.Error()
			if !recoverable(err) {
				after++
			}
		}
		out = append(out, st)
	}
	return out
}

// Reading ahead gives exactly what reading on the caller's goroutine gives:
// the items in order, the errors about single lines where they were met,
// then the end (io.EOF or the fatal error) again on every later call; the
// reader is not called past its end. Lengths around the batch size.
func TestReadAheadSameAsDirect(t *testing.T) {
	fatal := errors.New("disk on fire")
	for _, n := range []int{0, 1, readAheadBatch - 1, readAheadBatch, readAheadBatch + 1, 3*readAheadBatch + 7, 10 * readAheadBatch} {
		for _, bad := range []int{0, 1, 5, readAheadBatch} {
			for _, end := range []error{io.EOF, fatal} {
				a := &scripted{t: t, n: n, bad: bad, end: end}
				b := &scripted{t: t, n: n, bad: bad, end: end, strict: true}
				want := readAll(funcSource(a.next))
				got := readAll(startReadAhead(b.next))
				if !reflect.DeepEqual(got, want) {
					t.Fatalf("n=%d bad=%d end=%v: read ahead differs from direct reading", n, bad, end)
				}
				if len(want) != n+3 || want[n].err != end.Error() {
					t.Fatalf("n=%d bad=%d end=%v: %d results, want %d ending with %v", n, bad, end, len(want), n+3, end)
				}
				if b.calls != n+1 {
					t.Fatalf("n=%d: next called %d times, want %d", n, b.calls, n+1)
				}
			}
		}
	}
}

// A panic while reading ahead is raised again on the caller's goroutine
// after the items read before it.
func TestReadAheadPanic(t *testing.T) {
	calls := 0
	src := startReadAhead(func() (Item, error) {
		calls++
		if calls == 700 {
			panic("decoder bug")
		}
		return Item{Kind: ItemSample, Sample: forecast.Sample{T: float64(calls)}}, nil
	})
	got := 0
	func() {
		defer func() {
			if pv := recover(); pv != "decoder bug" {
				t.Fatalf("recovered %v, want the reader's panic", pv)
			}
		}()
		for {
			it, err := src.Next()
			if err != nil {
				t.Fatalf("error %v", err)
			}
			if got++; it.Sample.T != float64(got) {
				t.Fatalf("item %d has time %v", got, it.Sample.T)
			}
		}
	}()
	if got != 699 {
		t.Fatalf("%d items before the panic, want 699", got)
	}
	if _, err := src.Next(); err != errSourceStopped {
		t.Fatalf("after the panic: %v, want %v", err, errSourceStopped)
	}
}

// stop ends the goroutine of a source not read to its end: the reader is
// not called again, and Next says the source was stopped.
func TestReadAheadStop(t *testing.T) {
	s := &scripted{t: t, n: 1 << 30, end: io.EOF, strict: true}
	src := startReadAhead(s.next)
	for i := 0; i < 10; i++ {
		if _, err := src.Next(); err != nil {
			t.Fatal(err)
		}
	}
	stopSource(src)
	calls := s.calls
	if calls < 10 || calls > readAheadBatch*readAheadDepth {
		t.Fatalf("%d calls of the reader for 10 items and at most %d batches", calls, readAheadDepth)
	}
	if _, err := src.Next(); err != errSourceStopped {
		t.Fatalf("after stop: %v, want %v", err, errSourceStopped)
	}
	stopSource(src) // a second stop does nothing
	if s.calls != calls {
		t.Fatalf("the reader was called after stop")
	}
	stopSource(startReadAhead(s.next)) // never started
}

// A review and a margin sweep read ahead give the same results as read on
// the caller's goroutine, on a recording with advisories, robot states and
// bad lines of every kind.
func TestReadAheadReviewSame(t *testing.T) {
	cfg := exampleCell(t)
	m, err := NewModel(cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	sc := loadScenario(t, "planted.yaml", cfg)
	path := writeRecording(t, sc, sc.Seed, cfg, m, true)
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(string(raw), "\n")
	bad := []string{
		"garbage\n",
		`{"v":1,"kind":"sample","t":1,"track":"x","pos":[1,2]}` + "\n",
		`{"v":1,"kind":"robot","t":5,"frames":[{"name":"tool","pos":[1.5,2,1.2],"quat":[1,0,0,0]}]}` + "\n",
		`{"v":1,"kind":"reject","arrival":3,"topic":"t","reason":"bad-json","payload":"{"}` + "\n",
		`{"v":2,"kind":"sample"}` + "\n",
		strings.Repeat("x", bus.MaxLine+10) + "\n",
	}
	var b strings.Builder
	for i, l := range lines {
		b.WriteString(l)
		if i > 0 && i%211 == 0 {
			b.WriteString(bad[(i/211)%len(bad)])
		}
	}
	path = filepath.Join(t.TempDir(), "mixed.jsonl")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, asRecorded := range []bool{false, true} {
		var out [2][]byte
		for k, ahead := range []bool{false, true} {
			rv, err := New(cfg, m, Options{AsRecorded: asRecorded})
			if err != nil {
				t.Fatal(err)
			}
			mg, err := NewMargins(cfg, m, MarginOptions{})
			if err != nil {
				t.Fatal(err)
			}
			for _, add := range []func(Source) error{
				func(src Source) error { return rv.Replay("mixed", src) },
				func(src Source) error { return mg.Add("mixed", src) },
			} {
				f, err := os.Open(path)
				if err != nil {
					t.Fatal(err)
				}
				var src Source = funcSource((&recordSource{rr: bus.NewRecordReader(f, path)}).next)
				if ahead {
					src = Records(bus.NewRecordReader(f, path))
					if _, ok := src.(*readAhead); !ok {
						t.Skip("a single processor: Records reads on the caller's goroutine")
					}
				}
				if err := add(src); err != nil {
					t.Fatal(err)
				}
				f.Close()
			}
			var buf bytes.Buffer
			enc := json.NewEncoder(&buf)
			if err := enc.Encode(rv.Result()); err != nil {
				t.Fatal(err)
			}
			if err := enc.Encode(mg.Result()); err != nil {
				t.Fatal(err)
			}
			out[k] = buf.Bytes()
		}
		if !bytes.Equal(out[0], out[1]) {
			t.Fatalf("as recorded %v: results differ when read ahead", asRecorded)
		}
		if !bytes.Contains(out[0], []byte(`"bad_lines"`)) {
			t.Fatalf("no bad lines counted")
		}
	}
}
