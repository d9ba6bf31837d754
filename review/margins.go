package review

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"
	"forereach/zones"
)

// Margin sizing.
//
// The horizon the cell needs is H = robot stopping time + system latency
// (robot.stopping_time + robot.system_latency): a warning must be up at
// least H before a hand enters a zone for the robot to be at rest when it
// arrives. A warning at margin m is a forecast path, with its uncertainty
// radius, that comes within m of the zone's shape before H has passed —
// the engine's entry rule with entry_within H and the zone's margin set to
// m. A warning keeps going while warnings follow each other within the
// release time (policy.release), as the engine's do.
//
// One pass does every margin at once. For every sample and zone it
// computes s, the smallest separation of the forecast path over [t, t+H]
// from the zone's shape less the radius (the path query with margin 0): the
// sample warns at every margin m >= s. For an entry at time te, the
// smallest margin that warns it H ahead is m* = the least m for which the
// samples with s <= m keep a warning going over the whole of [te − H, te]
// (found by bisection over the s values of the last H + release seconds).
// So the detection at any margin m is the share of entries with m* <= m:
// it never decreases as m grows. False alarms need the episodes
// themselves: for each margin of the grid, each track and zone keeps its
// own warning episodes (a sample warns the margins >= s only, so the work
// per sample is the number of grid margins at or above s), judged as in
// the review (see episodes).
//
// The sweep models forecast warnings only: an entry at the first sample
// after a tracking loss (the hand reappearing inside) is never warned in
// time by a forecast, whatever the margin, although the engine's fail-safe
// hold may have been up; the review reports such entries with the engine's
// own lead.

// Defaults of a margin sweep. Our choices, no source.
const (
	DefaultMaxMargin = 0.5   // m
	DefaultStep      = 0.005 // m
	DefaultTarget    = 0.99
	// errBin is the bin width of the error histograms (m): quantiles are
	// exact to within half of it.
	errBin = 0.0005
	// errMax is the largest error binned (m); larger ones are counted and
	// only their maximum is kept.
	errMax = 2.0
	// exitBand mirrors the engine's: after an entry, a hand must be this
	// far outside the shape before an exit is counted (m).
	exitBand = 0.005
	// rearm mirrors the engine's near-miss re-arm factor.
	rearm = 1.25
)

// MarginOptions tune a margin sweep.
type MarginOptions struct {
	MaxMargin float64 // largest margin of the sweep (m); 0: DefaultMaxMargin
	Step      float64 // spacing of the margins (m); 0: DefaultStep
	Target    float64 // detection rate to reach; 0: DefaultTarget
	Progress  func(items uint64)
}

// MarginResult is the outcome of a margin sweep.
type MarginResult struct {
	Cell  string `json:"cell"`
	Model string `json:"model"`
	// Horizon = StoppingTime + SystemLatency (seconds).
	Horizon       float64 `json:"horizon_s"`
	StoppingTime  float64 `json:"stopping_time_s"`
	SystemLatency float64 `json:"system_latency_s"`
	Target        float64 `json:"target_detection"`
	Release       float64 `json:"release_s"`
	Window        float64 `json:"false_alarm_window_s"`
	NearMiss      float64 `json:"near_miss_m"`
	// Approach: errors count for a zone when the true position at the
	// horizon is within this distance of its shape (policy.near_track).
	Approach   float64      `json:"approach_m"`
	Duration   float64      `json:"duration_s"`
	Samples    uint64       `json:"samples"`
	BadLines   uint64       `json:"bad_lines"`
	Recordings []string     `json:"recordings"`
	Errors     ErrQuantiles `json:"errors_all"`
	Zones      []MarginZone `json:"zones"`
	References References   `json:"references"`
	Notice     string       `json:"safety_notice"`
}

// ErrQuantiles summarise forecast errors at the horizon (metres).
type ErrQuantiles struct {
	Samples  uint64  `json:"samples"`
	P50      float64 `json:"p50_m"`
	P90      float64 `json:"p90_m"`
	P95      float64 `json:"p95_m"`
	P99      float64 `json:"p99_m"`
	AtTarget float64 `json:"at_target_m"` // the quantile at the target detection rate
	Max      float64 `json:"max_m"`
}

// MarginZone is the sweep of one zone.
type MarginZone struct {
	Name       string              `json:"name"`
	Configured float64             `json:"configured_margin_m"`
	Entries    int                 `json:"entries"`
	NearMisses int                 `json:"near_misses"`
	Errors     ErrQuantiles        `json:"errors"`
	Sweep      []safety.SweepPoint `json:"sweep"`
	// Recommended is the margin for the target detection rate; From says
	// how it was found: "sweep", "error quantile" (no entries: the error
	// quantile at the target rate, rounded up to the step), or it is nil
	// with From "target not reached" or "no data".
	Recommended *float64           `json:"recommended_margin_m,omitempty"`
	From        string             `json:"from"`
	AtRec       *safety.SweepPoint `json:"at_recommended,omitempty"`
	AtConf      *safety.SweepPoint `json:"at_configured,omitempty"`
}

// References are the standards' distances for the cell's stopping data.
type References struct {
	T float64 `json:"t_s"`
	// ISO 13855:2010 minimum distance S = K·T + C.
	MinDistance    *float64 `json:"iso13855_s_m,omitempty"`
	MinDistanceK   float64  `json:"iso13855_k_m_per_s,omitempty"`
	MinDistanceC   float64  `json:"iso13855_c_m,omitempty"`
	MinDistanceErr string   `json:"iso13855_note,omitempty"`
	// ISO/TS 15066 protective separation distance Sp with its terms.
	Separation    *safety.Separation      `json:"iso15066,omitempty"`
	SeparationIn  safety.SeparationInputs `json:"iso15066_inputs"`
	SeparationErr string                  `json:"iso15066_note,omitempty"`
}

// Margins sizes zone margins from recordings of a cell.
type Margins struct {
	cfg   *zones.Config
	model forecast.Model
	opt   MarginOptions

	names    []string
	horizon  float64
	hz       forecast.Horizon
	release  float64
	window   float64
	nearMiss float64
	approach float64
	stale    float64
	maxSpeed float64
	gapReset float64

	grids  [][]float64 // per zone, increasing margins
	zs     []*mzone
	all    errHist
	res    MarginResult
	cutoff float64
}

// mzone accumulates one zone over every recording.
type mzone struct {
	entries    int
	nearMisses int
	mstar      []float64 // per entry, +Inf when never warned in time
	warnings   []int     // per grid margin
	falses     []int
	errs       errHist
}

// NewMargins prepares a margin sweep of cell cfg forecasting with model.
func NewMargins(cfg *zones.Config, model forecast.Model, opt MarginOptions) (*Margins, error) {
	if cfg == nil || model == nil {
		return nil, errors.New("margins: configuration and forecast model are required")
	}
	if opt.MaxMargin == 0 {
		opt.MaxMargin = DefaultMaxMargin
	}
	if opt.Step == 0 {
		opt.Step = DefaultStep
	}
	if opt.Target == 0 {
		opt.Target = DefaultTarget
	}
	switch {
	case !(opt.MaxMargin > 0 && opt.MaxMargin <= 5):
		return nil, fmt.Errorf("margins: maximum margin %g m: must be in (0, 5] m", opt.MaxMargin)
	case !(opt.Step > 0 && opt.Step <= opt.MaxMargin):
		return nil, fmt.Errorf("margins: step %g m: must be > 0 and at most the maximum margin", opt.Step)
	case opt.MaxMargin/opt.Step > 10000:
		return nil, fmt.Errorf("margins: %g m in steps of %g m is more than 10000 margins", opt.MaxMargin, opt.Step)
	case !(opt.Target > 0 && opt.Target <= 1):
		return nil, fmt.Errorf("margins: target detection rate %g: must be in (0, 1]", opt.Target)
	}
	sd := StoppingData(&cfg.Robot)
	if !(sd.StoppingTime > 0) {
		return nil, errors.New("margins: robot.stopping_time is not set: the horizon the cell needs (stopping time + system latency) is unknown")
	}
	zs, err := cfg.BuildZones()
	if err != nil {
		return nil, fmt.Errorf("margins: %w", err)
	}
	m := &Margins{cfg: cfg, model: model, opt: opt, horizon: sd.Horizon()}
	pc := &cfg.Policy
	m.release = orDefault(pc.Release.Seconds(), policy.DefaultRelease)
	m.window = pc.FalseAlarmWindow.Seconds()
	if m.window == 0 {
		m.window = defaultFalseAlarmWindow
	}
	m.nearMiss = orDefault(float64(pc.NearMiss), policy.DefaultNearMiss)
	m.approach = orDefault(float64(pc.NearTrack), policy.DefaultNearTrack)
	m.stale = orDefault(pc.StaleAfter.Seconds(), policy.DefaultStaleAfter)
	m.maxSpeed = orDefault(float64(pc.MaxSpeed), policy.DefaultMaxSpeed)
	m.gapReset = orDefault(cfg.Forecast.GapReset.Seconds(), forecast.DefaultGapReset)
	step := orDefault(cfg.Forecast.Step.Seconds(), forecast.DefaultStep)
	lead := cfg.Forecast.Latency.Seconds()
	// The path must reach t + H: from its start at t + lead, a whole
	// number of steps covering H − lead (it is cut at t + H).
	span := math.Max(step, math.Ceil((m.horizon-lead)/step-1e-9)*step)
	m.hz = forecast.Horizon{Step: step, Span: span, Lead: lead}
	n := int(math.Round(opt.MaxMargin / opt.Step))
	m.cutoff = float64(n)*opt.Step + opt.Step
	for i := 0; i < zs.Len(); i++ {
		z := zs.Zone(i)
		m.names = append(m.names, z.Name)
		grid := make([]float64, 0, n+2)
		for k := 0; k <= n; k++ {
			grid = append(grid, float64(k)*opt.Step)
		}
		// The configured margin is a point of the sweep too.
		if c := z.Margin; c <= grid[n]+1e-12 {
			j := sort.SearchFloat64s(grid, c-1e-12)
			if j >= len(grid) || math.Abs(grid[j]-c) > 1e-12 {
				grid = append(grid, 0)
				copy(grid[j+1:], grid[j:])
				grid[j] = c
			}
		}
		m.grids = append(m.grids, grid)
		m.zs = append(m.zs, &mzone{warnings: make([]int, len(grid)), falses: make([]int, len(grid))})
	}
	m.res = MarginResult{Cell: cfg.Cell, Model: model.Name(), Horizon: m.horizon, StoppingTime: sd.StoppingTime,
		SystemLatency: sd.SystemLatency, Target: opt.Target, Release: m.release, Window: m.window,
		NearMiss: m.nearMiss, Approach: m.approach, Notice: safety.Notice}
	return m, nil
}

// mtrack is one track in the margin sweep.
type mtrack struct {
	id    string
	ft    *forecast.Track
	path  forecast.Path
	lastT float64
	lastP r3.Vec
	has   bool
	ring  ring // sample times and s per zone
	pend  []pendingErr
	s     []float64
	sep   []float64
	pairs []mpair
}

type pendingErr struct {
	t float64 // time the prediction is for (sample time + H)
	p r3.Vec
}

type mpair struct {
	inside   bool
	approach bool
	entered  bool
	eps      []episodes // per grid margin
}

// mrun is one recording of the sweep.
type mrun struct {
	m      *Margins
	zs     *zones.ZoneSet // margins 0
	nz     int
	out    []zones.SweepResult
	tracks map[string]*mtrack
	first  float64
	last   float64
	seen   bool
	judges [][]judge
	cands  []cand
}

type cand struct{ t, s float64 }

// Add reads one recording. Unreadable lines are counted and skipped; any
// other read error ends the recording and is returned.
func (m *Margins) Add(name string, src Source) error {
	base, err := m.cfg.BuildZones()
	if err != nil {
		return fmt.Errorf("margins: %w", err)
	}
	zl := make([]zones.Zone, base.Len())
	for i := range zl {
		zl[i] = *base.Zone(i)
		zl[i].Margin = 0
	}
	zs, err := zones.NewZoneSet(zl)
	if err != nil {
		return fmt.Errorf("margins: %w", err)
	}
	r := &mrun{m: m, zs: zs, nz: zs.Len(), tracks: map[string]*mtrack{}}
	r.judges = make([][]judge, r.nz)
	for z := range r.judges {
		r.judges[z] = make([]judge, len(m.grids[z]))
		for k := range r.judges[z] {
			mz := m.zs[z]
			r.judges[z][k] = func(_ episode, falseAlarm bool) {
				if falseAlarm {
					mz.falses[k]++
				}
			}
		}
	}
	m.res.Recordings = append(m.res.Recordings, name)
	defer stopSource(src)
	var items uint64
	var ferr error
	for {
		it, err := src.Next()
		if err != nil {
			if isEOF(err) {
				break
			}
			if _, ok := rowError(err); ok {
				m.res.BadLines++
				continue
			}
			ferr = fmt.Errorf("%s: %w", name, err)
			break
		}
		items++
		if m.opt.Progress != nil && items&0xffff == 0 {
			m.opt.Progress(items)
		}
		switch it.Kind {
		case ItemSample:
			r.sample(it.Sample)
		case ItemRobot:
			st := bus.PolicyRobot(it.Robot)
			for _, f := range st.Frames {
				zs.SetFramePose(f.Frame, f.Pose)
			}
		}
	}
	if m.opt.Progress != nil {
		m.opt.Progress(items)
	}
	for _, tr := range r.tracks {
		for z := range tr.pairs {
			for k := range tr.pairs[z].eps {
				tr.pairs[z].eps[k].finish(r.judges[z][k])
			}
			if p := &tr.pairs[z]; p.approach && !p.entered {
				m.zs[z].nearMisses++
			}
		}
	}
	if r.seen {
		m.res.Duration += r.last - r.first
	}
	return ferr
}

func (r *mrun) newTrack(id string) *mtrack {
	m := r.m
	tr := &mtrack{id: id, ft: forecast.NewTrack(m.model, m.gapReset), s: make([]float64, r.nz),
		sep: make([]float64, r.nz), pairs: make([]mpair, r.nz)}
	tr.ring.init(r.nz, m.horizon+m.release+0.1)
	for z := range tr.pairs {
		tr.pairs[z].eps = make([]episodes, len(m.grids[z]))
	}
	r.tracks[id] = tr
	return tr
}

// sample processes one sample: the checks the engine makes, the forecast
// error at the horizon, the path query with margin 0, entries, near
// misses and warning episodes.
func (r *mrun) sample(s forecast.Sample) {
	m := r.m
	m.res.Samples++
	if s.Track == "" || !finite(s.T) || !finite(s.P.X) || !finite(s.P.Y) || !finite(s.P.Z) {
		return
	}
	tr := r.tracks[s.Track]
	if tr == nil {
		tr = r.newTrack(s.Track)
	}
	lost := false
	if tr.has {
		dt := s.T - tr.lastT
		if dt <= 0 {
			return
		}
		lost = dt > m.stale
		if !lost && r3.Norm(r3.Sub(s.P, tr.lastP)) > m.maxSpeed*dt {
			return // the engine rejects it (implausible speed)
		}
	}
	if lost {
		// The engine declares the track lost and starts its forecast
		// afresh when it comes back.
		tr.ft.Reset()
		tr.pend = tr.pend[:0]
		for z := range tr.pairs {
			if p := &tr.pairs[z]; p.approach {
				if !p.entered {
					m.zs[z].nearMisses++
				}
				p.approach = false
			}
		}
	}
	switch tr.ft.Add(s.T, s.P) {
	case forecast.Accepted:
	case forecast.AfterGap:
		tr.pend = tr.pend[:0]
	default:
		return
	}
	if !r.seen {
		r.first, r.seen = s.T, true
	}
	r.last = math.Max(r.last, s.T)

	// Forecast errors whose time has come.
	k := 0
	for _, pe := range tr.pend {
		if pe.t > s.T {
			break
		}
		k++
		if !tr.has || pe.t < tr.lastT {
			continue
		}
		w := 0.0
		if s.T > tr.lastT {
			w = (pe.t - tr.lastT) / (s.T - tr.lastT)
		}
		truth := r3.Add(tr.lastP, r3.Scale(w, r3.Sub(s.P, tr.lastP)))
		e := r3.Norm(r3.Sub(pe.p, truth))
		m.all.add(e)
		for z := 0; z < r.nz; z++ {
			if r.zs.Zone(z).SignedDistance(truth) <= m.approach {
				m.zs[z].errs.add(e)
			}
		}
	}
	tr.pend = append(tr.pend[:0], tr.pend[k:]...)
	tr.lastT, tr.lastP, tr.has = s.T, s.P, true

	// The path over [t, t + H] (the measured point while the forecaster
	// warms up, as the engine does).
	end := s.T + m.horizon
	if tr.ft.F.Predict(&tr.path, m.hz) {
		cutPath(&tr.path, end)
		n := tr.path.Len()
		if n > 0 && math.Abs(tr.path.T[n-1]-end) < 1e-9 {
			tr.pend = append(tr.pend, pendingErr{t: end, p: tr.path.P[n-1]})
		}
	} else {
		tr.path.Resize(1)
		tr.path.T[0], tr.path.P[0], tr.path.R[0] = s.T+m.hz.Lead, s.P, 0
	}
	r.out = r.zs.Sweep(zones.PathView{T: tr.path.T, P: tr.path.P, R: tr.path.R}, m.cutoff, r.out)
	for z := range r.out {
		tr.s[z] = r.out[z].MinSep
		if r.out[z].Far {
			tr.s[z] = inf
		}
	}
	tr.sep = r.zs.SignedDistances(s.P, tr.sep)
	tr.ring.push(s.T, s.P, tr.s)

	for z := range tr.pairs {
		p := &tr.pairs[z]
		mz := m.zs[z]
		sep := tr.sep[z]
		grid := m.grids[z]
		js := r.judges[z]
		// Closes first (the review books them before the engine's
		// requests of the same sample).
		if sep < m.nearMiss || sep <= 0 {
			for k := range p.eps {
				p.eps[k].close(s.T, m.release, m.window, js[k])
			}
		}
		// Entries and near misses, as the engine counts them.
		switch {
		case !p.inside && sep <= 0:
			p.inside = true
			mz.entries++
			mz.mstar = append(mz.mstar, r.mstar(tr, z, s.T))
		case p.inside && sep > exitBand:
			p.inside = false
		}
		if p.inside {
			p.approach, p.entered = true, true
		} else if sep < m.nearMiss {
			if !p.approach {
				p.approach, p.entered = true, false
			}
		} else if p.approach && sep >= m.nearMiss*rearm {
			if !p.entered {
				mz.nearMisses++
			}
			p.approach = false
		}
		// Warnings at every margin >= s.
		sz := tr.s[z]
		if math.IsInf(sz, 1) {
			continue
		}
		k0 := sort.SearchFloat64s(grid, sz-1e-12)
		for k := k0; k < len(grid); k++ {
			if p.eps[k].request(s.T, m.release, m.window, js[k]) {
				mz.warnings[k]++
			}
		}
	}
}

// cutPath ends the path at time end, interpolating the last point (and
// radius) when end falls between two points.
func cutPath(p *forecast.Path, end float64) {
	n := p.Len()
	for i := 1; i < n; i++ {
		if p.T[i] < end-1e-9 {
			continue
		}
		if p.T[i] > end+1e-9 {
			w := (end - p.T[i-1]) / (p.T[i] - p.T[i-1])
			p.P[i] = r3.Add(p.P[i-1], r3.Scale(w, r3.Sub(p.P[i], p.P[i-1])))
			p.R[i] = p.R[i-1] + w*(p.R[i]-p.R[i-1])
			p.T[i] = end
		}
		p.Resize(i + 1)
		return
	}
}

// mstar is the smallest margin at which the samples of the last H +
// release seconds keep a warning going over [te − H, te] (+Inf when no
// margin does).
func (r *mrun) mstar(tr *mtrack, z int, te float64) float64 {
	m := r.m
	from := te - m.horizon - m.release
	r.cands = r.cands[:0]
	for i := 0; i < tr.ring.len(); i++ {
		t, s := tr.ring.get(i)
		if t > from && t <= te && !math.IsInf(s[z], 1) {
			r.cands = append(r.cands, cand{t, s[z]})
		}
	}
	vals := make([]float64, len(r.cands))
	for i, c := range r.cands {
		vals[i] = c.s
	}
	sort.Float64s(vals)
	covers := func(lim float64) bool {
		started, end := false, math.Inf(-1)
		for _, c := range r.cands {
			if c.s > lim {
				continue
			}
			if !started || c.t > end {
				if c.t > te-m.horizon {
					return false
				}
				started = true
			}
			end = c.t + m.release
		}
		return started && end >= te
	}
	i := sort.Search(len(vals), func(i int) bool { return covers(vals[i]) })
	if i == len(vals) {
		return inf
	}
	return vals[i]
}

// Result returns the sweep of every zone over the recordings added.
func (m *Margins) Result() *MarginResult {
	res := m.res
	res.Recordings = append([]string(nil), m.res.Recordings...)
	res.Errors = m.all.quantiles(m.opt.Target)
	hours := res.Duration / 3600
	res.Zones = make([]MarginZone, len(m.names))
	for z, name := range m.names {
		mz := m.zs[z]
		grid := m.grids[z]
		zr := MarginZone{Name: name, Configured: float64(m.cfg.Zones[z].Margin), Entries: mz.entries,
			NearMisses: mz.nearMisses, Errors: mz.errs.quantiles(m.opt.Target)}
		ms := append([]float64(nil), mz.mstar...)
		sort.Float64s(ms)
		for k, g := range grid {
			det := sort.Search(len(ms), func(i int) bool { return ms[i] > g+1e-12 })
			zr.Sweep = append(zr.Sweep, safety.SweepPoint{Margin: g, Detected: det, Entries: mz.entries,
				FalseAlarms: mz.falses[k], Warnings: mz.warnings[k], Hours: hours})
		}
		for k := range zr.Sweep {
			if math.Abs(zr.Sweep[k].Margin-zr.Configured) < 1e-12 {
				p := zr.Sweep[k]
				zr.AtConf = &p
			}
		}
		rec, ok, err := safety.RecommendMargin(zr.Sweep, m.opt.Target)
		switch {
		case err == nil && ok:
			v := rec.Margin
			zr.Recommended, zr.From, zr.AtRec = &v, "sweep", &rec
		case err == nil:
			zr.From = "target not reached"
		case errors.Is(err, safety.ErrNoEntries) && zr.Errors.Samples > 0:
			v := math.Ceil(zr.Errors.AtTarget/m.opt.Step-1e-9) * m.opt.Step
			zr.Recommended, zr.From = &v, "error quantile"
			if k := sort.SearchFloat64s(grid, v-1e-12); k < len(zr.Sweep) {
				p := zr.Sweep[k]
				zr.AtRec = &p
			}
		default:
			zr.From = "no data"
		}
		res.Zones[z] = zr
	}
	res.References = referencesOf(safety.ReferenceDistances(StoppingData(&m.cfg.Robot)))
	return &res
}

func referencesOf(r safety.References) References {
	out := References{T: r.T, MinDistanceErr: r.MinDistanceErr, Separation: r.Separation,
		SeparationIn: r.SeparationIn, SeparationErr: r.SeparationErr}
	if r.MinDistance != nil {
		v := r.MinDistance.S
		out.MinDistance, out.MinDistanceK, out.MinDistanceC = &v, r.MinDistance.K, r.MinDistance.C
	}
	return out
}

// errHist is a histogram of errors with errBin bins up to errMax.
type errHist struct {
	bins []uint64
	n    uint64
	over uint64
	max  float64
}

func (h *errHist) add(e float64) {
	if h.bins == nil {
		h.bins = make([]uint64, int(errMax/errBin))
	}
	h.n++
	h.max = math.Max(h.max, e)
	i := int(e / errBin)
	if i >= len(h.bins) {
		h.over++
		return
	}
	h.bins[i]++
}

// quantile returns the q-quantile, interpolated within its bin (exact to
// errBin/2 against the empirical quantile); errors beyond errMax are
// reported as the largest error.
func (h *errHist) quantile(q float64) float64 {
	if h.n == 0 {
		return math.NaN()
	}
	rank := q * float64(h.n)
	c := 0.0
	for i, b := range h.bins {
		if b == 0 {
			continue
		}
		if c+float64(b) >= rank {
			f := (rank - c) / float64(b)
			return math.Min(h.max, (float64(i)+f)*errBin)
		}
		c += float64(b)
	}
	return h.max
}

func (h *errHist) quantiles(target float64) ErrQuantiles {
	if h.n == 0 {
		return ErrQuantiles{}
	}
	return ErrQuantiles{Samples: h.n, P50: h.quantile(0.5), P90: h.quantile(0.9), P95: h.quantile(0.95),
		P99: h.quantile(0.99), AtTarget: h.quantile(target), Max: h.max}
}
