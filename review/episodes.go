package review

import "math"

// Warning episodes and false alarms.
//
// A warning episode of one track against one zone begins with a request
// (reduce or hold) and goes on while requests follow each other within the
// release time, the engine's own rule for how long a request keeps the
// advisory up: it has begun at a and its last request was at b. It is a
// false alarm when no "close" sample of the same track and zone (the hand's
// measured position closer to the zone's shape than policy.near_miss, or
// inside it: the samples of every entry and near miss) falls within
// [a, b + window], window being policy.false_alarm_window.
//
// Closes arrive in time order with the samples, so an episode is judged as
// soon as it is confirmed or time has passed b + window; nothing waits for
// an event reported later.

var inf = math.Inf(1)

// episode is one warning episode.
type episode struct {
	a, b      float64 // first and last request, seconds
	confirmed bool
	minSep    float64 // closest measured separation during the episode (review only)
}

// episodes tracks the warning episodes of one track against one zone (at
// one margin, for the margin sweep).
type episodes struct {
	open    bool
	cur     episode
	pending []episode // ended, waiting for a close within the window
}

// judge receives every episode once it is settled.
type judge func(ep episode, falseAlarm bool)

// request records a request at time t. A request more than release after
// the previous one starts a new episode; started reports it.
func (e *episodes) request(t, release, window float64, done judge) (started bool) {
	if e.open && t-e.cur.b <= release {
		e.cur.b = t
		return false
	}
	if e.open {
		e.pending = append(e.pending, e.cur)
	}
	e.settle(t, window, done)
	e.open = true
	e.cur = episode{a: t, b: t, minSep: inf}
	return true
}

// extend moves the last request of the open episode to t (the recorded
// advisory that named the pair stayed up until t).
func (e *episodes) extend(t float64) {
	if e.open && t > e.cur.b {
		e.cur.b = t
	}
}

// close records a close sample at time t: it confirms the open episode
// (unless it ended more than release before t) and the pending ones whose
// window reaches t.
func (e *episodes) close(t, release, window float64, done judge) {
	if e.open && t-e.cur.b > release {
		e.pending = append(e.pending, e.cur)
		e.open = false
	}
	if e.open && t >= e.cur.a {
		e.cur.confirmed = true
	}
	if len(e.pending) == 0 {
		return
	}
	for _, p := range e.pending {
		p.confirmed = p.confirmed || t <= p.b+window
		done(p, !p.confirmed)
	}
	e.pending = e.pending[:0]
}

// settle judges the pending episodes whose window has passed at time now.
func (e *episodes) settle(now, window float64, done judge) {
	k := 0
	for _, p := range e.pending {
		if now > p.b+window || p.confirmed {
			done(p, !p.confirmed)
			continue
		}
		e.pending[k] = p
		k++
	}
	e.pending = e.pending[:k]
}

// finish judges everything at the end of a recording: what was not
// confirmed is a false alarm.
func (e *episodes) finish(done judge) {
	if e.open {
		e.pending = append(e.pending, e.cur)
		e.open = false
	}
	for _, p := range e.pending {
		done(p, !p.confirmed)
	}
	e.pending = e.pending[:0]
}

// lapse ends the open episode when its last request is at least release
// before now (so that it can be judged without waiting for the next
// request).
func (e *episodes) lapse(now, release, window float64, done judge) {
	if e.open && now-e.cur.b > release {
		e.pending = append(e.pending, e.cur)
		e.open = false
	}
	if len(e.pending) > 0 {
		e.settle(now, window, done)
	}
}
