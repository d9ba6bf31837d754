package review

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/policy"
)

// ring is the recent history of one track: sample times, positions and
// separations from every zone, over the last ringSpan seconds. It grows
// only until it holds ringSpan of samples at the track's rate.
type ring struct {
	span float64 // seconds kept
	nz   int
	t    []float64
	p    []r3.Vec
	s    []float64 // len(t)·nz
	head int       // oldest
	n    int
}

func (g *ring) init(nz int, span float64) {
	g.nz, g.span = nz, span
	g.t = make([]float64, 256)
	g.p = make([]r3.Vec, 256)
	g.s = make([]float64, 256*nz)
}

func (g *ring) idx(i int) int { return (g.head + i) % len(g.t) }

func (g *ring) push(t float64, p r3.Vec, seps []float64) {
	for g.n > 0 && t-g.t[g.head] > g.span {
		g.head = (g.head + 1) % len(g.t)
		g.n--
	}
	if g.n == len(g.t) {
		c := 2 * len(g.t)
		nt, np, ns := make([]float64, c), make([]r3.Vec, c), make([]float64, c*g.nz)
		for i := 0; i < g.n; i++ {
			j := g.idx(i)
			nt[i], np[i] = g.t[j], g.p[j]
			copy(ns[i*g.nz:(i+1)*g.nz], g.s[j*g.nz:(j+1)*g.nz])
		}
		g.t, g.p, g.s, g.head = nt, np, ns, 0
	}
	j := g.idx(g.n)
	g.t[j], g.p[j] = t, p
	copy(g.s[j*g.nz:(j+1)*g.nz], seps)
	g.n++
}

func (g *ring) last() (r3.Vec, bool) {
	if g.n == 0 {
		return r3.Vec{}, false
	}
	return g.p[g.idx(g.n-1)], true
}

// at returns the position of the latest sample at or before t.
func (g *ring) at(t float64) (r3.Vec, bool) {
	for i := g.n - 1; i >= 0; i-- {
		j := g.idx(i)
		if g.t[j] <= t {
			return g.p[j], true
		}
	}
	return r3.Vec{}, false
}

// len is the number of samples held; get returns sample i (0 oldest).
func (g *ring) len() int { return g.n }

func (g *ring) get(i int) (float64, []float64) {
	j := g.idx(i)
	return g.t[j], g.s[j*g.nz : (j+1)*g.nz]
}

// each calls fn for the samples with from <= t <= to, oldest first.
func (g *ring) each(from, to float64, fn func(t float64, seps []float64)) {
	for i := 0; i < g.n; i++ {
		j := g.idx(i)
		if g.t[j] >= from && g.t[j] <= to {
			fn(g.t[j], g.s[j*g.nz:(j+1)*g.nz])
		}
	}
}

// pathDecimator keeps a track's path for the plan view: a point is kept
// when it is at least step from the previous kept one; when more than
// pathBudget points are kept the step doubles and the kept points are
// thinned by the same rule.
type pathDecimator struct {
	step float64
	segs [][]r3.Vec
	n    int
	tail r3.Vec // latest point seen, kept at the end of a segment
	has  bool
}

func (d *pathDecimator) add(p r3.Vec, newSeg bool) {
	if len(d.segs) == 0 || newSeg {
		d.endSeg()
		d.segs = append(d.segs, []r3.Vec{p})
		d.n++
		d.tail, d.has = p, false
		return
	}
	seg := &d.segs[len(d.segs)-1]
	if v := r3.Sub(p, (*seg)[len(*seg)-1]); v.X*v.X+v.Y*v.Y+v.Z*v.Z >= d.step*d.step {
		*seg = append(*seg, p)
		d.n++
		d.has = false
		if d.n > pathBudget {
			d.thin()
		}
		return
	}
	d.tail, d.has = p, true
}

func (d *pathDecimator) endSeg() {
	if d.has && len(d.segs) > 0 {
		d.segs[len(d.segs)-1] = append(d.segs[len(d.segs)-1], d.tail)
		d.n++
		d.has = false
	}
}

func (d *pathDecimator) thin() {
	for d.n > pathBudget/2 {
		d.step *= 2
		d.n = 0
		for i, seg := range d.segs {
			out := seg[:1]
			for _, p := range seg[1:] {
				if r3.Norm(r3.Sub(p, out[len(out)-1])) >= d.step {
					out = append(out, p)
				}
			}
			d.segs[i] = out
			d.n += len(out)
		}
	}
}

func (d *pathDecimator) segments() [][]r3.Vec {
	d.endSeg()
	out := make([][]r3.Vec, len(d.segs))
	for i, s := range d.segs {
		out[i] = append([]r3.Vec(nil), s...)
	}
	return out
}

// capture fills the window of one incident as samples arrive.
type capture struct {
	track *trackState
	zone  int
	w     Window
	lastT float64
	done  bool
}

func (c *capture) add(t, sep float64) {
	if t < c.w.From || t > c.w.To {
		return
	}
	if len(c.w.Sep) > 0 && t-c.lastT < WindowStep {
		return
	}
	c.w.Sep = append(c.w.Sep, TimeValue{T: t, V: sep})
	c.lastT = t
}

// capture starts the window of an incident of track tr at zone z centred
// on t, when it may be among the most severe kept.
func (r *run) capture(tr *trackState, z int, kind string, t float64, lead *float64, minSep float64, at r3.Vec, sev [2]float64) {
	k := &r.rv.keeper
	if !k.wants(sev) {
		return
	}
	c := &capture{track: tr, zone: z, w: Window{Recording: r.name, Track: tr.id, Zone: r.rv.zoneNames[z], Kind: kind,
		T: t, MinSep: minSep, From: t - WindowBefore, To: t + WindowAfter, At: at, severity: sev}}
	if lead != nil {
		v := *lead
		c.w.Lead = &v
	}
	tr.ring.each(c.w.From, c.w.To, func(ts float64, seps []float64) { c.add(ts, seps[z]) })
	r.captures = append(r.captures, c)
}

// closeCaptures finishes the windows that end before now.
func (r *run) closeCaptures(now float64) {
	k := 0
	for _, c := range r.captures {
		if now > c.w.To {
			r.finishCapture(c)
			continue
		}
		r.captures[k] = c
		k++
	}
	clear(r.captures[k:])
	r.captures = r.captures[:k]
}

func (r *run) finishCapture(c *capture) {
	c.done = true
	end := math.Min(c.w.To, r.last)
	lv, sc, ok := r.levelAt(c.w.From)
	from := c.w.From
	if !ok && len(r.changes) > 0 {
		from = r.changes[0].t
		lv, sc = r.changes[0].level, r.changes[0].scale
	}
	for _, ch := range r.changes {
		if ch.t <= from {
			continue
		}
		if ch.t > end {
			break
		}
		c.w.Bands = append(c.w.Bands, Band{From: from, To: ch.t, Level: lv.String(), Scale: sc})
		from, lv, sc = ch.t, ch.level, ch.scale
	}
	if end > from {
		c.w.Bands = append(c.w.Bands, Band{From: from, To: end, Level: lv.String(), Scale: sc})
	}
	r.rv.keeper.add(c.w)
}

// windowKeeper keeps the max most severe windows (smaller severity first).
type windowKeeper struct {
	max  int
	list []Window
}

func less(a, b [2]float64) bool {
	if a[0] != b[0] {
		return a[0] < b[0]
	}
	return a[1] < b[1]
}

// wants reports whether an incident of severity sev could be kept.
func (k *windowKeeper) wants(sev [2]float64) bool {
	if k.max <= 0 {
		return false
	}
	if len(k.list) < k.max {
		return true
	}
	return less(sev, k.list[len(k.list)-1].severity)
}

func (k *windowKeeper) add(w Window) {
	if k.max <= 0 {
		return
	}
	i := sort.Search(len(k.list), func(i int) bool { return less(w.severity, k.list[i].severity) })
	k.list = append(k.list, Window{})
	copy(k.list[i+1:], k.list[i:])
	k.list[i] = w
	if len(k.list) > k.max {
		k.list = k.list[:k.max]
	}
}

// sorted returns the kept windows, most severe first.
func (k *windowKeeper) sorted() []Window { return append([]Window(nil), k.list...) }

var _ = policy.LevelClear
