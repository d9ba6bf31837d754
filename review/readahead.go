package review

import (
	"errors"
	"runtime"
)

// The sources of Records and Samples read ahead: a goroutine of their own
// reads and decodes the recording while the caller replays what was read
// before, so that decoding and the advisory engine share the time of a
// review when there are two processors or more. The items come out in file
// order, with the errors where they were met, exactly as reading on the
// caller's goroutine gives them; with a single processor the source is read
// on the caller's goroutine.
const (
	// readAheadBatch is how many items are handed over at once.
	readAheadBatch = 512
	// readAheadDepth is how many batches there are: read, waiting, and
	// being replayed. About 50 kB each.
	readAheadDepth = 4
)

// errSourceStopped is what a read-ahead source returns once stopped.
var errSourceStopped = errors.New("review: reading stopped")

// newReadAhead returns the source of the items next yields, read ahead of
// the caller when there are two processors or more.
func newReadAhead(next func() (Item, error)) Source {
	if runtime.GOMAXPROCS(0) < 2 {
		return funcSource(next)
	}
	return startReadAhead(next)
}

// funcSource is a source read on the caller's goroutine.
type funcSource func() (Item, error)

func (f funcSource) Next() (Item, error) { return f() }

type readResult struct {
	it  Item
	err error
}

type readBatch struct {
	res      []readResult
	panicked bool // next panicked after res, with the value pv
	pv       any
}

// readAhead calls next on a goroutine of its own (from the first call of
// Next on) until next returns io.EOF or a fatal error (any error but a
// *forecast.RowError), and hands the results over in batches. Next is
// called from one goroutine at a time, as with any Source; next is only
// ever called from the read-ahead goroutine. A panic of next is raised
// again by Next, in the caller's goroutine, where the items before it
// have been returned.
type readAhead struct {
	next    func() (Item, error)
	full    chan *readBatch // read, in order
	free    chan *readBatch // to be filled
	quit    chan struct{}   // closed by stop
	done    chan struct{}   // closed when the goroutine has ended
	started bool
	stopped bool
	cur     *readBatch
	i       int   // next result of cur
	end     error // io.EOF or the fatal error, once returned
}

func startReadAhead(next func() (Item, error)) *readAhead {
	r := &readAhead{next: next, full: make(chan *readBatch, readAheadDepth), free: make(chan *readBatch, readAheadDepth),
		quit: make(chan struct{}), done: make(chan struct{})}
	return r
}

// Next returns the next item; after io.EOF or a fatal error it returns
// that error again.
func (r *readAhead) Next() (Item, error) {
	if r.end != nil {
		return Item{}, r.end
	}
	if !r.started {
		r.started = true
		for i := 0; i < readAheadDepth; i++ {
			r.free <- &readBatch{res: make([]readResult, 0, readAheadBatch)}
		}
		go r.run()
	}
	for r.cur == nil || r.i == len(r.cur.res) {
		if r.cur != nil {
			if r.cur.panicked {
				r.end = errSourceStopped
				panic(r.cur.pv)
			}
			// Never blocks: there are readAheadDepth batches in all.
			r.free <- r.cur
		}
		b, ok := <-r.full
		if !ok {
			// Only after stop: the goroutine sends the end before it
			// ends otherwise.
			r.cur, r.end = nil, errSourceStopped
			return Item{}, r.end
		}
		r.cur, r.i = b, 0
	}
	res := &r.cur.res[r.i]
	r.i++
	if res.err != nil && !recoverable(res.err) {
		r.end = res.err
	}
	return res.it, res.err
}

// run is the read-ahead goroutine.
func (r *readAhead) run() {
	defer close(r.done)
	defer close(r.full)
	var b *readBatch
	defer func() {
		if pv := recover(); pv != nil {
			if b == nil {
				b = &readBatch{}
			}
			b.panicked, b.pv = true, pv
			select {
			case r.full <- b:
			case <-r.quit:
			}
		}
	}()
	for {
		select {
		case b = <-r.free:
		case <-r.quit:
			return
		}
		b.res = b.res[:0]
		end := false
		for !end && len(b.res) < cap(b.res) {
			it, err := r.next()
			b.res = append(b.res, readResult{it, err})
			end = err != nil && !recoverable(err)
		}
		select {
		case r.full <- b:
		case <-r.quit:
			return
		}
		if end {
			return
		}
	}
}

// stop ends the read-ahead goroutine, waiting for a call of next in
// progress to return; Next then returns errSourceStopped.
func (r *readAhead) stop() {
	if !r.started || r.stopped {
		return
	}
	r.stopped = true
	close(r.quit)
	<-r.done
	if r.end == nil {
		r.end = errSourceStopped
	}
}

// stopSource ends the reading of a source that reads ahead (the
// goroutine of a source read to its end has ended already).
func stopSource(src Source) {
	if s, ok := src.(interface{ stop() }); ok {
		s.stop()
	}
}

// recoverable reports whether err is about one line or record only, after
// which reading goes on.
func recoverable(err error) bool {
	_, ok := rowError(err)
	return ok
}
