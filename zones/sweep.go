package zones

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// SweepTol is the tolerance of the path query, in metres (0.25 mm).
//
// Write f(t) = SignedDistance(P(t)) − R(t) − Margin for the separation along
// the path and f* = min f. A query that is not Far guarantees:
//
//   - MinSep is never more than the true minimum and at most SweepTol below
//     it: f* − SweepTol <= MinSep <= f*.
//   - f(MinSepT) <= MinSep + SweepTol (MinSepT is where the smallest
//     separation actually evaluated was found).
//   - Every true touch is reported: if f(t) <= 0 for some t, Touch is true.
//   - A reported touch is real to within SweepTol: f(TouchT) <= SweepTol,
//     and TouchT is never later than the true earliest touch: TouchT <= t₀
//     with t₀ = min{t : f(t) <= 0} whenever such a t exists (f > 0 is
//     proved on the whole path before TouchT).
//
// Touch is therefore reported exactly when some time with f <= SweepTol was
// found, which may include a pass that clears the zone by less than
// SweepTol; MinSep may then be slightly positive.
const SweepTol = 0.25e-3

// pointEval caches what the path query knows about one path point.
type pointEval struct {
	p  r3.Vec  // position in the shape's frame
	g  float64 // f at the point
	gr r3.Vec  // subgradient of the signed distance at p (shape frame)
	// hg, hgr: the same for the shape's convex minorant (see hullBounder),
	// when it has one and hok.
	hg  float64
	hgr r3.Vec
	// gen, hgen: the query (sweepScratch.gen) that evaluated the point and
	// the minorant there; older values are stale.
	gen, hgen uint64
}

// boundRefiner is implemented by non-convex shapes that can bound the
// separation along a piece of segment better than the Lipschitz bound:
// refineBound returns a lower bound of f(s) = sd(p0 + s·dp) − (r0 + s·dr) − m
// over s ∈ [a, b] (p0, dp in the shape's frame), given fa = f(a) and
// fb = f(b); or −Inf.
type boundRefiner interface {
	refineBound(p0, dp r3.Vec, r0, dr, m, a, b, fa, fb float64) float64
}

// hullBounder is implemented by non-convex shapes with a convex minorant:
// hull returns a convex evaluator whose signed distance is nowhere above the
// shape's (the signed distance to a convex solid holding the shape), or nil.
// Along a segment the minorant's tangents then bound f from below as they
// do for convex shapes; the bound is tight wherever the nearest surface
// point is on the minorant's surface too (e.g. off a straight wall of a
// prism, away from its notches).
type hullBounder interface {
	hull() evaluator
}

// hullSubstitute is implemented by non-convex shapes whose convex minorant
// equals them in parts of space: exactHull returns the minorant and its
// signed distance at the centre of the box b (shape frame) when the two
// signed distances are equal at every point of b, else nil. A path within
// b is then swept through the minorant, a convex shape.
type hullSubstitute interface {
	exactHull(b AABB) (evaluator, float64)
}

// interval is a piece [a, b] of one path segment in the segment's parameter
// s ∈ [0, 1], with f and df/ds at both ends, and ha, hb, hda, hdb the same
// for the convex minorant's separation (non-convex shapes with one).
type interval struct {
	a, b, ga, gb, da, db float64
	ha, hb, hda, hdb     float64
	// clear: f > 0 has been proved on [a, b) (the piece before a split at
	// a point where f can first reach 0).
	clear bool
}

// maxSplitDepth bounds the subdivision of one segment (2⁻⁴⁰ of a segment
// is far below any useful time resolution).
const maxSplitDepth = 40

// minf and maxf are min and max for numbers that are not NaN, or where a
// NaN need not win: plain comparisons, several times cheaper than the
// built-ins, which order NaNs and signed zeros (it shows on this path).
func minf(a, b float64) float64 {
	if b < a {
		return b
	}
	return a
}

func maxf(a, b float64) float64 {
	if b > a {
		return b
	}
	return a
}

// tangentBound returns the lower bound over [a, b] of a function convex
// along the segment, given its values fa, fb and slopes da, db at the ends:
// the larger of the two tangents, minimised.
func tangentBound(a, b, fa, fb, da, db float64) float64 {
	switch {
	case da >= 0:
		return fa
	case db <= 0:
		return fb
	default: // da < 0 < db: the tangents cross inside the interval
		s := (fb - fa + da*a - db*b) / (da - db)
		s = maxf(a, minf(b, s))
		return fa + da*(s-a)
	}
}

// lowerBound returns a lower bound of f on the interval. ls is the Lipschitz
// constant of f in s (|ΔP| + |ΔR| of the segment). For a convex shape, f is
// convex along the segment and the tangents at both ends bound it from
// below as well; for a shape with a convex minorant (hull), the minorant's
// tangents do.
func (it *interval) lowerBound(ls float64, cvx, hull bool) float64 {
	lo := minf(it.ga, it.gb)
	lb := minf(0.5*(it.ga+it.gb-ls*(it.b-it.a)), lo)
	var tb float64
	switch {
	case cvx:
		tb = tangentBound(it.a, it.b, it.ga, it.gb, it.da, it.db)
	case hull:
		tb = tangentBound(it.a, it.b, it.ha, it.hb, it.hda, it.hdb)
	default:
		return lb
	}
	return minf(maxf(lb, tb), lo)
}

// sweepScratch is the reusable memory of one path query: the point cache,
// the path's cumulative Lipschitz lengths and the search stack.
type sweepScratch struct {
	buf []pointEval
	// Per path point k, with L_k = Σ_{i<k} |P[i+1] − P[i]| the path length
	// up to it: cum[k] = L_k + Σ_{i<k} |R[i+1] − R[i]|, up[k] = L_k + R[k]
	// and down[k] = R[k] − L_k (see sweepLocal).
	cum, up, down []float64
	// upInc: up never decreases along the path; downInc, downDec: down
	// never decreases, never increases (the largest value over a run is
	// then at one of its ends).
	upInc, downInc, downDec bool
	// downMax[k] is the largest down over points k..n−1.
	downMax  []float64
	measured bool // the fields above describe the current path
	gen      uint64
	stack    [maxSplitDepth + 2]interval
	spans    [64]span
}

// grow makes room for n path points.
func (sc *sweepScratch) grow(n int) {
	if cap(sc.buf) < n {
		sc.buf = make([]pointEval, n)
		sc.cum, sc.up, sc.down, sc.downMax = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	}
	sc.buf, sc.cum, sc.up, sc.down, sc.downMax = sc.buf[:n], sc.cum[:n], sc.up[:n], sc.down[:n], sc.downMax[:n]
}

// span is a run of path points [i, j] (indices), j > i; clear when f > 0
// has been proved on it.
type span struct {
	i, j  int32
	clear bool
}

// shapeFns are the shape's evaluator and its optional helpers. They travel
// as arguments rather than in sweepRun, so that the escape analysis (which
// cannot see through interface calls) leaves the scratch memory on the
// caller's stack.
type shapeFns struct {
	ev      evaluator
	hull    evaluator    // convex minorant, nil when none (or convex)
	refiner boundRefiner // nil when none
}

// sweepRun is the state of one exact path query.
type sweepRun struct {
	cvx    bool
	hasH   bool
	path   PathView
	posed  bool
	m      *mat3
	pos    r3.Vec
	margin float64
	sc     *sweepScratch

	best, bestT float64
	lbAll       float64
	touched     bool
	touchT      float64
}

// eval evaluates path point k once (later calls return the cached value).
func (r *sweepRun) eval(fn shapeFns, k int) *pointEval {
	e := &r.sc.buf[k]
	if e.gen == r.sc.gen {
		return e
	}
	p := r.path.P[k]
	if r.posed {
		p = r.m.applyT(r3.Sub(p, r.pos))
	}
	sd, gr := fn.ev.sdGrad(p)
	g := sd - r.path.R[k] - r.margin
	e.p, e.g, e.gr, e.gen = p, g, gr, r.sc.gen
	if g < r.best {
		r.best, r.bestT = g, r.path.T[k]
	}
	return e
}

// evalHull evaluates the convex minorant at path point k (evaluated), once.
// The minorant is needed by the segment search only, so points that only
// the run search sees never pay for it.
func (r *sweepRun) evalHull(fn shapeFns, k int) {
	e := &r.sc.buf[k]
	if e.hgen == r.sc.gen {
		return
	}
	hs, hgr := fn.hull.sdGrad(e.p)
	e.hg, e.hgr, e.hgen = hs-r.path.R[k]-r.margin, hgr, r.sc.gen
}

// sweepLocal runs the exact path query of one shape against the path, whose
// points are first brought into the shape's frame by the inverse of the pose
// (m, pos) when posed. sc must have room for the path's n points and hold
// its cumulative lengths. See SweepTol for the guarantees.
//
// Method: branch and bound, depth-first and left first, in two tiers. The
// upper tier works on runs of whole segments between two evaluated path
// points i < j. The signed distance being 1-Lipschitz, and no two points of
// the path farther apart than the path length L between them, f at a point
// x of the run is at least f_i − (L_ix + R_x − R_i) and f_j − (R_x − R_j −
// L_xj): so on the run f is no lower than (f_i + f_j − C_ij)/2, with C_ij
// the run's length |ΔP| + |ΔR| summed over its segments, nor than
// f_i − max_x (up_x − up_i) or f_j − max_x (down_x − down_j) with
// up = L + R and down = R − L (both affine along a segment, so the largest
// values are at path points). The last bound makes a run ending where the
// radius is largest cheap to drop when the radius grows faster than the
// hand moves. A run is dropped when these bounds show it can neither
// improve the minimum by more than SweepTol nor (until a touch is found)
// reach f <= 0. Otherwise it is split: before the first touch at the last
// point up to which the first of those bounds proves f > 0 (f cannot reach
// 0 before up_x − up_i = f_i), otherwise at its middle point; the point is
// evaluated and both parts are searched. A run of one segment goes to the
// lower tier, which halves the segment itself with the same test and
// sharper bounds, and splits it before the first touch where f can first
// reach 0 as well:
// for convex shapes the tangents at both ends (f is convex along a segment
// because the signed distance of a convex solid is a convex function and
// P, R are affine in t); for non-convex shapes the tangents of their convex
// minorant (hullBounder) and their refined bound (boundRefiner). A piece
// whose Lipschitz bound alone is within SweepTol is always dropped, so the
// search ends. The path's end points are evaluated first; the points inside
// dropped runs are never evaluated.
//
// Because the search goes left first, everything before the start of the
// run or piece at hand has been proved clear (f > 0) until a touch is
// found, so the first evaluated point with f <= SweepTol is the earliest
// touch the guarantees ask for.
func sweepLocal(ev evaluator, path PathView, n int, posed bool, m *mat3, pos r3.Vec,
	margin float64, sc *sweepScratch) SweepResult {
	const tol = SweepTol
	buf := sc.buf[:n]
	sc.gen++ // every cached point evaluation is stale now
	fn := shapeFns{ev: ev}
	r := sweepRun{cvx: ev.convex(), path: path, posed: posed, m: m, pos: pos, margin: margin, sc: sc,
		best: math.Inf(1), lbAll: math.Inf(1)}
	if !r.cvx {
		fn.refiner, _ = ev.(boundRefiner)
		if hb, ok := ev.(hullBounder); ok {
			fn.hull = hb.hull()
		}
		r.hasH = fn.hull != nil
	}
	r.eval(fn, 0)
	if n > 1 {
		r.eval(fn, n-1)
		cum, up, down := sc.cum[:n], sc.up[:n], sc.down[:n]
		// Each split replaces a run by two parts, the left one of which is
		// searched first: the stack holds at most one run per halving
		// plus the runs proved clear, fewer than 64 for any path.
		spans := &sc.spans
		spans[0] = span{0, int32(n - 1), false}
		sp := 1
		for sp > 0 {
			sp--
			i, j, clear := int(spans[sp].i), int(spans[sp].j), spans[sp].clear
			gi := buf[i].g
			if !r.touched && gi <= tol {
				// Everything before point i has been proved clear.
				r.touched, r.touchT = true, path.T[i]
			}
			if j == i+1 {
				r.segment(fn, i, clear)
				continue
			}
			gj := buf[j].g
			need := r.best - tol
			lb := minf(0.5*(gi+gj-(cum[j]-cum[i])), minf(gi, gj))
			if clear {
				lb = maxf(lb, 0)
			}
			if !(lb >= need) {
				// The one-sided bounds, tried only when needed.
				lo := minf(gi, gj)
				lb = maxf(lb, minf(maxf(gi-(sc.maxUp(i, j)-up[i]), gj-(sc.maxDown(i, j)-down[j])), lo))
			}
			if (r.touched || lb > 0 || clear) && lb >= need {
				r.lbAll = minf(r.lbAll, lb)
				continue
			}
			if sp+2 > len(spans) {
				// Not reached for any path (see above); keep the bound and
				// count a possible touch as one.
				r.lbAll = minf(r.lbAll, lb)
				if !r.touched && !(lb > 0) && !clear {
					r.touched, r.touchT = true, path.T[i]
				}
				continue
			}
			s, left := i+(j-i)/2, clear
			if !r.touched && !clear && gi > tol {
				// f > 0 up to the last point x with up_x − up_i < f_i.
				x := i
				for x < j && up[x+1]-up[i] < gi {
					x++
				}
				switch {
				case x == j:
					// f > 0 on the whole run: search it for the minimum.
					left = true
				case x > i:
					s, left = x, true
				default:
					s = i + 1
				}
			}
			r.eval(fn, s)
			spans[sp] = span{int32(s), int32(j), clear}
			spans[sp+1] = span{int32(i), int32(s), left}
			sp += 2
		}
	}
	if !r.touched && buf[n-1].g <= tol {
		r.touched, r.touchT = true, path.T[n-1]
	}
	return SweepResult{
		Touch:   r.touched,
		TouchT:  r.touchT,
		MinSep:  min(r.lbAll, r.best),
		MinSepT: r.bestT,
	}
}

// segment searches segment k (points k and k+1 evaluated) by halving it;
// clear when f > 0 has been proved on it.
func (r *sweepRun) segment(fn shapeFns, k int, clear bool) {
	const tol = SweepTol
	path := r.path
	e0, e1 := &r.sc.buf[k], &r.sc.buf[k+1]
	dp := r3.Sub(e1.p, e0.p)
	r0, dr := path.R[k], path.R[k+1]-path.R[k]
	if r.hasH {
		r.evalHull(fn, k)
		r.evalHull(fn, k+1)
	}
	ls := norm(dp) + math.Abs(dr)
	t0, dt := path.T[k], path.T[k+1]-path.T[k]
	stack := &r.sc.stack
	stack[0] = interval{a: 0, b: 1, ga: e0.g, gb: e1.g,
		da: r3.Dot(e0.gr, dp) - dr, db: r3.Dot(e1.gr, dp) - dr, clear: clear}
	if r.hasH {
		stack[0].ha, stack[0].hb = e0.hg, e1.hg
		stack[0].hda, stack[0].hdb = r3.Dot(e0.hgr, dp)-dr, r3.Dot(e1.hgr, dp)-dr
	}
	sp := 1
	for sp > 0 {
		sp--
		it := &stack[sp]
		if !r.touched && it.ga <= tol {
			// Everything before it.a has been proved clear (f > 0).
			r.touched, r.touchT = true, t0+it.a*dt
		}
		lb := it.lowerBound(ls, r.cvx, r.hasH)
		if it.clear {
			// f > 0 on [a, b), f(b) = gb.
			lb = maxf(lb, minf(0, it.gb))
		}
		if (r.touched || lb > 0 || it.clear) && lb >= r.best-tol {
			r.lbAll = minf(r.lbAll, lb)
			continue
		}
		// The refined bound cannot exceed the smaller end value, so it is
		// of no use for a piece that ends at f <= 0 before the first touch
		// (the touch is there to be found).
		if fn.refiner != nil && (r.touched || it.clear || minf(it.ga, it.gb) > 0) {
			lb = maxf(lb, fn.refiner.refineBound(e0.p, dp, r0, dr, r.margin, it.a, it.b, it.ga, it.gb))
			if (r.touched || lb > 0 || it.clear) && lb >= r.best-tol {
				r.lbAll = minf(r.lbAll, lb)
				continue
			}
		}
		w := it.b - it.a
		if sp+2 > len(stack) || w < 1.0/(1<<maxSplitDepth) || math.IsNaN(lb) {
			// Cannot refine further (only for absurd inputs): keep the
			// bound, and count a possible touch as a touch.
			r.lbAll = min(r.lbAll, lb) // keeps a NaN
			if !r.touched && !(lb > 0) {
				r.touched, r.touchT = true, t0+it.a*dt
			}
			continue
		}
		s := it.a + 0.5*w
		newton := false
		if !r.touched && !it.clear && it.ga > tol {
			// Before the first touch, split where f can first reach 0
			// (f > 0 is then proved before the split): the Lipschitz
			// bound, and the tangent at a of f (convex) or of the convex
			// minorant. This finds a touch in a few steps where halving
			// needs one per bit of the touch time.
			c := it.a + it.ga/ls
			if r.cvx && it.da < 0 {
				c = maxf(c, it.a-it.ga/it.da)
			}
			if r.hasH && it.ha > 0 && it.hda < 0 {
				c = maxf(c, it.a-it.ha/it.hda)
			}
			if c > it.a && c < it.b {
				s, newton = c, true
			}
		}
		q := r3.Add(e0.p, r3.Scale(s, dp))
		sd, gr := fn.ev.sdGrad(q)
		off := r0 + s*dr + r.margin
		gm := sd - off
		dm := r3.Dot(gr, dp) - dr
		if gm < r.best {
			r.best, r.bestT = gm, t0+s*dt
		}
		left, right := *it, *it
		// Both parts of a clear piece are clear; the part before a split
		// where f can first reach 0 is clear.
		right.a, right.ga, right.da = s, gm, dm
		left.b, left.gb, left.db, left.clear = s, gm, dm, it.clear || newton
		if r.hasH {
			hs, hgr := fn.hull.sdGrad(q)
			hm, hdm := hs-off, r3.Dot(hgr, dp)-dr
			right.ha, right.hda = hm, hdm
			left.hb, left.hdb = hm, hdm
		}
		stack[sp], stack[sp+1] = right, left
		sp += 2
	}
}

// pathBox is what the bounding-volume pre-checks need to know of a path.
type pathBox struct {
	box  AABB
	maxR float64
	// c and reach: every point of the path (with its sphere) lies within
	// reach of c: |P(t) − c| + R(t) <= reach for all t. c is the centre of
	// the box and reach its half diagonal plus the largest radius.
	c     r3.Vec
	reach float64
	n     int  // usable points: min of the slice lengths
	ok    bool // every coordinate, radius and time finite
}

// boxOfPath measures the path.
func boxOfPath(path PathView) pathBox {
	n := min(len(path.T), len(path.P), len(path.R))
	if n == 0 {
		return pathBox{ok: true}
	}
	ps, rs, ts := path.P[:n], path.R[:n], path.T[:n]
	lo, hi, maxR := ps[0], ps[0], rs[0]
	// bad is 0 while every value is finite (v − v is 0 for a finite v and
	// NaN for NaN or ±Inf; NaN spreads through the sum).
	bad := 0.0
	for k, p := range ps {
		r := rs[k]
		bad += (p.X - p.X) + (p.Y - p.Y) + (p.Z - p.Z) + (r - r) + (ts[k] - ts[k])
		// Plain comparisons: the built-in min and max order NaNs and
		// signed zeros, which costs here and is not needed (a NaN marks
		// the path bad anyway).
		if p.X < lo.X {
			lo.X = p.X
		}
		if p.X > hi.X {
			hi.X = p.X
		}
		if p.Y < lo.Y {
			lo.Y = p.Y
		}
		if p.Y > hi.Y {
			hi.Y = p.Y
		}
		if p.Z < lo.Z {
			lo.Z = p.Z
		}
		if p.Z > hi.Z {
			hi.Z = p.Z
		}
		if r > maxR {
			maxR = r
		}
	}
	pb := pathBox{box: AABB{Min: lo, Max: hi}, maxR: maxR, n: n, ok: bad == 0}
	if !pb.ok {
		return pb
	}
	pb.c = r3.Scale(0.5, r3.Add(lo, hi))
	pb.reach = 0.5*norm(r3.Sub(hi, lo)) + maxR
	return pb
}

// lengths writes the path's cumulative lengths into sc (see sweepScratch).
func (sc *sweepScratch) lengths(path PathView, n int) {
	ps, rs := path.P[:n], path.R[:n]
	cum, up, down := sc.cum[:n], sc.up[:n], sc.down[:n]
	cum[0], up[0], down[0] = 0, rs[0], rs[0]
	sc.upInc, sc.downInc, sc.downDec = true, true, true
	// Plain comparisons and running sums in registers: this loop runs for
	// every forecast that reaches an exact query.
	l, c := 0.0, 0.0
	for k := 1; k < n; k++ {
		dr := rs[k] - rs[k-1]
		d := norm(r3.Sub(ps[k], ps[k-1]))
		// up rises by d + dr, down by dr − d.
		if dr < -d {
			sc.upInc = false
		}
		if dr < d {
			sc.downInc = false
		}
		if dr > d {
			sc.downDec = false
		}
		l += d
		c += d + math.Abs(dr)
		cum[k] = c
		up[k], down[k] = l+rs[k], rs[k]-l
	}
	dm := sc.downMax[:n]
	m := down[n-1]
	for k := n - 1; k >= 0; k-- {
		if down[k] > m {
			m = down[k]
		}
		dm[k] = m
	}
}

// maxUp returns the largest up over points i..j.
func (sc *sweepScratch) maxUp(i, j int) float64 {
	if sc.upInc {
		return sc.up[j]
	}
	m := sc.up[i]
	for _, v := range sc.up[i+1 : j+1] {
		m = maxf(m, v)
	}
	return m
}

// maxDown returns the largest down over points i..j.
func (sc *sweepScratch) maxDown(i, j int) float64 {
	switch {
	case sc.downInc:
		return sc.down[j]
	case sc.downDec:
		return sc.down[i]
	case j == len(sc.down)-1:
		return sc.downMax[i]
	}
	m := sc.down[i]
	for _, v := range sc.down[i+1 : j+1] {
		m = maxf(m, v)
	}
	return m
}
