package forecast

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"
)

// windowSpec is one causal local polynomial fit: degree, window (seconds),
// the fewest samples it takes when the window holds fewer (see history.fit,
// whose meaning it shares), and whether the variance factors (polyFit.VarD)
// and the residual (polyFit.RMS) are wanted; when not, they are left zero.
type windowSpec struct {
	deg     int
	window  float64
	minN    int
	wantVar bool
	wantRMS bool
}

// maxWindows bounds the number of windows fitMany fits at once.
const maxWindows = 8

// fitMany does what history.fit does for every window of specs (at most
// maxWindows of them), writing out[w] for specs[w], but the windows share the
// work: the power sums Σ τ^k and Σ τ^k·p (τ the time before the latest
// sample, p relative to the latest position) of a window are the running
// sums at its last sample, so a walk back through the samples serves every
// window at once. Each window's sums are then scaled to u = τ/span, as in
// history.fit, and solved there. The results equal history.fit's to
// rounding (tests check 1e-9 m). It reports false when any fit fails (too
// few samples, repeated times, a singular system). It does not allocate.
func (h *history) fitMany(specs []windowSpec, out []polyFit) bool {
	nw := len(specs)
	if nw > maxWindows || len(out) < nw {
		return false
	}
	tl, pl := h.at(0)
	mask := len(h.t) - 1
	last := (h.head + h.n - 1) & mask // ring index of the latest sample
	// Samples in each window (history.fit's rule): those within window
	// seconds of the latest one, at least minN (and deg+1) when held. One
	// scan, the windows taken from the shortest.
	var byLen [maxWindows]int
	for w := 0; w < nw; w++ {
		if h.n < specs[w].deg+1 {
			return false
		}
		j := w
		for j > 0 && specs[byLen[j-1]].window > specs[w].window {
			byLen[j] = byLen[j-1]
			j--
		}
		byLen[j] = w
	}
	var ns [maxWindows]int
	open := 0
	for i := 0; i < h.n && open < nw; i++ {
		dt := tl - h.t[(last-i)&mask]
		for open < nw && dt > specs[byLen[open]].window*(1+1e-9) {
			ns[byLen[open]] = i
			open++
		}
	}
	for ; open < nw; open++ {
		ns[byLen[open]] = h.n
	}
	maxN, nss := 0, 0 // nss: the samples whose Σ|p|² a residual needs
	for w := 0; w < nw; w++ {
		ns[w] = min(max(ns[w], specs[w].minN, specs[w].deg+1), h.n)
		maxN = max(maxN, ns[w])
		if specs[w].wantRMS {
			nss = max(nss, ns[w])
		}
	}
	// Windows in order of their sample counts (insertion sort).
	var order [maxWindows]int
	for w := 0; w < nw; w++ {
		j := w
		for j > 0 && ns[order[j-1]] > ns[w] {
			order[j] = order[j-1]
			j--
		}
		order[j] = w
	}
	// Running sums in three passes over the same samples (the time powers,
	// then the x and y moments, then the z moments: few enough running sums
	// in each to stay in registers), each saved at every window's last
	// sample; then each window is solved.
	var sums [maxWindows]windowSums
	var spans [maxWindows]float64
	next := 0
	var s0, s1, s2, s3, s4, s5, s6, ss float64
	for i := 0; i < maxN; i++ {
		j := (last - i) & mask
		t1 := h.t[j] - tl
		t2 := t1 * t1
		t3 := t2 * t1
		if i < nss {
			p := h.p[j]
			px, py, pz := p.X-pl.X, p.Y-pl.Y, p.Z-pl.Z
			ss = math.FMA(px, px, math.FMA(py, py, math.FMA(pz, pz, ss)))
		}
		s0++
		s1 += t1
		s2 += t2
		s3 += t3
		s4 = math.FMA(t3, t1, s4)
		s5 = math.FMA(t3, t2, s5)
		s6 = math.FMA(t3, t3, s6)
		for next < nw && ns[order[next]] == i+1 {
			w := order[next]
			sums[w].s = [2*MaxDegree + 1]float64{s0, s1, s2, s3, s4, s5, s6}
			sums[w].ss = ss
			spans[w] = -t1
			next++
		}
	}
	next = 0
	var b0x, b1x, b2x, b3x, b0y, b1y, b2y, b3y float64
	for i := 0; i < maxN; i++ {
		j := (last - i) & mask
		t1 := h.t[j] - tl
		t2 := t1 * t1
		t3 := t2 * t1
		px, py := h.p[j].X-pl.X, h.p[j].Y-pl.Y
		b0x += px
		b1x = math.FMA(t1, px, b1x)
		b2x = math.FMA(t2, px, b2x)
		b3x = math.FMA(t3, px, b3x)
		b0y += py
		b1y = math.FMA(t1, py, b1y)
		b2y = math.FMA(t2, py, b2y)
		b3y = math.FMA(t3, py, b3y)
		for next < nw && ns[order[next]] == i+1 {
			b := &sums[order[next]].b
			b[0].X, b[1].X, b[2].X, b[3].X = b0x, b1x, b2x, b3x
			b[0].Y, b[1].Y, b[2].Y, b[3].Y = b0y, b1y, b2y, b3y
			next++
		}
	}
	next = 0
	var b0z, b1z, b2z, b3z float64
	for i := 0; i < maxN; i++ {
		j := (last - i) & mask
		t1 := h.t[j] - tl
		t2 := t1 * t1
		t3 := t2 * t1
		pz := h.p[j].Z - pl.Z
		b0z += pz
		b1z = math.FMA(t1, pz, b1z)
		b2z = math.FMA(t2, pz, b2z)
		b3z = math.FMA(t3, pz, b3z)
		for next < nw && ns[order[next]] == i+1 {
			b := &sums[order[next]].b
			b[0].Z, b[1].Z, b[2].Z, b[3].Z = b0z, b1z, b2z, b3z
			next++
		}
	}
	for w := 0; w < nw; w++ {
		if !sums[w].solve(&specs[w], &out[w], ns[w], spans[w], pl) {
			return false
		}
	}
	return true
}

// windowSums are the sums of one window: Σ τ^k, Σ τ^k·p and Σ|p|², with τ
// the time before the latest sample and p relative to the latest position.
type windowSums struct {
	s  [2*MaxDegree + 1]float64
	b  [MaxDegree + 1]r3.Vec
	ss float64
}

// solve fits the polynomial of s to the n samples spanning span seconds
// whose sums are sm (pl the latest position), as history.fit does.
func (sm *windowSums) solve(s *windowSpec, f *polyFit, n int, span float64, pl r3.Vec) bool {
	if !(span > 0) {
		return false
	}
	deg, m := s.deg, s.deg+1
	f.deg = deg
	// Scale to u = τ/span: Σ u^k = Σ τ^k / span^k.
	var pw [2*MaxDegree + 1]float64
	var b [MaxDegree + 1]r3.Vec
	inv, sc := 1/span, 1.0
	for k := 0; k <= 2*deg; k++ {
		pw[k] = sm.s[k] * sc
		if k < m {
			b[k] = r3.Scale(sc, sm.b[k])
		}
		sc *= inv
	}
	var c [MaxDegree + 1]r3.Vec
	var id [MaxDegree + 1]float64
	if !solveHankel(m, &pw, &b, &c, &id, s.wantVar) {
		return false
	}
	f.RMS = 0
	if s.wantRMS {
		rss := sm.ss
		for k := 0; k < m; k++ {
			rss -= r3.Dot(c[k], b[k])
		}
		if n > m && rss > 0 {
			f.RMS = math.Sqrt(rss / float64(3*(n-m)))
		}
	}
	f.WantVar = s.wantVar
	fact, sp := 1.0, 1.0 // k! and span^-k
	for k := 0; k < m; k++ {
		if k > 0 {
			fact *= float64(k)
			sp *= inv
		}
		f.D[k] = r3.Scale(fact*sp, c[k])
		f.VarD[k] = id[k] * (fact * sp) * (fact * sp)
	}
	f.D[0] = r3.Add(f.D[0], pl)
	for k := m; k <= MaxDegree; k++ {
		f.D[k] = r3.Vec{}
		f.VarD[k] = 0
	}
	f.N, f.Span = n, span
	return true
}
