package review

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/bus"
	"forereach/forecast"
	"forereach/policy"
	"forereach/safety"
	"forereach/zones"
)

// Defaults of a review. Our choices, no source.
const (
	// DefaultWindows is how many incidents keep a window for figures.
	DefaultWindows = 12
	// WindowBefore and WindowAfter bound the window around an incident
	// (seconds before and after the entry or the closest approach).
	WindowBefore = 3.0
	WindowAfter  = 2.0
	// WindowStep is the smallest time between two points of a window.
	WindowStep = 0.01
	// MaxBadLines is how many unreadable-line messages a result keeps.
	MaxBadLines = 20
	// pathBudget is how many points the plan view keeps per track and
	// recording; the decimation distance doubles when it is exceeded.
	pathBudget = 4000
	// pathStep is the first decimation distance of the plan view (m).
	pathStep = 0.01
	// ringSpan is how much recent history each track keeps for windows
	// (seconds): the window before an incident, and the time between a
	// near miss's closest approach and its report.
	ringSpan = 8.0
	// advSpan is how long recent advisory changes are kept (seconds).
	advSpan = 30.0
	// maxTickGap bounds the ticks emulated in a gap between samples
	// (seconds past stale_after and release, see advanceTo).
	maxTickGap = 1.0
	// defaultTick is the live service's default bus.tick (seconds).
	defaultTick = 0.05
)

// Options tune a review.
type Options struct {
	// AsRecorded takes the advisories from the recordings' advisory lines
	// instead of from the engine.
	AsRecorded bool
	// Windows is how many incidents keep a window for figures, the most
	// severe first (missed entries, then entries by lead, then near misses
	// by separation); 0: DefaultWindows, < 0: none.
	Windows int
	// MaxTracks is the engine's track limit (bus.max_tracks; 0: default).
	MaxTracks int
	// Progress, when set, is called every 65536 items read with the
	// number of items read so far in the current recording.
	Progress func(items uint64)
}

// Reviewer replays recordings through the advisory engine and collects a
// Result. Use one Reviewer per report; Replay each recording in turn.
type Reviewer struct {
	cfg   *zones.Config
	model forecast.Model
	opt   Options

	zoneNames []string
	nearMiss  float64
	release   float64
	window    float64
	tick      float64
	stale     float64

	res      Result
	warnings []int // per zone
	falses   []int // per zone
	keeper   windowKeeper
	rejects  map[[2]string]uint64
}

// New prepares a review of recordings of the cell cfg, whose engine
// forecasts with model (the live service's model: bus.ModelFromConfig).
func New(cfg *zones.Config, model forecast.Model, opt Options) (*Reviewer, error) {
	if cfg == nil || model == nil {
		return nil, errors.New("review: configuration and forecast model are required")
	}
	zs, err := cfg.BuildZones()
	if err != nil {
		return nil, fmt.Errorf("review: %w", err)
	}
	// Check that the engine accepts the configuration before reading
	// anything.
	if _, err := policy.NewEngine(cfg, zs, model, policy.Options{MaxTracks: opt.MaxTracks}); err != nil {
		return nil, fmt.Errorf("review: %w", err)
	}
	rv := &Reviewer{cfg: cfg, model: model, opt: opt, rejects: map[[2]string]uint64{}}
	for i := 0; i < zs.Len(); i++ {
		rv.zoneNames = append(rv.zoneNames, zs.Zone(i).Name)
	}
	pc := &cfg.Policy
	rv.nearMiss = orDefault(float64(pc.NearMiss), policy.DefaultNearMiss)
	rv.release = orDefault(pc.Release.Seconds(), policy.DefaultRelease)
	rv.window = pc.FalseAlarmWindow.Seconds()
	if rv.window == 0 {
		rv.window = defaultFalseAlarmWindow
	}
	rv.stale = orDefault(pc.StaleAfter.Seconds(), policy.DefaultStaleAfter)
	rv.tick = orDefault(cfg.Bus.Tick.Seconds(), defaultTick)
	rv.warnings = make([]int, len(rv.zoneNames))
	rv.falses = make([]int, len(rv.zoneNames))
	n := opt.Windows
	if n == 0 {
		n = DefaultWindows
	}
	rv.keeper.max = max(n, 0)
	mode := "replay"
	if opt.AsRecorded {
		mode = "as-recorded"
	}
	sd := StoppingData(&cfg.Robot)
	horizon := 0.0
	if sd.StoppingTime > 0 {
		horizon = sd.Horizon()
	}
	rv.res = Result{Cell: cfg.Cell, Mode: mode, Model: model.Name(), NearMiss: rv.nearMiss,
		FalseAlarmWindow: rv.window, Release: rv.release, Tick: rv.tick, Horizon: horizon,
		Notice: safety.Notice}
	return rv, nil
}

// defaultFalseAlarmWindow is used when a configuration was not filled by
// the loader (which defaults policy.false_alarm_window to 1 s).
const defaultFalseAlarmWindow = 1.0

func orDefault(v, def float64) float64 {
	if v == 0 {
		return def
	}
	return v
}

// StoppingData takes the margin report's stopping figures from the robot
// section of a cell configuration.
func StoppingData(rc *zones.RobotConfig) safety.StoppingData {
	return safety.StoppingData{
		StoppingTime:        rc.StoppingTime.Seconds(),
		SystemLatency:       rc.SystemLatency.Seconds(),
		ReactionTime:        rc.ReactionTime.Seconds(),
		RobotSpeed:          float64(rc.Speed),
		StoppingDistance:    float64(rc.StoppingDistance),
		Intrusion:           float64(rc.Intrusion),
		HumanUncertainty:    float64(rc.PositionUncertaintyHuman),
		RobotUncertainty:    float64(rc.PositionUncertaintyRobot),
		DetectionCapability: float64(rc.DetectionCapability),
	}
}

// levelKey is one rung of the advisory ladder.
type levelKey struct {
	level policy.Level
	scale float64
}

// advChange is a change of the cell's advisory.
type advChange struct {
	t     float64
	level policy.Level
	scale float64
}

// pairState is one track against one zone.
type pairState struct {
	ep       episodes
	inside   bool
	entryIdx int  // index into Result.Entries of the open entry, -1 when none
	named    bool // as-recorded: named by the advisory in force
}

// trackState is what the review keeps about one track.
type trackState struct {
	id     string
	lastT  float64
	has    bool
	pairs  []pairState
	seps   []float64
	ring   ring
	path   pathDecimator
	lossAt int // index into Result.TrackingLosses of the open loss, -1 when none
}

// run is the replay of one recording.
type run struct {
	rv   *Reviewer
	name string
	eng  *policy.Engine
	zs   *zones.ZoneSet
	nz   int
	evs  []policy.Event
	reqs []policy.Request

	tracks []*trackState
	byID   map[string]*trackState

	rec     Recording
	started bool
	first   float64
	last    float64

	// cell advisory as the review sees it (engine or recording)
	level   policy.Level
	scale   float64
	since   float64 // time of the last change
	onSince float64 // time the advisory last left clear
	levels  map[levelKey]float64
	changes []advChange
	trimmed bool // changes older than advSpan were dropped
	// level before the first change kept
	initLevel policy.Level
	initScale float64
	named     []*pairState // as-recorded: pairs named since the advisory left clear
	// epRelease is the gap that ends a warning episode: the release time
	// for the engine's requests; 0 as recorded, where a pair named by an
	// advisory is requesting until the advisory is clear again (the
	// release is already in the recorded advisories).
	epRelease float64
	captures  []*capture
}

// Replay reads one recording to its end and adds what it finds to the
// result. Unreadable lines are counted and reported and reading goes on;
// any other read error ends the recording and is returned (what was read
// until then is kept). name labels the recording in the result.
func (rv *Reviewer) Replay(name string, src Source) error {
	zs, err := rv.cfg.BuildZones()
	if err != nil {
		return fmt.Errorf("review: %w", err)
	}
	eng, err := policy.NewEngine(rv.cfg, zs, rv.model, policy.Options{MaxTracks: rv.opt.MaxTracks})
	if err != nil {
		return fmt.Errorf("review: %w", err)
	}
	r := &run{rv: rv, name: name, eng: eng, zs: zs, nz: zs.Len(), byID: map[string]*trackState{},
		level: policy.LevelClear, scale: 1, initLevel: policy.LevelClear, initScale: 1, levels: map[levelKey]float64{}}
	r.rec.Name = name
	if !rv.opt.AsRecorded {
		r.epRelease = rv.release
	}
	defer stopSource(src)
	var items uint64
	var ferr error
	for {
		it, err := src.Next()
		if err != nil {
			if isEOF(err) {
				break
			}
			if re, ok := rowError(err); ok {
				r.badLine(re)
				continue
			}
			ferr = fmt.Errorf("%s: %w", name, err)
			break
		}
		items++
		if rv.opt.Progress != nil && items&0xffff == 0 {
			rv.opt.Progress(items)
		}
		switch it.Kind {
		case ItemSample:
			r.sample(it.Sample)
		case ItemRobot:
			r.robot(it.Robot)
		case ItemAdvisory:
			r.recordedAdvisory(it.Advisory)
		case ItemReject:
			rv.rejects[[2]string{"live", it.Reject.Reason}]++
		}
	}
	if rv.opt.Progress != nil {
		rv.opt.Progress(items)
	}
	r.finish()
	return ferr
}

func (r *run) badLine(re *forecast.RowError) {
	r.rec.BadLines++
	r.rv.res.Totals.BadLines++
	reason := "bad line"
	if re.Field != "" {
		reason = "bad field " + re.Field
	}
	r.rv.rejects[[2]string{"unreadable", reason}]++
	if len(r.rv.res.BadLines) < MaxBadLines {
		r.rv.res.BadLines = append(r.rv.res.BadLines, re.Error())
	}
}

// advanceTo emulates the live service's ticks (bus.tick) in a gap between
// items before time t, so that silent tracks are declared lost and the
// advisory released as they would have been live. Past stale_after,
// release and maxTickGap nothing more happens in a gap but the fail-safe
// hold of a lost track being kept up, so the ticks stop there and resume
// with the last tick before t.
func (r *run) advanceTo(t float64) {
	if !r.started {
		return
	}
	now := r.eng.Now()
	if !(t > now+r.rv.tick) {
		return
	}
	limit := now + r.rv.stale + r.rv.release + maxTickGap
	next := now + r.rv.tick
	for ; next < t && next <= limit; next += r.rv.tick {
		r.eng.Advance(next)
		r.drain(next)
	}
	if next < t {
		lastTick := now + r.rv.tick*math.Floor((t-now)/r.rv.tick)
		if lastTick >= t {
			lastTick -= r.rv.tick
		}
		if lastTick > next-r.rv.tick {
			r.eng.Advance(lastTick)
			r.drain(lastTick)
		}
	}
}

func (r *run) sample(s forecast.Sample) {
	r.rec.Samples++
	r.rv.res.Totals.Samples++
	if !r.started && finite(s.T) {
		r.first = s.T
	}
	r.advanceTo(s.T)
	before := r.eng.Stats().Accepted
	r.eng.Sample(s)
	accepted := r.eng.Stats().Accepted > before
	if !r.started && accepted {
		r.started = true
		r.first, r.since, r.last = s.T, s.T, s.T
	}
	if accepted {
		r.rec.Accepted++
		r.accepted(s)
	}
	r.drain(r.eng.Now())
	r.requests()
}

// accepted books an accepted sample: separations, closes, history, path.
func (r *run) accepted(s forecast.Sample) {
	tr := r.track(s.Track)
	if tr == nil {
		tr = &trackState{id: s.Track, seps: make([]float64, r.nz), pairs: make([]pairState, r.nz), lossAt: -1}
		for i := range tr.pairs {
			tr.pairs[i].entryIdx = -1
		}
		tr.ring.init(r.nz, ringSpan)
		tr.path.step = pathStep
		r.tracks = append(r.tracks, tr)
		r.byID[s.Track] = tr
	}
	gap := tr.has && s.T-tr.lastT > r.rv.stale
	tr.lastT, tr.has = s.T, true
	if s.T > r.last {
		r.last = s.T
	}
	// The engine has just measured the sample against the zones.
	var ok bool
	if tr.seps, ok = r.eng.Separations(s.Track, tr.seps[:0]); !ok {
		tr.seps = r.zs.SignedDistances(s.P, tr.seps)
	}
	tr.ring.push(s.T, s.P, tr.seps)
	tr.path.add(s.P, gap)
	for z := range tr.pairs {
		p := &tr.pairs[z]
		sep := tr.seps[z]
		if p.named {
			p.ep.extend(s.T)
		}
		if sep < r.rv.nearMiss || sep <= 0 {
			p.ep.close(s.T, r.epRelease, r.rv.window, r.judge(tr, z))
		}
		if p.ep.open && sep < p.ep.cur.minSep {
			p.ep.cur.minSep = sep
		}
		if p.entryIdx >= 0 {
			e := &r.rv.res.Entries[p.entryIdx]
			e.Depth = math.Max(e.Depth, -sep)
		}
	}
	for _, c := range r.captures {
		if c.track == tr && !c.done {
			c.add(s.T, tr.seps[c.zone])
		}
	}
	r.closeCaptures(s.T)
}

// track returns the state of the track with the given id, or nil. A few
// tracks are found by comparing ids, cheaper than hashing once per sample.
func (r *run) track(id string) *trackState {
	if len(r.tracks) <= 8 {
		for _, tr := range r.tracks {
			if tr.id == id {
				return tr
			}
		}
		return nil
	}
	return r.byID[id]
}

// judge returns the callback that books a settled episode of track tr
// against zone z.
func (r *run) judge(tr *trackState, z int) judge {
	return func(ep episode, falseAlarm bool) {
		if !falseAlarm {
			return
		}
		r.rv.res.Totals.FalseAlarms++
		r.rv.falses[z]++
		fa := FalseAlarm{Recording: r.name, Track: tr.id, Zone: r.rv.zoneNames[z], Start: ep.a, End: ep.b}
		if !math.IsInf(ep.minSep, 1) && !r.rv.opt.AsRecorded {
			v := ep.minSep
			fa.MinSep = &v
		}
		r.rv.res.FalseAlarms = append(r.rv.res.FalseAlarms, fa)
	}
}

// requests books the engine's current requests per track and zone
// (replay mode): warning episodes for the false-alarm count. The
// fail-safe hold of a lost track is not a warning of this kind.
func (r *run) requests() {
	if r.rv.opt.AsRecorded || r.eng.Advisory().Level == policy.LevelClear {
		return
	}
	r.reqs = r.eng.Requests(r.reqs[:0])
	for i := range r.reqs {
		q := &r.reqs[i]
		if q.Rule == policy.RuleTrackingLost {
			continue
		}
		ti := q.TrackIndex
		var tr *trackState
		if ti < len(r.tracks) && r.tracks[ti].id == q.Track {
			tr = r.tracks[ti]
		} else if tr = r.byID[q.Track]; tr == nil {
			continue
		}
		z := q.ZoneIndex
		if tr.pairs[z].ep.request(q.T, r.epRelease, r.rv.window, r.judge(tr, z)) {
			r.rv.res.Totals.Warnings++
			r.rv.warnings[z]++
			tr.pairs[z].ep.cur.minSep = tr.seps[z]
		}
	}
}

func (r *run) robot(st *bus.RobotState) {
	r.rec.Robot++
	r.advanceTo(st.T)
	if err := r.eng.Robot(bus.PolicyRobot(st)); err != nil {
		// Counted as a rejection by the engine (bad-robot-state).
		_ = err
	}
	if st.T > r.last && r.started {
		r.last = st.T
	}
	r.drain(r.eng.Now())
	r.requests()
}

// recordedAdvisory applies an advisory line: as-recorded it is the cell's
// advisory; in replay mode it is only counted.
func (r *run) recordedAdvisory(a *bus.Advisory) {
	r.rec.Recorded++
	if !r.rv.opt.AsRecorded {
		return
	}
	lv, ok := policy.ParseLevel(a.Level)
	if !ok {
		r.rv.rejects[[2]string{"unreadable", "unknown advisory level"}]++
		return
	}
	r.changeLevel(a.T, lv, a.Scale)
	// A pair named by an advisory is taken as requesting until the
	// advisory goes back to clear: recordings hold advisories only when
	// they change, with the reasons of that moment.
	for _, p := range r.named {
		p.ep.extend(a.T)
		if lv == policy.LevelClear {
			p.named = false
		}
	}
	if lv == policy.LevelClear {
		r.named = r.named[:0]
		return
	}
	for _, rs := range a.Reasons {
		if rs.Rule == policy.RuleTrackingLost {
			continue
		}
		tr := r.byID[rs.Track]
		z := r.zoneIndex(rs.Zone)
		if tr == nil || z < 0 {
			continue
		}
		p := &tr.pairs[z]
		if p.ep.request(a.T, r.epRelease, r.rv.window, r.judge(tr, z)) {
			r.rv.res.Totals.Warnings++
			r.rv.warnings[z]++
		}
		if !p.named {
			p.named = true
			r.named = append(r.named, p)
		}
	}
}

func (r *run) zoneIndex(name string) int {
	for i, n := range r.rv.zoneNames {
		if n == name {
			return i
		}
	}
	return -1
}

// changeLevel books a change of the cell's advisory at time t.
func (r *run) changeLevel(t float64, lv policy.Level, scale float64) {
	if !r.started {
		// Before the first sample: it is the state the recording starts in.
		r.level, r.scale = lv, scale
		r.initLevel, r.initScale = lv, scale
		if lv != policy.LevelClear {
			r.onSince = t
		}
		return
	}
	if t < r.since {
		t = r.since
	}
	r.levels[levelKey{r.level, r.scale}] += t - r.since
	if r.level == policy.LevelClear && lv != policy.LevelClear {
		r.onSince = t
	}
	r.level, r.scale, r.since = lv, scale, t
	r.changes = append(r.changes, advChange{t, lv, scale})
	// Keep advSpan seconds of changes, and the one in force before them.
	k := 0
	for k+1 < len(r.changes) && r.changes[k+1].t < t-advSpan {
		k++
	}
	if k > 0 {
		r.changes = append(r.changes[:0], r.changes[k:]...)
		r.trimmed = true
	}
	if t > r.last {
		r.last = t
	}
}

// levelAt returns the cell's advisory level at time t, and false when the
// changes kept no longer reach back that far.
func (r *run) levelAt(t float64) (policy.Level, float64, bool) {
	for i := len(r.changes) - 1; i >= 0; i-- {
		if c := r.changes[i]; c.t <= t {
			return c.level, c.scale, true
		}
	}
	return r.initLevel, r.initScale, !r.trimmed
}

// drain handles the engine's events up to now.
func (r *run) drain(now float64) {
	r.evs = r.eng.Events(r.evs[:0])
	for i := range r.evs {
		ev := &r.evs[i]
		switch ev.Kind {
		case policy.EventEntry:
			r.entry(ev)
		case policy.EventExit:
			if tr := r.byID[ev.Track]; tr != nil {
				if z := r.zoneIndex(ev.Zone); z >= 0 {
					p := &tr.pairs[z]
					if p.entryIdx >= 0 {
						t := ev.T
						r.rv.res.Entries[p.entryIdx].Exit = &t
						p.entryIdx = -1
					}
				}
			}
		case policy.EventNearMiss:
			r.nearMissEvent(ev)
		case policy.EventAdvisory:
			if !r.rv.opt.AsRecorded {
				r.changeLevel(ev.T, ev.Level, ev.Scale)
			}
		case policy.EventRejected:
			r.rv.rejects[[2]string{"replay", ev.Reject.String()}]++
		case policy.EventTrackingLost:
			if tr := r.byID[ev.Track]; tr != nil {
				tl := TrackingLoss{Recording: r.name, Track: tr.id, LastSeen: tr.lastT, Declared: ev.T, Zone: ev.Zone}
				tr.lossAt = len(r.rv.res.TrackingLosses)
				r.rv.res.TrackingLosses = append(r.rv.res.TrackingLosses, tl)
				r.rv.res.Totals.TrackingLosses++
			}
		case policy.EventTrackingRegained:
			if tr := r.byID[ev.Track]; tr != nil && tr.lossAt >= 0 {
				tl := &r.rv.res.TrackingLosses[tr.lossAt]
				t := ev.T
				tl.Regained = &t
				tl.Silence = t - tl.LastSeen
				tr.lossAt = -1
			}
		}
	}
	_ = now
}

func (r *run) entry(ev *policy.Event) {
	tr := r.byID[ev.Track]
	z := r.zoneIndex(ev.Zone)
	if tr == nil || z < 0 {
		return
	}
	e := Entry{Recording: r.name, Track: tr.id, Zone: ev.Zone, T: ev.T, Depth: math.Max(0, -ev.Separation)}
	if p, ok := tr.ring.last(); ok {
		e.At = p
	}
	cellOn := r.level != policy.LevelClear
	if cellOn {
		v := ev.T - r.onSince
		e.CellLead = &v
	}
	if r.rv.opt.AsRecorded {
		e.Lead = e.CellLead
		e.Missed = !cellOn || *e.CellLead <= 0
	} else {
		if ev.HasLead {
			v := ev.Lead
			e.Lead = &v
		}
		e.Missed = ev.Missed
	}
	res := &r.rv.res
	res.Totals.Entries++
	if e.Missed {
		res.Totals.Missed++
	} else if res.Horizon > 0 && e.Lead != nil && *e.Lead < res.Horizon {
		res.Totals.ShortLead++
	}
	tr.pairs[z].entryIdx = len(res.Entries)
	res.Entries = append(res.Entries, e)
	kind := "entry"
	if e.Missed {
		kind = "missed entry"
	}
	sev := [2]float64{1, 0}
	if e.Missed {
		sev = [2]float64{0, ev.T}
	} else if e.Lead != nil {
		sev[1] = *e.Lead
	}
	r.capture(tr, z, kind, ev.T, e.Lead, -e.Depth, e.At, sev)
}

func (r *run) nearMissEvent(ev *policy.Event) {
	tr := r.byID[ev.Track]
	z := r.zoneIndex(ev.Zone)
	if tr == nil || z < 0 {
		return
	}
	n := NearMiss{Recording: r.name, Track: tr.id, Zone: ev.Zone, T: ev.MinT, MinSep: ev.Separation}
	if p, ok := tr.ring.at(ev.MinT); ok {
		n.At = p
	} else if p, ok := tr.ring.last(); ok {
		n.At = p
	}
	if lv, sc, ok := r.levelAt(ev.MinT); ok {
		n.Level = levelName(lv, sc)
	}
	r.rv.res.NearMisses = append(r.rv.res.NearMisses, n)
	r.rv.res.Totals.NearMisses++
	r.capture(tr, z, "near miss", ev.MinT, nil, ev.Separation, n.At, [2]float64{2, ev.Separation})
}

// levelName is "clear", "hold" or "reduce 0.5".
func levelName(lv policy.Level, scale float64) string {
	if lv == policy.LevelReduce {
		return "reduce " + strconv.FormatFloat(scale, 'f', -1, 64)
	}
	return lv.String()
}

// finish ends the recording: open approaches are reported, open
// episodes judged, time at level closed.
func (r *run) finish() {
	r.eng.Flush()
	r.drain(r.eng.Now())
	if r.eng.Now() > r.last && r.started {
		r.last = r.eng.Now()
	}
	if r.started {
		r.levels[levelKey{r.level, r.scale}] += math.Max(0, r.last-r.since)
	}
	for _, tr := range r.tracks {
		for z := range tr.pairs {
			tr.pairs[z].ep.finish(r.judge(tr, z))
		}
		if tr.lossAt >= 0 {
			tl := &r.rv.res.TrackingLosses[tr.lossAt]
			tl.Silence = r.last - tl.LastSeen
		}
		r.rv.res.Paths = append(r.rv.res.Paths, TrackPath{Recording: r.name, Track: tr.id,
			Segments: tr.path.segments(), Step: tr.path.step})
	}
	for _, c := range r.captures {
		if !c.done {
			r.finishCapture(c)
		}
	}
	r.captures = nil
	r.rec.Start, r.rec.End, r.rec.Tracks = r.first, r.last, len(r.tracks)
	if !r.started {
		r.rec.Start, r.rec.End = 0, 0
	}
	r.rv.res.Recordings = append(r.rv.res.Recordings, r.rec)
	r.rv.res.Duration += r.rec.End - r.rec.Start
	for k, v := range r.levels {
		r.rv.addLevel(k, v)
	}
}

func (rv *Reviewer) addLevel(k levelKey, sec float64) {
	name := k.level.String()
	for i := range rv.res.Levels {
		l := &rv.res.Levels[i]
		if l.Level == name && l.Scale == k.scale {
			l.Seconds += sec
			return
		}
	}
	rv.res.Levels = append(rv.res.Levels, LevelTime{Level: name, Scale: k.scale, Seconds: sec})
}

// Result returns what the recordings replayed so far gave. It may be
// called more than once.
func (rv *Reviewer) Result() *Result {
	res := rv.res
	res.summarise(rv.zoneNames)
	for i := range res.Zones {
		res.Zones[i].Warnings = rv.warnings[i]
		res.Zones[i].FalseAlarms = rv.falses[i]
	}
	res.Levels = append([]LevelTime(nil), res.Levels...)
	sort.Slice(res.Levels, func(i, j int) bool {
		a, b := res.Levels[i], res.Levels[j]
		if a.Level != b.Level {
			return levelRank(a.Level) < levelRank(b.Level)
		}
		return a.Scale > b.Scale
	})
	total := 0.0
	for _, l := range res.Levels {
		total += l.Seconds
	}
	for i := range res.Levels {
		if total > 0 {
			res.Levels[i].Share = res.Levels[i].Seconds / total
		}
	}
	res.Rejected = nil
	res.Totals.Rejected = 0
	for k, v := range rv.rejects {
		res.Rejected = append(res.Rejected, Rejected{Source: k[0], Reason: k[1], Count: v})
		if k[0] != "unreadable" {
			res.Totals.Rejected += v
		}
	}
	sort.Slice(res.Rejected, func(i, j int) bool {
		a, b := res.Rejected[i], res.Rejected[j]
		if a.Source != b.Source {
			return a.Source < b.Source
		}
		return a.Reason < b.Reason
	})
	// False alarms are booked when judged; list them by recording, then
	// start.
	order := map[string]int{}
	for i, rc := range res.Recordings {
		order[rc.Name] = i
	}
	res.FalseAlarms = append([]FalseAlarm(nil), res.FalseAlarms...)
	sort.SliceStable(res.FalseAlarms, func(i, j int) bool {
		a, b := res.FalseAlarms[i], res.FalseAlarms[j]
		if order[a.Recording] != order[b.Recording] {
			return order[a.Recording] < order[b.Recording]
		}
		return a.Start < b.Start
	})
	res.Windows = rv.keeper.sorted()
	res.OtherMarks = nil
	for _, e := range res.Entries {
		kind := "entry"
		if e.Missed {
			kind = "missed entry"
		}
		if len(res.OtherMarks) < maxMarks {
			res.OtherMarks = append(res.OtherMarks, Mark{Kind: kind, At: e.At})
		}
	}
	for _, n := range res.NearMisses {
		if len(res.OtherMarks) < maxMarks {
			res.OtherMarks = append(res.OtherMarks, Mark{Kind: "near miss", At: n.At})
		}
	}
	return &res
}

// maxMarks bounds the incident markers of the plan view.
const maxMarks = 400

func levelRank(name string) int {
	l, _ := policy.ParseLevel(name)
	return int(l)
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

var _ = r3.Vec{}
