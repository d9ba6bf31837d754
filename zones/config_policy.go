package zones

// PolicyConfig holds the advisory rules, hysteresis and fail-safe settings.
// Owned by the advisory-engine work; fields may be added here.
type PolicyConfig struct {
	Rules            []RuleConfig `yaml:"rules"`
	Release          Duration     `yaml:"release"`        // stay clear this long before releasing
	StaleAfter       Duration     `yaml:"stale_after"`    // silence that counts as tracking lost
	NearTrack        Length       `yaml:"near_track"`     // "near a zone" for the tracking-loss rule
	MaxSpeed         Speed        `yaml:"max_speed"`      // samples implying more are rejected (default 10 m/s)
	NearMiss         Length       `yaml:"near_miss"`      // separation under this without entry is a near miss
	UseHandSpeed     bool         `yaml:"use_hand_speed"` // Sh from the forecast hand speed instead of 1.6 m/s
	FalseAlarmWindow Duration     `yaml:"false_alarm_window"`
}

// RuleConfig is one advisory rule: when its condition holds for a track and
// a zone, it requests Level ("reduce" with Scale, or "hold").
type RuleConfig struct {
	Name        string   `yaml:"name"`
	Level       string   `yaml:"level"`
	Scale       float64  `yaml:"scale"`        // speed scale for reduce, in [0,1]
	EntryWithin Duration `yaml:"entry_within"` // forecast time-to-entry at most this
	SepBelow    *Length  `yaml:"sep_below"`    // current separation below this
	Inside      bool     `yaml:"inside"`       // hand inside the zone
}
