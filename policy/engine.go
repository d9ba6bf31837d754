package policy

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"forereach/forecast"
	"forereach/safety"
	"forereach/zones"

	"gonum.org/v1/gonum/spatial/r3"
)

// Defaults of the policy section, used for zero fields (see
// zones.PolicyConfig). They are our choices for a first commissioning, not
// values from a standard, except where stated.
const (
	DefaultRelease    = 1.0  // s, requests must stay lower this long before the advisory drops
	DefaultStaleAfter = 0.3  // s, silence after which a track counts as lost
	DefaultNearTrack  = 0.5  // m, "near a zone" for the tracking-loss rule
	DefaultNearMiss   = 0.10 // m
	// DefaultMaxSpeed (m/s) rejects samples implying a faster hand. The
	// value is common practice, no source; for scale, it is five times the
	// hand approach speed K = 2000 mm/s of ISO 13855:2010. It admits fast
	// hand movements and rejects tracking swaps and glitches.
	DefaultMaxSpeed = 10.0
	// DefaultMaxTracks bounds the number of tracks one engine keeps.
	DefaultMaxTracks = 64
	// ForecastWarmUp (s) is how much history a track needs before its
	// forecast is used: until then, and again after the forecaster was
	// reset (a gap longer than forecast.gap_reset, or a tracking loss),
	// the forecast is the measured position alone, with no uncertainty
	// radius. The position rules (inside, sep_below, the protective
	// separation distance) apply from the first sample; an entry_within
	// rule then fires only when the hand is already within the zone's
	// margin. A forecaster's first predictions are not usable: a Kalman
	// filter starts from a prior of hand speeds (its first radius at the
	// end of a 500 ms horizon is about 12 m, and it settles within a few
	// samples, well within 100 ms at 100–240 Hz), and the fitted model
	// itself waits for 100 ms of history. Our choice; a test checks the
	// Kalman filters' radii against it.
	ForecastWarmUp = 0.1
)

// Built-in default rules, used when the policy section names none:
// "approach" requests reduce with speed scale 0.5 when entry is forecast
// within 400 ms; "imminent" requests hold when entry is forecast within
// 150 ms or the hand is inside the zone.
var defaultRules = []zones.RuleConfig{
	{Name: "approach", Level: "reduce", Scale: 0.5, EntryWithin: zones.Duration(400e6)},
	{Name: "imminent", Level: "hold", EntryWithin: zones.Duration(150e6), Inside: true},
}

// DefaultRules returns a copy of the rules used when the policy section
// names none.
func DefaultRules() []zones.RuleConfig { return append([]zones.RuleConfig(nil), defaultRules...) }

// exitBand is how far (m) outside a zone's shape a hand must be after an
// entry before an exit is recorded, so that tracking noise at the surface
// does not produce a train of entries and exits (our choice, no source).
const exitBand = 0.005

// rearmFactor: a near-miss approach ends when the separation grows past
// near_miss·rearmFactor, so that noise around the threshold reports one
// near miss, not many (our choice, no source).
const rearmFactor = 1.25

// maxSep bounds the separations reported in reasons (metres), so that no
// reason carries an infinity.
const maxSep = 1e6

// Options tune an Engine beyond the cell configuration.
type Options struct {
	// MaxTracks bounds the number of tracks (default DefaultMaxTracks);
	// samples of further tracks are rejected (RejectTooManyTracks).
	MaxTracks int
}

// rule is a compiled RuleConfig.
type rule struct {
	name        string
	level       Level
	scale       float64
	step        int
	entryWithin float64
	hasEntry    bool
	sepBelow    float64
	hasSep      bool
	inside      bool
}

// step is one rung of the severity ladder: clear, reduce at each configured
// scale (largest first), hold.
type step struct {
	level Level
	scale float64
}

type zoneMeta struct {
	name  string
	frame string // robot frame the zone is attached to, "" when fixed
	robot bool   // attached to a robot frame
	rules []int  // indices into Engine.rules
}

// pair is the state of one track against one zone.
type pair struct {
	step   int // requested step (0: clear)
	reason Reason
	inside bool // measured position inside the shape (with exit band)

	// warning episode: the pair has requested reduce or hold since
	// warnStart; it lapses when no request was made for the release time.
	// A tracking loss ends it; the fail-safe hold then starts a new one for
	// the zones the track was near (see staleCheck).
	warning   bool
	warnStart float64
	lastWarn  float64

	// near-miss approach
	approach bool
	entered  bool
	minSep   float64
	minT     float64
}

type track struct {
	id      string
	ft      *forecast.Track
	path    forecast.Path
	lastT   float64
	lastP   r3.Vec
	has     bool
	since   float64 // first sample since the forecaster was (re)started
	lead    float64
	ownLead bool // lead set by SetLatency for this track
	lost    bool
	near    bool
	nearest int
	sep     []float64
	sweep   []zones.SweepResult
	pairs   []pair

	// Temporal coherence of the sweeps (see assess): the path last swept
	// (positions and radii), and per zone a lower bound of the minimum
	// separation along it.
	prevP []r3.Vec
	prevR []float64
	lb    []float64
	skip  []bool
}

// Engine is the advisory engine of one cell. It is not safe for concurrent
// use: one goroutine feeds it (the live service serialises samples, robot
// states and ticks).
type Engine struct {
	zs    zoneSource
	model forecast.Model
	zones []zoneMeta
	rules []rule
	steps []step
	hold  int // index of the hold step

	release, staleAfter, nearTrack, maxSpeed, nearMiss float64
	useHandSpeed                                       bool
	step, span, lead, gapReset, cutoff                 float64
	maxTracks                                          int

	// robot
	psd        safety.SeparationInputs // configured C, Zd, Zr, Tr
	cfgSpeed   float64
	cfgHasSpd  bool
	cfgTs      float64
	cfgSs      float64
	liveSpeed  float64
	liveHasSpd bool
	liveTs     float64
	liveSs     float64
	liveHasStp bool
	robotT     float64
	hasRobotT  bool

	frames map[string]bool // known robot frames

	tracks []*track
	byID   map[string]*track

	now     float64
	started bool

	// hysteresis
	lastReq     []float64
	hasReq      []bool
	stepReasons [][]Reason
	reasons     []Reason
	cur         int
	adv         Advisory

	events   []Event
	arena    [2][]Reason
	arenaIdx int
	stats    Stats

	// fullSweep turns the temporal coherence of the sweeps off (tests
	// compare the two); skipped counts the zone sweeps it saved.
	fullSweep bool
	skipped   uint64

	// last protective separation distance computed (inputs and result)
	psdIn  safety.SeparationInputs
	psdSp  float64
	psdOK  bool
	psdHas bool
}

func newEngine(cfg *zones.Config, zs zoneSource, model forecast.Model, opts Options) (*Engine, error) {
	if cfg == nil {
		return nil, errors.New("policy: no configuration")
	}
	if model == nil {
		return nil, errors.New("policy: no forecast model")
	}
	pc := &cfg.Policy
	e := &Engine{
		zs:           zs,
		model:        model,
		release:      orDefault(pc.Release.Seconds(), DefaultRelease),
		staleAfter:   orDefault(pc.StaleAfter.Seconds(), DefaultStaleAfter),
		nearTrack:    orDefault(float64(pc.NearTrack), DefaultNearTrack),
		maxSpeed:     orDefault(float64(pc.MaxSpeed), DefaultMaxSpeed),
		nearMiss:     orDefault(float64(pc.NearMiss), DefaultNearMiss),
		useHandSpeed: pc.UseHandSpeed,
		step:         orDefault(cfg.Forecast.Step.Seconds(), forecast.DefaultStep),
		span:         orDefault(cfg.Forecast.Horizon.Seconds(), forecast.DefaultHorizon),
		lead:         cfg.Forecast.Latency.Seconds(),
		gapReset:     orDefault(cfg.Forecast.GapReset.Seconds(), forecast.DefaultGapReset),
		maxTracks:    opts.MaxTracks,
		byID:         map[string]*track{},
		frames:       map[string]bool{},
	}
	for _, f := range cfg.Robot.Frames {
		e.frames[f.Name] = true
	}
	if e.maxTracks <= 0 {
		e.maxTracks = DefaultMaxTracks
	}
	for _, v := range []struct {
		name string
		v    float64
	}{
		{"policy.release", e.release}, {"policy.stale_after", e.staleAfter},
		{"policy.near_track", e.nearTrack}, {"policy.max_speed", e.maxSpeed},
		{"policy.near_miss", e.nearMiss}, {"forecast.step", e.step},
		{"forecast.horizon", e.span}, {"forecast.latency", e.lead},
		{"forecast.gap_reset", e.gapReset},
	} {
		if math.IsNaN(v.v) || math.IsInf(v.v, 0) || v.v < 0 {
			return nil, fmt.Errorf("policy: %s = %v: must be finite and >= 0", v.name, v.v)
		}
	}

	// Rules and the severity ladder.
	rcs := pc.Rules
	if len(rcs) == 0 {
		rcs = defaultRules
	}
	byName := map[string]int{}
	var scales []float64
	for i, rc := range rcs {
		r, err := compileRule(rc)
		if err != nil {
			return nil, fmt.Errorf("policy: rules[%d] %q: %w", i, rc.Name, err)
		}
		if _, dup := byName[r.name]; dup {
			return nil, fmt.Errorf("policy: rules[%d]: name %q used twice", i, r.name)
		}
		byName[r.name] = i
		e.rules = append(e.rules, r)
		if r.level == LevelReduce {
			scales = append(scales, r.scale)
		}
	}
	sort.Sort(sort.Reverse(sort.Float64Slice(scales)))
	e.steps = append(e.steps, step{LevelClear, 1})
	for i, s := range scales {
		if i == 0 || s != scales[i-1] {
			e.steps = append(e.steps, step{LevelReduce, s})
		}
	}
	e.steps = append(e.steps, step{LevelHold, 0})
	e.hold = len(e.steps) - 1
	for i := range e.rules {
		e.rules[i].step = e.stepOf(e.rules[i].level, e.rules[i].scale)
	}
	e.lastReq = make([]float64, len(e.steps))
	e.hasReq = make([]bool, len(e.steps))
	e.stepReasons = make([][]Reason, len(e.steps))

	// Zones.
	n := zs.count()
	e.zones = make([]zoneMeta, n)
	for i := 0; i < n; i++ {
		name, frame, names := zs.info(i)
		zm := zoneMeta{name: name, frame: frame, robot: frame != ""}
		if frame != "" {
			e.frames[frame] = true
		}
		if len(names) == 0 {
			for j := range e.rules {
				zm.rules = append(zm.rules, j)
			}
		}
		for _, rn := range names {
			j, ok := byName[rn]
			if !ok {
				return nil, fmt.Errorf("policy: zone %q: rule %q is not defined in policy.rules", name, rn)
			}
			zm.rules = append(zm.rules, j)
		}
		e.zones[i] = zm
	}

	// Sweep cutoff: separations within the largest threshold are exact.
	e.cutoff = math.Max(e.nearTrack, e.nearMiss*rearmFactor)
	for _, r := range e.rules {
		if r.hasSep {
			e.cutoff = math.Max(e.cutoff, r.sepBelow)
		}
	}

	// Robot stopping data.
	rc := &cfg.Robot
	e.psd = safety.SeparationInputs{
		ReactionTime:     rc.ReactionTime.Seconds(),
		Intrusion:        float64(rc.Intrusion),
		HumanUncertainty: float64(rc.PositionUncertaintyHuman),
		RobotUncertainty: float64(rc.PositionUncertaintyRobot),
	}
	e.cfgSpeed = float64(rc.Speed)
	e.cfgHasSpd = rc.Speed > 0
	e.cfgTs = rc.StoppingTime.Seconds()
	e.cfgSs = float64(rc.StoppingDistance)
	chk := e.psd
	chk.HumanSpeed, chk.RobotSpeed, chk.StoppingTime, chk.StoppingDistance = safety.WalkingSpeed, e.cfgSpeed, e.cfgTs, e.cfgSs
	if _, err := safety.ProtectiveSeparation(chk); err != nil {
		return nil, fmt.Errorf("robot: %w", err)
	}

	e.adv = Advisory{Level: LevelClear, Scale: 1, Horizon: e.span}
	return e, nil
}

func orDefault(v, def float64) float64 {
	if v == 0 {
		return def
	}
	return v
}

func compileRule(rc zones.RuleConfig) (rule, error) {
	r := rule{name: rc.Name, inside: rc.Inside}
	if r.name == "" {
		return r, errors.New("name: missing")
	}
	if r.name == RuleTrackingLost || r.name == RuleSeparation {
		return r, fmt.Errorf("name: %q is a built-in rule", r.name)
	}
	lv, ok := ParseLevel(rc.Level)
	if !ok || lv == LevelClear {
		return r, fmt.Errorf("level: %q: want reduce or hold", rc.Level)
	}
	r.level = lv
	switch lv {
	case LevelReduce:
		if !(rc.Scale >= 0 && rc.Scale <= 1) {
			return r, fmt.Errorf("scale: %v: must be in [0,1]", rc.Scale)
		}
		r.scale = rc.Scale
	case LevelHold:
		r.scale = 0
	}
	if rc.EntryWithin > 0 {
		r.hasEntry, r.entryWithin = true, rc.EntryWithin.Seconds()
	} else if rc.EntryWithin < 0 {
		return r, fmt.Errorf("entry_within: %v: must be >= 0", rc.EntryWithin.Seconds())
	}
	if rc.SepBelow != nil {
		v := float64(*rc.SepBelow)
		if math.IsNaN(v) || math.IsInf(v, 0) || v <= 0 {
			return r, fmt.Errorf("sep_below: %v: must be finite and > 0", v)
		}
		r.hasSep, r.sepBelow = true, v
	}
	if !r.hasEntry && !r.hasSep && !r.inside {
		return r, errors.New("no condition: set entry_within, sep_below or inside")
	}
	return r, nil
}

// stepOf returns the ladder index of a level and scale.
func (e *Engine) stepOf(l Level, scale float64) int {
	switch l {
	case LevelClear:
		return 0
	case LevelHold:
		return e.hold
	}
	for i := 1; i < e.hold; i++ {
		if e.steps[i].scale == scale {
			return i
		}
	}
	return e.hold
}

// Horizon returns the forecast horizon the engine uses for a track's
// forecast (Lead is the track's latency lead).
func (e *Engine) horizon(tr *track) forecast.Horizon {
	lead := e.lead
	if tr.ownLead {
		lead = tr.lead
	}
	return forecast.Horizon{Step: e.step, Span: e.span, Lead: lead}
}

// SetLatency sets the measured input latency (seconds, >= 0, at most 1 s)
// of a track; its forecasts then start that much after the sample (the lead)
// so that they refer to the present, and the protective separation distance
// adds it to the reaction time. track "" sets the default of every track
// without its own value. The live service calls it when forecast.latency_auto
// is set; otherwise forecast.latency is used.
func (e *Engine) SetLatency(track string, seconds float64) error {
	if math.IsNaN(seconds) || seconds < 0 || seconds > 1 {
		return fmt.Errorf("policy: latency %v s for track %q: must be in [0, 1] s", seconds, track)
	}
	if track == "" {
		e.lead = seconds
		return nil
	}
	tr := e.byID[track]
	if tr == nil {
		var ok bool
		if tr, ok = e.newTrack(track); !ok {
			return fmt.Errorf("policy: latency for track %q: too many tracks", track)
		}
	}
	tr.lead, tr.ownLead = seconds, true
	return nil
}

// track returns the track with the given id, or nil. A few tracks are
// looked up by comparing ids, cheaper than hashing.
func (e *Engine) track(id string) *track {
	if len(e.tracks) <= 8 {
		for _, tr := range e.tracks {
			if tr.id == id {
				return tr
			}
		}
		return nil
	}
	return e.byID[id]
}

func (e *Engine) newTrack(id string) (*track, bool) {
	if len(e.tracks) >= e.maxTracks {
		return nil, false
	}
	n := len(e.zones)
	np := forecast.Horizon{Step: e.step, Span: e.span}.Points()
	tr := &track{
		id:    id,
		ft:    forecast.NewTrack(e.model, e.gapReset),
		sep:   make([]float64, n),
		sweep: make([]zones.SweepResult, n),
		pairs: make([]pair, n),
		prevP: make([]r3.Vec, 0, np),
		prevR: make([]float64, 0, np),
		lb:    make([]float64, n),
		skip:  make([]bool, n),
	}
	for i := range tr.lb {
		tr.lb[i] = math.Inf(-1)
	}
	tr.path.Resize(np)
	tr.path.Resize(0)
	for i := range tr.pairs {
		tr.pairs[i].reason = Reason{Track: id, Zone: e.zones[i].name, TimeToEntry: -1}
	}
	e.tracks = append(e.tracks, tr)
	e.byID[id] = tr
	return tr, true
}

// Sample feeds one hand sample: it is checked (non-finite values, time not
// after the track's previous sample, an implied speed above max_speed: such
// samples are rejected, counted and reported as EventRejected), then the
// track's path is forecast and swept through the zones, the rules are
// applied and the cell advisory is updated. For the first ForecastWarmUp
// seconds of a track, and again after its forecaster was reset, the
// forecast is the measured position alone (see ForecastWarmUp).
//
// The speed check compares with the track's previous accepted sample; it is
// skipped for the first sample of a track and for the first sample after the
// track was lost, so that a track that really moved while unseen is not
// rejected forever.
func (e *Engine) Sample(s forecast.Sample) {
	e.stats.Samples++
	if s.Track == "" {
		e.reject(s.T, "", RejectNoTrack, 0)
		return
	}
	if !finite(s.T) || !finite(s.P.X) || !finite(s.P.Y) || !finite(s.P.Z) {
		t := s.T
		if !finite(t) {
			t = e.now
		}
		e.reject(t, s.Track, RejectNonFinite, 0)
		return
	}
	tr := e.track(s.Track)
	if tr == nil {
		var ok bool
		if tr, ok = e.newTrack(s.Track); !ok {
			e.reject(s.T, s.Track, RejectTooManyTracks, float64(e.maxTracks))
			return
		}
	}
	if tr.has {
		dt := s.T - tr.lastT
		switch {
		case dt < 0:
			e.reject(s.T, tr.id, RejectBackwards, tr.lastT)
			return
		case dt == 0:
			e.reject(s.T, tr.id, RejectDuplicate, tr.lastT)
			return
		}
		if !tr.lost {
			v := r3.Sub(s.P, tr.lastP)
			d2, lim := v.X*v.X+v.Y*v.Y+v.Z*v.Z, e.maxSpeed*dt
			if d2 > lim*lim {
				e.reject(s.T, tr.id, RejectSpeed, math.Sqrt(d2)/dt)
				return
			}
		}
	}
	e.stats.Accepted++
	e.advanceTo(s.T)
	restart := !tr.has
	if tr.lost {
		tr.lost = false
		tr.ft.Reset()
		restart = true
		// The fail-safe hold lasted until now: its warnings are current.
		for z := range tr.pairs {
			if p := &tr.pairs[z]; p.warning {
				p.lastWarn = s.T
			}
		}
		e.emit(Event{Kind: EventTrackingRegained, T: s.T, Track: tr.id})
	}
	if tr.ft.Add(s.T, s.P) == forecast.AfterGap || restart {
		tr.since = s.T
	}
	tr.lastT, tr.lastP, tr.has = s.T, s.P, true
	h := e.horizon(tr)
	ok := tr.ft.F.Predict(&tr.path, h) && tr.path.Len() > 0
	if ok && s.T-tr.since < ForecastWarmUp && pathFinite(&tr.path) {
		// Warming up (see ForecastWarmUp). A forecast holding a NaN or
		// an infinite position or time is a broken forecaster, not an
		// uncertain one: it goes on to the sweep, which never reads it
		// as clear.
		ok = false
	}
	if !ok {
		// Too little history: the path is the measured point itself, at
		// the present (sample time plus lead), with no uncertainty radius.
		tr.path.Resize(1)
		tr.path.T[0] = s.T + h.Lead
		tr.path.P[0] = s.P
		tr.path.R[0] = 0
	}
	e.assess(tr, s.T)
	e.staleCheck()
	e.evaluate()
}

// Advance tells the engine that time t has been reached without new
// samples (the live service calls it periodically): tracks silent for
// longer than stale_after are declared lost (fail-safe hold when they were
// near a zone), and the advisory is re-evaluated, which releases it when the
// release time has passed. Times earlier than the engine's time are ignored.
//
// A loss ends the track's warning episodes, which give entries their lead
// times: the fail-safe hold starts new ones, from the loss, for the zones
// the track was near (requesting, closer than near_track, or the nearest,
// which the hold names), so that an entry after the loss counts its lead
// from the hold; for other zones the lead counts from the first warning
// after the track was regained.
func (e *Engine) Advance(t float64) {
	if !finite(t) || (e.started && t < e.now) {
		return
	}
	e.advanceTo(t)
	e.staleCheck()
	e.evaluate()
}

// Robot applies a robot state: frame poses move the zones attached to
// them, and speed and stopping data feed the protective separation rule.
// Every live track is then assessed again against the moved zones. A bad
// state is rejected as a whole (RejectRobotState, counted and reported) and
// the error says why.
func (e *Engine) Robot(st RobotState) error {
	if err := e.checkRobot(st); err != nil {
		e.reject(e.now, "", RejectRobotState, 0)
		return err
	}
	for _, f := range st.Frames {
		if err := e.zs.setFrame(f.Frame, f.Pose); err != nil {
			// checkRobot validated the frames: this is not expected.
			e.reject(e.now, "", RejectRobotState, 0)
			return fmt.Errorf("policy: robot state at %v s: %w", st.T, err)
		}
		// The zones of the frame moved: what was known of them is void.
		for z := range e.zones {
			if e.zones[z].frame == f.Frame {
				for _, tr := range e.tracks {
					tr.lb[z] = math.Inf(-1)
				}
			}
		}
	}
	e.stats.RobotStates++
	e.robotT, e.hasRobotT = st.T, true
	if st.HasSpeed {
		e.liveSpeed, e.liveHasSpd = math.Max(0, st.Speed), true
	}
	if st.HasStopping {
		e.liveTs, e.liveSs, e.liveHasStp = st.StoppingTime, st.StoppingDistance, true
	}
	e.advanceTo(st.T)
	e.staleCheck()
	for _, tr := range e.tracks {
		if tr.has && !tr.lost {
			e.assess(tr, e.now)
		}
	}
	e.evaluate()
	return nil
}

func (e *Engine) checkRobot(st RobotState) error {
	if !finite(st.T) {
		return fmt.Errorf("policy: robot state: time %v is not finite", st.T)
	}
	if e.hasRobotT && st.T < e.robotT {
		return fmt.Errorf("policy: robot state at %v s: earlier than the previous one (%v s)", st.T, e.robotT)
	}
	if st.HasSpeed && !finite(st.Speed) {
		return fmt.Errorf("policy: robot state at %v s: speed %v is not finite", st.T, st.Speed)
	}
	if st.HasStopping && (!finite(st.StoppingTime) || st.StoppingTime < 0 || !finite(st.StoppingDistance) || st.StoppingDistance < 0) {
		return fmt.Errorf("policy: robot state at %v s: stopping time %v s / distance %v m: must be finite and >= 0", st.T, st.StoppingTime, st.StoppingDistance)
	}
	for _, f := range st.Frames {
		p, q := f.Pose.Pos, f.Pose.Rot
		if !finite(p.X) || !finite(p.Y) || !finite(p.Z) || !finite(q.Real) || !finite(q.Imag) || !finite(q.Jmag) || !finite(q.Kmag) {
			return fmt.Errorf("policy: robot state at %v s: frame %q: pose is not finite", st.T, f.Frame)
		}
		if !e.frames[f.Frame] {
			return fmt.Errorf("policy: robot state at %v s: frame %q: not a frame of robot.frames nor of a zone", st.T, f.Frame)
		}
	}
	return nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// pathFinite reports whether every time and position of p is finite (the
// radii are not looked at).
func pathFinite(p *forecast.Path) bool {
	for k := range p.T {
		if !finite(p.T[k]) || !finite(p.P[k].X) || !finite(p.P[k].Y) || !finite(p.P[k].Z) {
			return false
		}
	}
	return true
}

// advanceTo moves the engine's time forward to t (never back).
func (e *Engine) advanceTo(t float64) {
	if !e.started || t > e.now {
		e.now = t
		e.started = true
	}
}

func (e *Engine) reject(t float64, trackID string, why RejectReason, v float64) {
	e.stats.Rejected[why]++
	e.emit(Event{Kind: EventRejected, T: t, Track: trackID, Reject: why, Value: v})
}

func (e *Engine) emit(ev Event) { e.events = append(e.events, ev) }

// separationData returns the protective separation distance inputs for a
// track when the robot's speed and stopping data are known.
func (e *Engine) separationData(tr *track) (safety.SeparationInputs, bool) {
	in := e.psd
	switch {
	case e.liveHasSpd:
		in.RobotSpeed = e.liveSpeed
	case e.cfgHasSpd:
		in.RobotSpeed = e.cfgSpeed
	default:
		return in, false
	}
	switch {
	case e.liveHasStp && e.liveTs > 0:
		in.StoppingTime, in.StoppingDistance = e.liveTs, e.liveSs
	case e.cfgTs > 0:
		in.StoppingTime, in.StoppingDistance = e.cfgTs, e.cfgSs
	default:
		return in, false
	}
	in.ReactionTime += e.horizon(tr).Lead
	in.HumanSpeed = safety.WalkingSpeed
	if e.useHandSpeed {
		if v, ok := pathSpeed(&tr.path); ok {
			in.HumanSpeed = v
		}
	}
	return in, true
}

// protectiveSeparation returns the protective separation distance Sp for
// a track, when the robot's data are known. The last inputs and result are
// kept: the inputs rarely change from one sample to the next.
func (e *Engine) protectiveSeparation(tr *track) (float64, bool) {
	in, ok := e.separationData(tr)
	if !ok {
		return 0, false
	}
	if !e.psdHas || in != e.psdIn {
		s, err := safety.ProtectiveSeparation(in)
		e.psdIn, e.psdSp, e.psdOK, e.psdHas = in, s.Sp, err == nil, true
	}
	return e.psdSp, e.psdOK
}

// pathShift bounds how much closer to any point the swept sphere of path p
// can come than that of the previous path (positions prevP, radii prevR)
// at the same place on the path: max_k |P_k − prevP_k| + max_k (R_k −
// prevR_k, 0). +Inf when the paths differ in length or hold a non-finite
// value.
func pathShift(prevP []r3.Vec, prevR []float64, p *forecast.Path) float64 {
	n := len(prevP)
	if n == 0 || n != p.Len() || len(prevR) != n {
		return math.Inf(1)
	}
	ps, rs := p.P[:n], p.R[:n]
	var d2, dr, bad float64
	for k := range prevP {
		v := r3.Sub(ps[k], prevP[k])
		w := rs[k] - prevR[k]
		// v − v and w − w are 0 for finite values and NaN otherwise.
		bad += (v.X - v.X) + (v.Y - v.Y) + (v.Z - v.Z) + (w - w)
		if l := v.X*v.X + v.Y*v.Y + v.Z*v.Z; l > d2 {
			d2 = l
		}
		if w > dr {
			dr = w
		}
	}
	if bad != 0 {
		return math.Inf(1)
	}
	return math.Sqrt(d2) + dr
}

// pathSpeed is the speed of the forecast's first segment.
func pathSpeed(p *forecast.Path) (float64, bool) {
	if p.Len() < 2 {
		return 0, false
	}
	dt := p.T[1] - p.T[0]
	if !(dt > 0) {
		return 0, false
	}
	v := r3.Norm(r3.Sub(p.P[1], p.P[0])) / dt
	return v, finite(v)
}

// assess sweeps the track's current forecast through the zones and updates
// every pair of the track at time t: requests, entries and exits, warning
// episodes and near-miss approaches.
//
// Temporal coherence: the sweep of a zone is skipped when a lower bound of
// the separation shows it at least SweepTol beyond the cutoff. The bound
// is the previous path's minimum separation (from its sweep, a lower
// bound), less how much closer the new path can come: pairing the points
// of the two paths index by index (and the points between them by their
// place on the segment), each new point lies within |ΔP| of its old one and
// its radius is at most ΔR larger, so the separation, being 1-Lipschitz in
// the position, drops by at most max_k |ΔP_k| + max_k ΔR_k. A skipped zone
// reads as not touched with that bound as its minimum separation; the full
// sweep would give the same decisions and reasons: no touch (the separation
// stays above SweepTol), and a minimum separation of at least the cutoff,
// which the reasons report as the cutoff (see Reason.MinSeparation). A
// move of the robot frame of a zone voids its bound.
func (e *Engine) assess(tr *track, t float64) {
	view := zones.PathView{T: tr.path.T, P: tr.path.P, R: tr.path.R}
	shift := pathShift(tr.prevP, tr.prevR, &tr.path)
	for z := range tr.lb {
		tr.lb[z] -= shift
		tr.skip[z] = !e.fullSweep && tr.lb[z] >= e.cutoff+zones.SweepTol && tr.lb[z] > zones.SweepTol
		if tr.skip[z] {
			e.skipped++
		}
	}
	e.zs.sweep(view, e.cutoff, tr.sweep, tr.skip)
	for z := range tr.lb {
		if tr.skip[z] {
			tr.sweep[z] = zones.SweepResult{MinSep: tr.lb[z], Far: true}
		} else {
			tr.lb[z] = tr.sweep[z].MinSep
		}
	}
	tr.prevP = append(tr.prevP[:0], tr.path.P...)
	tr.prevR = append(tr.prevR[:0], tr.path.R...)
	e.zs.distances(tr.lastP, tr.sep)
	t0 := tr.path.T[0]

	sp, hasSp := e.protectiveSeparation(tr)

	tr.near = false
	tr.nearest = -1
	best := math.Inf(1)
	for z := range e.zones {
		zm := &e.zones[z]
		p := &tr.pairs[z]
		sr := &tr.sweep[z]
		sep := tr.sep[z]

		tte, hasEntry := -1.0, sr.Touch
		if hasEntry {
			tte = math.Max(0, sr.TouchT-t0)
		}
		st, ri := 0, -1
		for _, j := range zm.rules {
			r := &e.rules[j]
			if r.step <= st {
				continue
			}
			if (r.hasEntry && hasEntry && tte <= r.entryWithin) || (r.hasSep && sep < r.sepBelow) || (r.inside && sep <= 0) {
				st, ri = r.step, j
			}
		}
		// The minimum separation is reported up to the cutoff (see
		// Reason.MinSeparation). A forecast the sweep cannot judge
		// (non-finite) reads as touching with MinSep −Inf; reasons stay
		// finite.
		ms := sr.MinSep
		if ms > e.cutoff {
			ms = e.cutoff
		}
		if !(ms >= -maxSep) {
			ms = -maxSep
		}
		if !finite(tte) {
			tte = 0
		}
		// The pair's reason is updated in place (Track and Zone are set
		// when the track is made).
		rs := &p.reason
		rs.HasEntry, rs.TimeToEntry, rs.Separation, rs.MinSeparation, rs.Required = hasEntry, tte, sep, ms, 0
		rs.Rule, rs.Level, rs.Scale = "", LevelClear, 1
		if ri >= 0 {
			rs.Rule, rs.Level, rs.Scale = e.rules[ri].name, e.rules[ri].level, e.rules[ri].scale
		}
		if zm.robot && hasSp && sep < sp && st < e.hold {
			st = e.hold
			rs.Rule, rs.Level, rs.Scale = RuleSeparation, LevelHold, 0
		}
		if zm.robot && hasSp {
			rs.Required = sp
		}
		if st == 0 {
			rs.Level, rs.Scale = LevelClear, 1
		}
		p.step = st

		// Warning episode (for lead times).
		if st > 0 {
			if !p.warning {
				p.warning, p.warnStart = true, t
			}
			p.lastWarn = t
		} else if p.warning && t-p.lastWarn >= e.release {
			p.warning = false
		}

		// Entry and exit by measured position.
		switch {
		case !p.inside && sep <= 0:
			p.inside = true
			ev := Event{Kind: EventEntry, T: t, Track: tr.id, Zone: zm.name, Separation: sep, Missed: true}
			if p.warning {
				ev.Lead, ev.HasLead = t-p.warnStart, true
				ev.Missed = ev.Lead <= 0
			}
			e.stats.Entries++
			if ev.Missed {
				e.stats.Missed++
			}
			e.emit(ev)
		case p.inside && sep > exitBand:
			p.inside = false
			e.emit(Event{Kind: EventExit, T: t, Track: tr.id, Zone: zm.name, Separation: sep})
		}

		// Near-miss approach.
		if p.inside {
			// An entry is never a near miss, even when the hand was not
			// seen approaching (it reappeared inside after a tracking
			// loss): the approach it ends with counts as entered.
			if !p.approach {
				p.approach, p.minSep, p.minT = true, sep, t
			}
			p.entered = true
		} else if sep < e.nearMiss {
			if !p.approach {
				p.approach, p.entered, p.minSep, p.minT = true, false, sep, t
			} else if sep < p.minSep {
				p.minSep, p.minT = sep, t
			}
		} else if p.approach && sep >= e.nearMiss*rearmFactor {
			e.endApproach(tr, z, t)
		}

		if st > 0 || sep < e.nearTrack {
			tr.near = true
		}
		if sep < best {
			best, tr.nearest = sep, z
		}
	}
}

// endApproach closes a near-miss approach, reporting it when the hand did
// not enter the zone during it.
func (e *Engine) endApproach(tr *track, z int, t float64) {
	p := &tr.pairs[z]
	if !p.approach {
		return
	}
	p.approach = false
	if p.entered {
		return
	}
	e.stats.NearMisses++
	e.emit(Event{Kind: EventNearMiss, T: t, Track: tr.id, Zone: e.zones[z].name, Separation: p.minSep, MinT: p.minT})
}

// staleCheck declares tracks silent for longer than stale_after lost, and
// keeps the fail-safe request of lost tracks alive.
//
// A loss ends every warning episode of the track: what was warned before
// the loss says nothing about what the hand does when it is seen again.
// When the track was near a zone, the fail-safe hold is a warning for the
// lead times of the zones it was near (requesting, or closer than
// near_track, and the nearest zone, which the hold names): the hold was in
// force from the loss, so an entry after it, even one seen only when the
// hand reappears inside, counts its lead from the loss. Otherwise the lead
// of an entry after the loss counts from the first warning after the track
// was regained.
func (e *Engine) staleCheck() {
	for _, tr := range e.tracks {
		if !tr.has {
			continue
		}
		if tr.lost {
			for z := range tr.pairs {
				if p := &tr.pairs[z]; p.warning {
					p.lastWarn = e.now
				}
			}
			continue
		}
		if e.now-tr.lastT <= e.staleAfter {
			continue
		}
		tr.lost = true
		e.stats.TrackingLost++
		for z := range tr.pairs {
			e.endApproach(tr, z, e.now)
		}
		near := tr.near && tr.nearest >= 0
		for z := range tr.pairs {
			p := &tr.pairs[z]
			p.warning = near && (p.step > 0 || tr.sep[z] < e.nearTrack || z == tr.nearest)
			if p.warning {
				p.warnStart, p.lastWarn = e.now, e.now
			}
			p.step = 0
			p.reason.Rule, p.reason.Level, p.reason.Scale, p.reason.Required = "", LevelClear, 1, 0
		}
		ev := Event{Kind: EventTrackingLost, T: e.now, Track: tr.id}
		if near {
			p := &tr.pairs[tr.nearest]
			p.step = e.hold
			p.reason = Reason{Track: tr.id, Zone: e.zones[tr.nearest].name, Rule: RuleTrackingLost, Level: LevelHold,
				TimeToEntry: -1, Separation: p.reason.Separation, MinSeparation: p.reason.MinSeparation}
			ev.Zone = e.zones[tr.nearest].name
			ev.Separation = p.reason.Separation
		} else {
			tr.nearest = -1
		}
		e.emit(ev)
	}
}

// evaluate combines every pair's request into the cell's request and
// applies the release hysteresis.
func (e *Engine) evaluate() {
	req := 0
	e.reasons = e.reasons[:0]
	for _, tr := range e.tracks {
		for z := range tr.pairs {
			p := &tr.pairs[z]
			if p.step > 0 {
				e.reasons = append(e.reasons, p.reason)
				if p.step > req {
					req = p.step
				}
			}
		}
	}
	for s := 1; s <= req; s++ {
		e.lastReq[s], e.hasReq[s] = e.now, true
	}
	e.stepReasons[req] = append(e.stepReasons[req][:0], e.reasons...)
	// Escalation is immediate. A release needs the current level to have
	// lasted the release time, and then drops to the most severe step
	// requested within the last release time, so that there is at most one
	// release per release time whatever the input does.
	eff := req
	if req < e.cur {
		if e.now-e.adv.Since < e.release {
			eff = e.cur
		} else {
			for s := e.cur; s > req; s-- {
				if e.hasReq[s] && e.now-e.lastReq[s] < e.release {
					eff = s
					break
				}
			}
		}
	}
	e.adv.T = e.now
	e.adv.Held = eff > req
	e.adv.Reasons = e.stepReasons[eff]
	if eff != e.cur {
		e.cur = eff
		e.adv.Seq++
		e.adv.Since = e.now
		e.adv.Level, e.adv.Scale = e.steps[eff].level, e.steps[eff].scale
		e.stats.Changes[e.adv.Level]++
		a := &e.arena[e.arenaIdx]
		start := len(*a)
		*a = append(*a, e.adv.Reasons...)
		e.emit(Event{Kind: EventAdvisory, T: e.now, Level: e.adv.Level, Scale: e.adv.Scale, Seq: e.adv.Seq,
			Reasons: (*a)[start:len(*a):len(*a)]})
	}
}

// Advisory returns the cell's current advisory. Its Reasons alias engine
// memory (see Advisory.Reasons).
func (e *Engine) Advisory() Advisory { return e.adv }

// Events appends the events since the previous call to dst and returns it.
// The Reasons of advisory events stay valid until the next call to Events.
// Call it regularly (after every Sample in a live service): events are kept
// until then.
func (e *Engine) Events(dst []Event) []Event {
	dst = append(dst, e.events...)
	clear(e.events)
	e.events = e.events[:0]
	e.arenaIdx ^= 1
	e.arena[e.arenaIdx] = e.arena[e.arenaIdx][:0]
	return dst
}

// Flush ends every open near-miss approach at the engine's time, reporting
// those that ended without an entry (call it at the end of a recording).
func (e *Engine) Flush() {
	for _, tr := range e.tracks {
		for z := range tr.pairs {
			e.endApproach(tr, z, e.now)
		}
	}
}

// Stats returns the counters.
func (e *Engine) Stats() Stats { return e.stats }

// Now returns the engine's time: the latest time of an accepted sample,
// robot state or Advance.
func (e *Engine) Now() float64 { return e.now }

// Request is the current request of one track for one zone (see
// Engine.Requests).
type Request struct {
	Reason             // the request: rule, level, scale, separations, time to entry
	T          float64 // time of the track's latest sample
	TrackIndex int     // the track's place in the order of first appearance
	ZoneIndex  int     // the zone's place in the zone set
}

// Requests appends to dst the current requests of reduce or hold of the
// tracks that are not lost, in the order of State (tracks in order of first
// appearance, zones in zone-set order), and returns it: the pairs of State
// whose Level is not clear, without the fail-safe hold of lost tracks.
func (e *Engine) Requests(dst []Request) []Request {
	for ti, tr := range e.tracks {
		if !tr.has || tr.lost {
			continue
		}
		for z := range tr.pairs {
			if p := &tr.pairs[z]; p.step > 0 {
				dst = append(dst, Request{Reason: p.reason, T: tr.lastT, TrackIndex: ti, ZoneIndex: z})
			}
		}
	}
	return dst
}

// Separations appends to dst the signed distances (m, margins not
// subtracted, negative inside) from the latest accepted sample of track to
// every zone, in zone-set order, as the rules last used them (after a robot
// state, at the zones' new poses), and returns it; ok is false for a track
// the engine has no sample of.
func (e *Engine) Separations(track string, dst []float64) (_ []float64, ok bool) {
	tr := e.track(track)
	if tr == nil || !tr.has {
		return dst, false
	}
	return append(dst, tr.sep...), true
}

// TrackZone is the latest derived state of one track against one zone.
type TrackZone struct {
	Reason         // request (Rule "" and Level clear when none), separations, time-to-entry
	T      float64 // time of the track's latest sample
	Inside bool    // measured position inside the zone
	Lost   bool    // the track is lost
}

// State appends the state of every track and zone to dst (tracks in order
// of first appearance, zones in zone-set order) and returns it.
func (e *Engine) State(dst []TrackZone) []TrackZone {
	for _, tr := range e.tracks {
		if !tr.has {
			continue
		}
		for z := range tr.pairs {
			p := &tr.pairs[z]
			dst = append(dst, TrackZone{Reason: p.reason, T: tr.lastT, Inside: p.inside, Lost: tr.lost})
		}
	}
	return dst
}
