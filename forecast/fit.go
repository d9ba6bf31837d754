package forecast

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/gonum/stat"
)

// FitFile is one recording given to Fit, with the cross-validation group it
// belongs to (files of one group are always held out together).
type FitFile struct {
	Name   string
	Group  string
	Tracks []TrackData
}

// FitOptions control Fit.
type FitOptions struct {
	Horizons []float64 // seconds, increasing, whole milliseconds
	// Ridge is the ridge penalty relative to the mean diagonal of the normal
	// matrix (default DefaultRidge).
	Ridge float64
	// RidgeCV chooses the ridge penalty of each horizon from RidgeGrid by
	// nested cross-validation instead (see Fit); Ridge is then ignored.
	RidgeCV bool
	// Levels are the coverage levels of the recorded radius quantiles
	// (default DefaultLevels).
	Levels []float64
	// Coverage is the radius coverage the cross-validated scores use
	// (default DefaultCoverage); it must be within Levels.
	Coverage float64
	GapReset float64 // seconds; <= 0: DefaultGapReset
	Warmup   float64 // seconds; <= 0: DefaultWarmup
	// Date, Tool and Credit are copied into the provenance.
	Date, Tool, Credit string
	// Progress, when set, is called as work advances.
	Progress func(stage string, done, total int)
}

// maxQuantileSamples bounds the normalised errors kept per horizon for the
// radius quantiles.
const maxQuantileSamples = 250000

// scaleRounds is the number of rounds of the radius scale regression.
var scaleRounds = 2

// DefaultRidge is the default relative ridge penalty: it only keeps the
// normal equations solvable. A penalty relative to the mean diagonal weighs
// most on the terms of smallest scale: at 1e-3 it shrank the gain of the
// short-window velocity term (osc-dv) by a tenth on the development
// recordings, and every person left out of the fit paid for it (at 100 ms,
// 1–2% of RMSE for subjects 5 and 131).
const DefaultRidge = 1e-6

// RidgeGrid are the relative ridge penalties nested cross-validation
// (FitOptions.RidgeCV) chooses from, increasing. On the development
// recordings its choice is not stable: with three groups left in a fold, one
// of them several times the others, the inner folds prefer strong shrinkage
// where the held-out person does not, so the default is a fixed small ridge.
var RidgeGrid = []float64{1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2}

// DefaultLevels are the coverage levels recorded in gains files.
var DefaultLevels = []float64{0.5, 0.8, 0.9, 0.95, 0.975, 0.99}

// DefaultFitHorizons are the horizons fitted by default: 50 ms to 500 ms.
var DefaultFitHorizons = []float64{0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.35, 0.4, 0.45, 0.5}

// FitResult is the outcome of Fit.
type FitResult struct {
	// Gains are fitted on every file; their CV fields and radius quantiles
	// come from leave-one-group-out cross-validation.
	Gains *Gains
	// Groups are the cross-validation groups, sorted.
	Groups []string
	// Folds[g] are gains fitted without group g (scale and radius quantiles
	// calibrated without it too), used to score group g.
	Folds map[string]*Gains
	// CV[g] holds the errors of group g under Folds[g].
	CV map[string]*Scorer
}

// CVScorer returns the pooled cross-validated errors of all groups.
func (r *FitResult) CVScorer() *Scorer {
	var s *Scorer
	for _, g := range r.Groups {
		if s == nil {
			s = NewScorer(r.CV[g].Horizons)
		}
		s.Merge(r.CV[g])
	}
	return s
}

// normal equations of one group at one horizon (xtx: lower triangle), with
// the sum of the squared targets.
type normalEq struct {
	xtx [NumFeatures][NumFeatures]float64
	xty [NumFeatures]float64
	yy  float64
	n   int
}

func (a *normalEq) add(f *[NumFeatures]r3.Vec, d r3.Vec) {
	for i := range f {
		for j := 0; j <= i; j++ {
			a.xtx[i][j] += r3.Dot(f[i], f[j])
		}
		a.xty[i] += r3.Dot(f[i], d)
	}
	a.yy += r3.Norm2(d)
	a.n++
}

func (a *normalEq) merge(b *normalEq) {
	for i := 0; i < NumFeatures; i++ {
		for j := 0; j <= i; j++ {
			a.xtx[i][j] += b.xtx[i][j]
		}
		a.xty[i] += b.xty[i]
	}
	a.yy += b.yy
	a.n += b.n
}

// rss returns the residual sum of squares of gains g on these equations:
// yᵀy − 2·gᵀXᵀy + gᵀXᵀX·g.
func (a *normalEq) rss(g *[NumFeatures]float64) float64 {
	r := a.yy
	for i := 0; i < NumFeatures; i++ {
		r -= 2 * g[i] * a.xty[i]
		for j := 0; j < NumFeatures; j++ {
			x := a.xtx[max(i, j)][min(i, j)]
			r += g[i] * x * g[j]
		}
	}
	return r
}

type scaleEq struct {
	sts [NumScale][NumScale]float64
	ste [NumScale]float64
}

// kinForecaster exposes a kinState as a Forecaster, for walking tracks.
type kinForecaster struct{ k kinState }

func (f *kinForecaster) Update(t float64, p r3.Vec)  { f.k.update(t, p) }
func (f *kinForecaster) Reset()                      { f.k.reset() }
func (f *kinForecaster) Predict(*Path, Horizon) bool { return f.k.ok }
func (kinModel) Name() string                        { return "kin" }
func (kinModel) New() Forecaster                     { return &kinForecaster{k: newKinState()} }

type kinModel struct{}

// Fit fits the fitted model's gains on files and cross-validates them by
// leaving out one group at a time. At least two groups are needed. The gains
// of each horizon are a ridge least-squares fit. With FitOptions.RidgeCV the
// ridge strength of each horizon is chosen from RidgeGrid by nested
// cross-validation: every model (the final one and each fold's) takes the
// strength that predicts best, summed over its own groups, when each of them
// is left out in turn.
func Fit(files []FitFile, opt FitOptions) (*FitResult, error) {
	if len(opt.Horizons) == 0 {
		opt.Horizons = DefaultFitHorizons
	}
	if stepFor(opt.Horizons) <= 0 {
		return nil, fmt.Errorf("horizons: each must be a positive whole number of milliseconds")
	}
	for i := 1; i < len(opt.Horizons); i++ {
		if opt.Horizons[i] <= opt.Horizons[i-1] {
			return nil, fmt.Errorf("horizons: must increase")
		}
	}
	if opt.Ridge == 0 {
		opt.Ridge = DefaultRidge
	}
	if opt.Ridge < 0 {
		return nil, fmt.Errorf("ridge: %g: must be >= 0", opt.Ridge)
	}
	if len(opt.Levels) == 0 {
		opt.Levels = DefaultLevels
	}
	if opt.Coverage == 0 {
		opt.Coverage = DefaultCoverage
	}
	if _, err := interpQuantile(opt.Levels, opt.Levels, opt.Coverage); err != nil {
		return nil, fmt.Errorf("coverage: %v", err)
	}
	gi := map[string]int{}
	var groups []string
	for _, f := range files {
		if _, ok := gi[f.Group]; !ok {
			gi[f.Group] = 0
			groups = append(groups, f.Group)
		}
	}
	sort.Strings(groups)
	for i, g := range groups {
		gi[g] = i
	}
	G, H := len(groups), len(opt.Horizons)
	if G < 2 {
		return nil, fmt.Errorf("cross-validation needs files from at least two groups (got %d)", G)
	}
	eo := EvalOptions{GapReset: opt.GapReset, Warmup: opt.Warmup} // horizons are leads: no extra Lead
	total := 0
	for _, f := range files {
		total += len(f.Tracks)
	}
	progress := func(stage string, done int) {
		if opt.Progress != nil {
			opt.Progress(stage, done, total)
		}
	}
	// walk calls fn for every example of every file.
	walk := func(stage string, fn func(g, k int, ks *kinState, f *[NumFeatures]r3.Vec, d r3.Vec)) error {
		done := 0
		var f [NumFeatures]r3.Vec
		for _, file := range files {
			g := gi[file.Group]
			for ti := range file.Tracks {
				var kf *kinForecaster
				err := walkTrack(kinModel{}, &file.Tracks[ti], eo, opt.Horizons, func(fc Forecaster) {
					kf = fc.(*kinForecaster)
				}, func(float64, r3.Vec) bool { return kf.k.ok }, func(k int, d r3.Vec) {
					kf.k.features(opt.Horizons[k], &f)
					fn(g, k, &kf.k, &f, d)
				})
				if err != nil {
					return fmt.Errorf("%s: %w", file.Name, err)
				}
				done++
				progress(stage, done)
			}
		}
		return nil
	}

	// Pass 1: normal equations per group and horizon.
	acc := make([][]normalEq, G)
	for g := range acc {
		acc[g] = make([]normalEq, H)
	}
	if err := walk("normal equations", func(g, k int, _ *kinState, f *[NumFeatures]r3.Vec, d r3.Vec) {
		acc[g][k].add(f, d)
	}); err != nil {
		return nil, err
	}
	// The models fitted: the final one (no group left out), each group left
	// out, and each pair of groups left out. The radius of the model that
	// leaves g out is calibrated on residuals of the other groups j that are
	// out of fold for j too: gains fitted without j and g (ex2[j][g]). With
	// only two groups nothing is left, and the fold's radius is calibrated
	// on its own training residuals instead (ex1[g], fitted on j).
	type fitModel struct {
		excl  []int
		gains [][NumFeatures]float64
		ridge []float64 // per horizon
	}
	included := func(m *fitModel, g int) bool {
		for _, e := range m.excl {
			if g == e {
				return false
			}
		}
		return true
	}
	models := []*fitModel{{}}
	ex1m := make([]*fitModel, G)
	ex2m := make([][]*fitModel, G)
	for j := 0; j < G; j++ {
		ex1m[j] = &fitModel{excl: []int{j}}
		models = append(models, ex1m[j])
		ex2m[j] = make([]*fitModel, G)
	}
	for j := 0; j < G; j++ {
		for g := j + 1; g < G; g++ {
			if G == 2 {
				ex2m[j][g], ex2m[g][j] = ex1m[g], ex1m[j]
				continue
			}
			m := &fitModel{excl: []int{j, g}}
			ex2m[j][g], ex2m[g][j] = m, m
			models = append(models, m)
		}
	}
	// solve fits m: per horizon, the ridge strength is opt.Ridge or, with
	// opt.RidgeCV, the one of RidgeGrid with the smallest sum over m's groups
	// of the squared error on each group of the fit without it (with fewer
	// than two groups there is nothing to leave out: the grid's smallest).
	solve := func(m *fitModel) error {
		m.gains = make([][NumFeatures]float64, H)
		m.ridge = make([]float64, H)
		var in []int
		for g := 0; g < G; g++ {
			if included(m, g) {
				in = append(in, g)
			}
		}
		for k := 0; k < H; k++ {
			fitOn := func(skip int, lam float64) ([NumFeatures]float64, error) {
				var sum normalEq
				for _, g := range in {
					if g != skip {
						sum.merge(&acc[g][k])
					}
				}
				return ridge(&sum, lam)
			}
			lam := opt.Ridge
			if opt.RidgeCV {
				lam = RidgeGrid[0]
				if len(in) >= 2 {
					best := math.Inf(1)
					for _, l := range RidgeGrid {
						sse := 0.0
						for _, h := range in {
							gk, err := fitOn(h, l)
							if err != nil {
								return fmt.Errorf("horizon %g ms: %w", opt.Horizons[k]*1000, err)
							}
							sse += acc[h][k].rss(&gk)
						}
						if sse < best {
							best, lam = sse, l
						}
					}
				}
			}
			gk, err := fitOn(-1, lam)
			if err != nil {
				return fmt.Errorf("horizon %g ms: %w", opt.Horizons[k]*1000, err)
			}
			m.gains[k], m.ridge[k] = gk, lam
		}
		return nil
	}
	for _, m := range models {
		if err := solve(m); err != nil {
			return nil, err
		}
	}
	resid := func(gains *[NumFeatures]float64, f *[NumFeatures]r3.Vec, d r3.Vec) float64 {
		var p r3.Vec
		for i := range f {
			p = r3.Add(p, r3.Scale(gains[i], f[i]))
		}
		return r3.Norm(r3.Sub(p, d))
	}
	all := models[0].gains
	ex1 := make([][][NumFeatures]float64, G)   // without group j
	ex2 := make([][][][NumFeatures]float64, G) // without groups j and g
	for j := 0; j < G; j++ {
		ex1[j] = ex1m[j].gains
		ex2[j] = make([][][NumFeatures]float64, G)
		for g := 0; g < G; g++ {
			if g != j {
				ex2[j][g] = ex2m[j][g].gains
			}
		}
	}
	// Pass 2: radius scale equations on out-of-fold residuals. Target G is
	// the final model; target g < G the model that leaves g out. The first
	// round is ordinary least squares of |e| on the scale terms; later rounds
	// weight each example by 1/σ² of the previous round, so the fit is of
	// the relative error and no regime dominates.
	sigma := func(b *[NumScale]float64, s *[NumScale]float64) float64 {
		v := 0.0
		for i := range s {
			v += b[i] * s[i]
		}
		return math.Max(v, minScale)
	}
	addScale := func(e *scaleEq, s *[NumScale]float64, r, w float64) {
		for i := range s {
			for j := range s {
				e.sts[i][j] += w * s[i] * s[j]
			}
			e.ste[i] += w * s[i] * r
		}
	}
	var s [NumScale]float64
	var scale [][][NumScale]float64
	for round := 0; round < scaleRounds; round++ {
		sc := make([][]scaleEq, G+1)
		for i := range sc {
			sc[i] = make([]scaleEq, H)
		}
		weight := func(t, k int) float64 {
			if round == 0 {
				return 1
			}
			v := sigma(&scale[t][k], &s)
			return 1 / (v * v)
		}
		if err := walk(fmt.Sprintf("radius scale %d/%d", round+1, scaleRounds), func(j, k int, ks *kinState, f *[NumFeatures]r3.Vec, d r3.Vec) {
			ks.scaleTerms(opt.Horizons[k], &s)
			addScale(&sc[G][k], &s, resid(&ex1[j][k], f, d), weight(G, k))
			for g := 0; g < G; g++ {
				if g != j {
					addScale(&sc[g][k], &s, resid(&ex2[j][g][k], f, d), weight(g, k))
				}
			}
		}); err != nil {
			return nil, err
		}
		next := make([][][NumScale]float64, G+1)
		for t := range next {
			next[t] = make([][NumScale]float64, H)
			for k := 0; k < H; k++ {
				next[t][k] = nnls(&sc[t][k])
			}
		}
		scale = next
	}
	// Pass 3: normalised out-of-fold errors and their quantiles.
	// At most maxQuantileSamples per target and horizon are kept (every
	// stride-th example), which bounds memory on long recordings.
	zs := make([][][]float64, G+1)
	stride := make([][]int, G+1)
	seen := make([][]int, G+1)
	for t := range zs {
		zs[t] = make([][]float64, H)
		stride[t] = make([]int, H)
		seen[t] = make([]int, H)
		for k := 0; k < H; k++ {
			n := 0
			for g := 0; g < G; g++ {
				if g != t {
					n += acc[g][k].n
				}
			}
			stride[t][k] = 1 + (n-1)/maxQuantileSamples
		}
	}
	keep := func(t, k int, z float64) {
		if seen[t][k]%stride[t][k] == 0 {
			zs[t][k] = append(zs[t][k], z)
		}
		seen[t][k]++
	}
	if err := walk("radius quantiles", func(j, k int, ks *kinState, f *[NumFeatures]r3.Vec, d r3.Vec) {
		ks.scaleTerms(opt.Horizons[k], &s)
		keep(G, k, resid(&ex1[j][k], f, d)/sigma(&scale[G][k], &s))
		for g := 0; g < G; g++ {
			if g != j {
				keep(g, k, resid(&ex2[j][g][k], f, d)/sigma(&scale[g][k], &s))
			}
		}
	}); err != nil {
		return nil, err
	}
	build := func(t int, gains [][NumFeatures]float64, ridges []float64) *Gains {
		out := &Gains{
			Format: GainsFormat, FeatureSet: FeatureSet,
			Features: append([]string(nil), featureNames[:]...), ScaleTerms: append([]string(nil), scaleNames[:]...),
			Levels: append([]float64(nil), opt.Levels...),
		}
		for k, h := range opt.Horizons {
			z := zs[t][k]
			sort.Float64s(z)
			q := make([]float64, len(opt.Levels))
			for i, l := range opt.Levels {
				if len(z) > 0 {
					q[i] = stat.Quantile(l, stat.Empirical, z, nil)
				}
			}
			out.Horizons = append(out.Horizons, HorizonGains{
				MS: math.Round(h * 1000), Ridge: ridges[k], Gains: append([]float64(nil), gains[k][:]...),
				Scale: append([]float64(nil), scale[t][k][:]...), RadiusZ: q,
			})
		}
		return out
	}
	res := &FitResult{Groups: groups, Folds: map[string]*Gains{}, CV: map[string]*Scorer{}}
	res.Gains = build(G, all, models[0].ridge)
	for g, name := range groups {
		res.Folds[name] = build(g, ex1[g], ex1m[g].ridge)
	}
	// Pass 4: score every group with the model that never saw it.
	done := 0
	for _, file := range files {
		g := file.Group
		m, err := newFittedModel(res.Folds[g], opt.Coverage)
		if err != nil {
			return nil, err
		}
		if res.CV[g] == nil {
			res.CV[g] = NewScorer(opt.Horizons)
		}
		for ti := range file.Tracks {
			if err := ScoreTrack(m, &file.Tracks[ti], eo, res.CV[g]); err != nil {
				return nil, fmt.Errorf("%s: %w", file.Name, err)
			}
			done++
			progress("cross-validation", done)
		}
	}
	for k, r := range res.CVScorer().Stats(KindFitted) {
		res.Gains.Horizons[k].CV = CVStats{Samples: r.Samples, RMSE: r.RMSE, P50: r.P50, P90: r.P90, P95: r.P95, P99: r.P99, Coverage: r.Coverage}
	}
	// Provenance.
	p := &res.Gains.Fitted
	p.Date, p.Tool, p.Credit, p.Ridge = opt.Date, opt.Tool, opt.Credit, opt.Ridge
	p.Method = "ridge least squares per horizon"
	if opt.RidgeCV {
		p.Ridge = 0
		p.Method += fmt.Sprintf("; ridge chosen per horizon from %v by nested leave-one-group-out cross-validation (horizons[].ridge)", RidgeGrid)
	}
	p.Folds = fmt.Sprintf("leave one group out (%d groups: %v)", G, groups)
	var rates []float64
	for _, file := range files {
		fi := FileInfo{Name: file.Name, Group: file.Group}
		var dts []float64
		for _, tr := range file.Tracks {
			fi.Samples += len(tr.T)
			for i := 1; i < len(tr.T); i++ {
				if dt := tr.T[i] - tr.T[i-1]; dt > 0 {
					dts = append(dts, dt)
				}
			}
		}
		if len(dts) > 0 {
			sort.Float64s(dts)
			fi.RateHz = math.Round(10/dts[len(dts)/2]) / 10
			rates = append(rates, fi.RateHz)
		}
		p.Files = append(p.Files, fi)
	}
	if len(rates) > 0 {
		sort.Float64s(rates)
		p.SampleRateHz = rates[len(rates)/2]
	}
	return res, nil
}

// ridge solves (XᵀX + λ·mean(diag)·I) g = Xᵀy with gonum's Cholesky.
func ridge(a *normalEq, rel float64) ([NumFeatures]float64, error) {
	var g [NumFeatures]float64
	if a.n == 0 {
		return g, fmt.Errorf("no examples")
	}
	n := NumFeatures
	sym := mat.NewSymDense(n, nil)
	tr := 0.0
	for i := 0; i < n; i++ {
		tr += a.xtx[i][i]
	}
	lam := rel * tr / float64(n)
	for i := 0; i < n; i++ {
		for j := 0; j <= i; j++ {
			v := a.xtx[i][j]
			if i == j {
				v += lam
			}
			sym.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(sym) {
		return g, fmt.Errorf("the normal equations are singular (too little or degenerate data)")
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, mat.NewVecDense(n, a.xty[:])); err != nil {
		return g, err
	}
	for i := range g {
		g[i] = x.AtVec(i)
	}
	return g, nil
}

// nnls solves the scale regression min ||S b − |e|||² subject to b >= 0 by
// an active-set method over the NumScale terms.
func nnls(e *scaleEq) [NumScale]float64 {
	active := [NumScale]bool{}
	for i := range active {
		active[i] = e.sts[i][i] > 0
	}
	var b [NumScale]float64
	for iter := 0; iter < NumScale; iter++ {
		var idx []int
		for i, a := range active {
			if a {
				idx = append(idx, i)
			}
		}
		n := len(idx)
		sym := mat.NewSymDense(n, nil)
		rhs := mat.NewVecDense(n, nil)
		for r, i := range idx {
			for c, j := range idx {
				if c <= r {
					v := e.sts[i][j]
					if r == c {
						v *= 1 + 1e-9
					}
					sym.SetSym(r, c, v)
				}
			}
			rhs.SetVec(r, e.ste[i])
		}
		var ch mat.Cholesky
		var x mat.VecDense
		b = [NumScale]float64{}
		if !ch.Factorize(sym) || ch.SolveVecTo(&x, rhs) != nil {
			break
		}
		worst, wi := 0.0, -1
		for r, i := range idx {
			b[i] = x.AtVec(r)
			if b[i] < worst {
				worst, wi = b[i], i
			}
		}
		if wi < 0 {
			break
		}
		active[wi] = false
	}
	for i := range b {
		if b[i] < 0 {
			b[i] = 0
		}
	}
	return b
}
