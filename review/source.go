// Package review replays recorded sessions of a cell through the advisory
// engine (the same engine the live service runs) and reports what happened:
// zone entries with the lead time of their advisory, missed entries, near
// misses, false alarms, time at each advisory level, tracking-loss episodes
// and rejected input. It also sizes zone margins from measured forecast
// error (Margins).
//
// Everything streams: a recording of hours is read once, with memory that
// does not grow with its length (per-incident summaries, decimated hand
// paths and short windows around the incidents shown in figures). The
// package opens no files: the caller passes readers.
//
// forereach is advisory only (see safety.Notice); so are these reports.
package review

import (
	"errors"
	"io"

	"forereach/bus"
	"forereach/forecast"
)

// ItemKind says what an Item holds.
type ItemKind uint8

const (
	ItemSample   ItemKind = iota + 1 // a hand sample
	ItemRobot                        // a robot state (JSONL recordings)
	ItemAdvisory                     // an advisory as issued live (JSONL recordings)
	ItemReject                       // a message the live service refused (JSONL recordings)
)

// Item is one thing read from a recording.
type Item struct {
	Kind     ItemKind
	Sample   forecast.Sample
	Robot    *bus.RobotState
	Advisory *bus.Advisory
	Reject   *bus.Reject
}

// Source yields the items of one recording in file order. Next returns
// io.EOF after the last one; a *forecast.RowError reports one bad line or
// record (file:line:field) and the source stays usable; any other error is
// fatal.
type Source interface {
	Next() (Item, error)
}

// Records reads every kind of line of a JSONL recording: samples, robot
// states, advisories and rejections (headers are skipped). The lines are
// read and decoded ahead of the caller on a goroutine of the source's own
// (see readAhead), which has ended when Next has returned io.EOF or a fatal
// error; Replay and Margins.Add read their sources to that point.
func Records(rr *bus.RecordReader) Source {
	s := &recordSource{rr: rr}
	return newReadAhead(s.next)
}

type recordSource struct{ rr *bus.RecordReader }

func (s *recordSource) next() (Item, error) {
	for {
		rec, err := s.rr.Next()
		if err != nil {
			return Item{}, err
		}
		switch rec.Kind {
		case bus.KindSample:
			return Item{Kind: ItemSample, Sample: rec.Sample.Sample}, nil
		case bus.KindRobot:
			return Item{Kind: ItemRobot, Robot: rec.Robot}, nil
		case bus.KindAdvisory:
			return Item{Kind: ItemAdvisory, Advisory: rec.Advisory}, nil
		case bus.KindReject:
			return Item{Kind: ItemReject, Reject: rec.Reject}, nil
		}
	}
}

// Samples reads a recording that holds only samples (CSV, C3D, or any
// forecast.SampleReader such as bus.OpenSamples gives). Like Records, it
// reads ahead of the caller on a goroutine of its own, which has ended
// when Next has returned io.EOF or a fatal error.
func Samples(r forecast.SampleReader) Source {
	s := &sampleSource{r: r}
	return newReadAhead(s.next)
}

type sampleSource struct{ r forecast.SampleReader }

func (s *sampleSource) next() (Item, error) {
	smp, err := s.r.Next()
	if err != nil {
		return Item{}, err
	}
	return Item{Kind: ItemSample, Sample: smp}, nil
}

// rowError reports whether err is a recoverable error about one line.
func rowError(err error) (*forecast.RowError, bool) {
	var re *forecast.RowError
	if errors.As(err, &re) {
		return re, true
	}
	return nil, false
}

// isEOF reports the end of a source.
func isEOF(err error) bool { return err == io.EOF }
