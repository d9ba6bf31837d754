package zones

import (
	"math"
	"strconv"
	"time"
)

// PolicyConfig holds the advisory rules, hysteresis and fail-safe settings
// of the advisory engine (package policy). Owned by the advisory-engine work;
// fields may be added here. Defaults (applied on load; the engine applies the
// same ones to a zero value):
//
//	rules:        approach (reduce, scale 0.5, entry_within 400ms) and
//	              imminent (hold, entry_within 150ms, inside: true)
//	release:      1s
//	stale_after:  300ms
//	near_track:   0.5 m
//	max_speed:    10 m/s
//	near_miss:    0.1 m
//	use_hand_speed: false (Sh uses 1.6 m/s)
//	false_alarm_window: 1s
type PolicyConfig struct {
	// Rules are the advisory rules. A zone uses the rules it names, or all
	// of them when it names none.
	Rules []RuleConfig `yaml:"rules"`
	// Release: the requests must have stayed below the current level this
	// long (and the level must have lasted this long) before it drops.
	Release Duration `yaml:"release"`
	// StaleAfter: a track silent longer than this is lost; when it was near
	// a zone (within near_track, or requesting reduce or hold) it requests
	// hold until it is seen again.
	StaleAfter Duration `yaml:"stale_after"`
	// NearTrack is "near a zone" for the tracking-loss rule.
	NearTrack Length `yaml:"near_track"`
	// MaxSpeed: samples implying a faster hand are rejected and counted.
	MaxSpeed Speed `yaml:"max_speed"`
	// NearMiss: a separation under this without an entry is a near miss.
	NearMiss Length `yaml:"near_miss"`
	// UseHandSpeed: the protective separation distance takes Sh from the
	// hand's forecast speed instead of 1.6 m/s (ISO 13855).
	UseHandSpeed bool `yaml:"use_hand_speed"`
	// FalseAlarmWindow: for reviews, a reduce/hold request not followed by
	// an entry of the same track into the same zone within this time counts
	// as a false alarm.
	FalseAlarmWindow Duration `yaml:"false_alarm_window"`
}

// RuleConfig is one advisory rule: when any of its conditions holds for a
// track and a zone, it requests Level ("reduce" with Scale, or "hold").
type RuleConfig struct {
	Name  string  `yaml:"name"`
	Level string  `yaml:"level"` // "reduce" or "hold"
	Scale float64 `yaml:"scale"` // speed scale for reduce, in [0,1]; not used by hold
	// EntryWithin: the forecast path (with its uncertainty radius and the
	// zone's margin) touches the zone at most this long from now.
	EntryWithin Duration `yaml:"entry_within"`
	// SepBelow: the hand's measured position is closer than this to the
	// zone's shape.
	SepBelow *Length `yaml:"sep_below"`
	// Inside: the hand's measured position is inside the zone's shape.
	Inside bool `yaml:"inside"`
}

// Names of the advisory engine's built-in rules; configured rules may not
// use them.
const (
	builtinRuleTrackingLost = "tracking-lost"
	builtinRuleSeparation   = "protective-separation"
)

// Defaults fills the policy's defaults (see PolicyConfig).
func (p *PolicyConfig) Defaults() {
	if len(p.Rules) == 0 {
		p.Rules = []RuleConfig{
			{Name: "approach", Level: "reduce", Scale: 0.5, EntryWithin: Duration(400 * time.Millisecond)},
			{Name: "imminent", Level: "hold", EntryWithin: Duration(150 * time.Millisecond), Inside: true},
		}
	}
	if p.Release == 0 {
		p.Release = Duration(time.Second)
	}
	if p.StaleAfter == 0 {
		p.StaleAfter = Duration(300 * time.Millisecond)
	}
	if p.NearTrack == 0 {
		p.NearTrack = 0.5
	}
	if p.MaxSpeed == 0 {
		// Common practice, no source (five times the hand approach speed
		// K = 2000 mm/s of ISO 13855:2010).
		p.MaxSpeed = 10
	}
	if p.NearMiss == 0 {
		p.NearMiss = 0.1
	}
	if p.FalseAlarmWindow == 0 {
		p.FalseAlarmWindow = Duration(time.Second)
	}
}

// Check reports bad values and duplicate rule names.
func (p *PolicyConfig) Check(c *Checker) {
	if p.Release < 0 || time.Duration(p.Release) > time.Minute {
		c.Errorf("release", "must be in (0, 1m], got %v", time.Duration(p.Release))
	}
	if p.StaleAfter < 0 || time.Duration(p.StaleAfter) > 10*time.Second {
		c.Errorf("stale_after", "must be in (0, 10s], got %v", time.Duration(p.StaleAfter))
	}
	if !(p.NearTrack >= 0) || math.IsInf(float64(p.NearTrack), 0) {
		c.Errorf("near_track", "must be >= 0 m, got %g m", float64(p.NearTrack))
	}
	if !(p.MaxSpeed > 0) || math.IsInf(float64(p.MaxSpeed), 0) {
		c.Errorf("max_speed", "must be > 0 m/s, got %g m/s", float64(p.MaxSpeed))
	}
	if !(p.NearMiss >= 0) || math.IsInf(float64(p.NearMiss), 0) {
		c.Errorf("near_miss", "must be >= 0 m, got %g m", float64(p.NearMiss))
	}
	if p.FalseAlarmWindow < 0 {
		c.Errorf("false_alarm_window", "must be >= 0, got %v", time.Duration(p.FalseAlarmWindow))
	}
	first := map[string]int{}
	for i, r := range p.Rules {
		if r.Name == "" {
			continue // reported by RuleConfig.Check
		}
		if j, dup := first[r.Name]; dup {
			c.Errorf("rules["+strconv.Itoa(i)+"].name", "duplicate rule name (also rules[%d])", j)
		} else {
			first[r.Name] = i
		}
	}
}

// Check reports a rule that has no name, an unknown level, a scale out of
// [0,1] or no condition.
func (r *RuleConfig) Check(c *Checker) {
	switch {
	case r.Name == "":
		c.Errorf("name", "missing: every rule needs a name (zones refer to it)")
	case r.Name == builtinRuleTrackingLost || r.Name == builtinRuleSeparation:
		c.Errorf("name", "%q is the name of a built-in rule; choose another", r.Name)
	}
	switch r.Level {
	case "reduce":
		if !(r.Scale >= 0 && r.Scale <= 1) {
			c.Errorf("scale", "must be in [0, 1], got %g", r.Scale)
		}
	case "hold":
		if r.Scale != 0 {
			c.Errorf("scale", "a hold rule has no speed scale (hold is scale 0); remove it")
		}
	case "":
		c.Errorf("level", "missing: reduce or hold")
	default:
		c.Errorf("level", "%q: want reduce or hold", r.Level)
	}
	if r.EntryWithin < 0 {
		c.Errorf("entry_within", "must be >= 0, got %v", time.Duration(r.EntryWithin))
	}
	if r.SepBelow != nil && !(*r.SepBelow > 0) {
		c.Errorf("sep_below", "must be > 0 m, got %g m", float64(*r.SepBelow))
	}
	if r.EntryWithin <= 0 && r.SepBelow == nil && !r.Inside {
		c.Errorf("", "rule has no condition: set entry_within, sep_below or inside: true")
	}
}
