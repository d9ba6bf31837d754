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
}

// boundRefiner is implemented by non-convex shapes that can bound the
// separation along a piece of segment better than the Lipschitz bound:
// refineBound returns a lower bound of f(s) = sd(p0 + s·dp) − (r0 + s·dr) − m
// over s ∈ [a, b] (p0, dp in the shape's frame), given fa = f(a) and
// fb = f(b); or −Inf.
type boundRefiner interface {
	refineBound(p0, dp r3.Vec, r0, dr, m, a, b, fa, fb float64) float64
}

// interval is a piece [a, b] of one path segment in the segment's parameter
// s ∈ [0, 1], with f and df/ds at both ends.
type interval struct{ a, b, ga, gb, da, db float64 }

// maxSplitDepth bounds the subdivision of one segment (2⁻⁴⁰ of a segment
// is far below any useful time resolution).
const maxSplitDepth = 40

// lowerBound returns a lower bound of f on the interval. ls is the Lipschitz
// constant of f in s (|ΔP| + |ΔR| of the segment). For a convex shape, f is
// convex along the segment and the tangents at both ends bound it from
// below as well.
func (it *interval) lowerBound(ls float64, cvx bool) float64 {
	lo := min(it.ga, it.gb)
	lb := min(0.5*(it.ga+it.gb-ls*(it.b-it.a)), lo)
	if !cvx {
		return lb
	}
	var tb float64
	switch {
	case it.da >= 0:
		tb = it.ga
	case it.db <= 0:
		tb = it.gb
	default: // da < 0 < db: the tangents cross inside the interval
		s := (it.gb - it.ga + it.da*it.a - it.db*it.b) / (it.da - it.db)
		s = max(it.a, min(it.b, s))
		tb = it.ga + it.da*(s-it.a)
	}
	return min(max(lb, tb), lo)
}

// sweepLocal runs the exact path query of one shape against the path, whose
// points are first brought into the shape's frame by the inverse of the pose
// (m, pos) when posed. buf must have room for the path's points. See
// SweepTol for the guarantees.
//
// Method: every path point is evaluated; the smallest value is the first
// candidate. Then each segment is searched depth-first, left half first, by
// branch and bound: a piece is dropped when its lower bound shows it can
// neither improve the minimum by more than SweepTol nor (until a touch is
// found) reach f <= 0; otherwise it is halved. The lower bound is the
// Lipschitz bound (f changes by at most |ΔP| + |ΔR| over the segment, the
// signed distance being 1-Lipschitz) and, for convex shapes, the larger
// bound of the tangents at both ends (f is convex along a segment because
// the signed distance of a convex solid is a convex function and P, R are
// affine in t). A piece whose Lipschitz bound alone is within SweepTol is
// always dropped, so the search ends; for convex shapes it typically needs a
// handful of evaluations per segment near the closest approach and none
// elsewhere.
func sweepLocal(ev evaluator, cvx bool, path PathView, n int, posed bool, m *mat3, pos r3.Vec,
	margin float64, buf []pointEval) SweepResult {
	const tol = SweepTol
	best, bestT := math.Inf(1), 0.0
	for k := 0; k < n; k++ {
		p := path.P[k]
		if posed {
			p = m.applyT(r3.Sub(p, pos))
		}
		sd, gr := ev.sdGrad(p)
		g := sd - path.R[k] - margin
		buf[k] = pointEval{p: p, g: g, gr: gr}
		if g < best {
			best, bestT = g, path.T[k]
		}
	}
	var refiner boundRefiner
	if !cvx {
		refiner, _ = ev.(boundRefiner)
	}
	lbAll := math.Inf(1)
	touched, touchT := false, 0.0
	var stack [maxSplitDepth + 2]interval
	for k := 0; k+1 < n; k++ {
		e0, e1 := &buf[k], &buf[k+1]
		dp := r3.Sub(e1.p, e0.p)
		r0, dr := path.R[k], path.R[k+1]-path.R[k]
		ls := norm(dp) + math.Abs(dr)
		t0, dt := path.T[k], path.T[k+1]-path.T[k]
		stack[0] = interval{a: 0, b: 1, ga: e0.g, gb: e1.g,
			da: r3.Dot(e0.gr, dp) - dr, db: r3.Dot(e1.gr, dp) - dr}
		sp := 1
		for sp > 0 {
			sp--
			it := stack[sp]
			if !touched && it.ga <= tol {
				// Everything before it.a has been proved clear (f > 0).
				touched, touchT = true, t0+it.a*dt
			}
			lb := it.lowerBound(ls, cvx)
			if (touched || lb > 0) && lb >= best-tol {
				lbAll = min(lbAll, lb)
				continue
			}
			if refiner != nil {
				lb = max(lb, refiner.refineBound(e0.p, dp, r0, dr, margin, it.a, it.b, it.ga, it.gb))
				if (touched || lb > 0) && lb >= best-tol {
					lbAll = min(lbAll, lb)
					continue
				}
			}
			w := it.b - it.a
			if sp+2 > len(stack) || w < 1.0/(1<<maxSplitDepth) || math.IsNaN(lb) {
				// Cannot refine further (only for absurd inputs): keep the
				// bound, and count a possible touch as a touch.
				lbAll = min(lbAll, lb)
				if !touched && !(lb > 0) {
					touched, touchT = true, t0+it.a*dt
				}
				continue
			}
			s := it.a + 0.5*w
			sd, gr := ev.sdGrad(r3.Add(e0.p, r3.Scale(s, dp)))
			gm := sd - (r0 + s*dr) - margin
			dm := r3.Dot(gr, dp) - dr
			if gm < best {
				best, bestT = gm, t0+s*dt
			}
			stack[sp] = interval{a: s, b: it.b, ga: gm, gb: it.gb, da: dm, db: it.db}
			stack[sp+1] = interval{a: it.a, b: s, ga: it.ga, gb: gm, da: it.da, db: dm}
			sp += 2
		}
	}
	if !touched && buf[n-1].g <= tol {
		touched, touchT = true, path.T[n-1]
	}
	return SweepResult{
		Touch:   touched,
		TouchT:  touchT,
		MinSep:  min(lbAll, best),
		MinSepT: bestT,
	}
}

// pathBox is what the bounding-volume pre-check needs to know of a path.
type pathBox struct {
	box  AABB
	maxR float64
	n    int  // usable points: min of the slice lengths
	ok   bool // every coordinate, radius and time finite
}

func boxOfPath(path PathView) pathBox {
	n := min(len(path.T), len(path.P), len(path.R))
	if n == 0 {
		return pathBox{ok: true}
	}
	pb := pathBox{box: AABB{Min: path.P[0], Max: path.P[0]}, maxR: path.R[0], n: n, ok: true}
	for k := 0; k < n; k++ {
		p := path.P[k]
		pb.box.Min.X = min(pb.box.Min.X, p.X)
		pb.box.Min.Y = min(pb.box.Min.Y, p.Y)
		pb.box.Min.Z = min(pb.box.Min.Z, p.Z)
		pb.box.Max.X = max(pb.box.Max.X, p.X)
		pb.box.Max.Y = max(pb.box.Max.Y, p.Y)
		pb.box.Max.Z = max(pb.box.Max.Z, p.Z)
		pb.maxR = max(pb.maxR, path.R[k])
		if !finiteVec(p) || !finite(path.R[k]) || !finite(path.T[k]) {
			pb.ok = false
		}
	}
	return pb
}
