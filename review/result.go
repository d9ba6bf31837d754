package review

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r3"
)

// Result is what a review found, over every recording given. Times are
// seconds on each recording's own time axis, lengths metres.
type Result struct {
	Cell string `json:"cell"`
	// Mode is "replay" (advisories from the engine replayed on the
	// samples) or "as-recorded" (advisories from the recordings' advisory
	// lines; the engine still finds entries, near misses and losses).
	Mode  string `json:"mode"`
	Model string `json:"model"`
	// Settings the analysis used.
	NearMiss         float64 `json:"near_miss_m"`
	FalseAlarmWindow float64 `json:"false_alarm_window_s"`
	Release          float64 `json:"release_s"`
	Tick             float64 `json:"tick_s"`
	// Horizon is the time a warning needs ahead of an entry for the robot
	// to be at rest (robot stopping time + system latency; 0 when the
	// configuration gives no stopping time).
	Horizon float64 `json:"horizon_s"`

	Recordings []Recording `json:"recordings"`
	Duration   float64     `json:"duration_s"` // sum over recordings

	Totals Totals `json:"totals"`
	Zones  []Zone `json:"zones"`

	Entries        []Entry        `json:"entries"`
	NearMisses     []NearMiss     `json:"near_misses"`
	FalseAlarms    []FalseAlarm   `json:"false_alarms"`
	Levels         []LevelTime    `json:"levels"`
	TrackingLosses []TrackingLoss `json:"tracking_losses"`
	Rejected       []Rejected     `json:"rejected"`
	// BadLines are the first messages about unreadable lines
	// (file:line:field), at most MaxBadLines; Totals.BadLines counts all.
	BadLines []string `json:"bad_lines"`

	// Figures' data: not in the JSON output.
	Windows []Window    `json:"-"`
	Paths   []TrackPath `json:"-"`
	// OtherMarks are incidents without a window, for the plan view.
	OtherMarks []Mark `json:"-"`

	Notice string `json:"safety_notice"`
}

// Recording summarises one recording.
type Recording struct {
	Name     string  `json:"name"`
	Start    float64 `json:"start_s"` // first sample time
	End      float64 `json:"end_s"`   // last time seen
	Samples  uint64  `json:"samples"` // sample lines read
	Accepted uint64  `json:"accepted"`
	Robot    uint64  `json:"robot_states"`
	Recorded uint64  `json:"recorded_advisories"` // advisory lines in the file
	BadLines uint64  `json:"bad_lines"`
	Tracks   int     `json:"tracks"`
}

// Totals are the counts over every recording.
type Totals struct {
	Samples        uint64 `json:"samples"`
	Entries        int    `json:"entries"`
	Missed         int    `json:"missed"`
	ShortLead      int    `json:"short_lead"` // warned, but less than Horizon ahead
	NearMisses     int    `json:"near_misses"`
	Warnings       int    `json:"warning_episodes"`
	FalseAlarms    int    `json:"false_alarms"`
	TrackingLosses int    `json:"tracking_losses"`
	Rejected       uint64 `json:"rejected"`
	BadLines       uint64 `json:"bad_lines"`
}

// Zone summarises one zone.
type Zone struct {
	Name        string   `json:"name"`
	Entries     int      `json:"entries"`
	Missed      int      `json:"missed"`
	NearMisses  int      `json:"near_misses"`
	Warnings    int      `json:"warning_episodes"`
	FalseAlarms int      `json:"false_alarms"`
	MinLead     *float64 `json:"min_lead_s,omitempty"`
	MedianLead  *float64 `json:"median_lead_s,omitempty"`
	// MinNearMiss is the smallest separation of a near miss (m).
	MinNearMiss *float64 `json:"min_near_miss_m,omitempty"`
}

// Entry is one entry of a hand into a zone's shape.
type Entry struct {
	Recording string  `json:"recording"`
	Track     string  `json:"track"`
	Zone      string  `json:"zone"`
	T         float64 `json:"t_s"`
	// Lead is the time from the first advisory for this entry to the
	// entry: in replay mode the engine's lead (since this track's first
	// reduce/hold request for this zone), as-recorded the time since the
	// recorded advisory last left clear. Absent for a missed entry with
	// no advisory.
	Lead *float64 `json:"lead_s,omitempty"`
	// CellLead is the time since the cell's advisory last left clear
	// (absent when it was clear at the entry).
	CellLead *float64 `json:"cell_lead_s,omitempty"`
	Missed   bool     `json:"missed"`
	// Depth is how far inside the shape the hand went (m).
	Depth float64 `json:"depth_m"`
	// Exit is the time of the exit; absent when the recording ended first.
	Exit *float64 `json:"exit_s,omitempty"`
	At   r3.Vec   `json:"-"`
}

// NearMiss is an approach closer than near_miss without entering.
type NearMiss struct {
	Recording string  `json:"recording"`
	Track     string  `json:"track"`
	Zone      string  `json:"zone"`
	T         float64 `json:"t_s"` // time of the closest approach
	MinSep    float64 `json:"min_sep_m"`
	// Level is the cell's advisory level at the closest approach ("" when
	// no longer known).
	Level string `json:"level"`
	At    r3.Vec `json:"-"`
}

// FalseAlarm is a warning episode followed by no entry or near miss of the
// same track at the same zone within the false-alarm window.
type FalseAlarm struct {
	Recording string  `json:"recording"`
	Track     string  `json:"track"`
	Zone      string  `json:"zone"`
	Start     float64 `json:"start_s"`
	End       float64 `json:"end_s"` // last request
	// MinSep is the closest measured separation during the episode (m;
	// absent when not measured, as-recorded).
	MinSep *float64 `json:"min_sep_m,omitempty"`
}

// LevelTime is the time spent at one advisory level (and speed scale).
type LevelTime struct {
	Level   string  `json:"level"`
	Scale   float64 `json:"scale"`
	Seconds float64 `json:"seconds"`
	Share   float64 `json:"share"`
}

// TrackingLoss is one episode of a track going silent longer than
// stale_after.
type TrackingLoss struct {
	Recording string  `json:"recording"`
	Track     string  `json:"track"`
	LastSeen  float64 `json:"last_seen_s"`
	Declared  float64 `json:"declared_s"` // when the engine declared it lost
	// Regained is the time of the next sample; absent when the recording
	// ended first.
	Regained *float64 `json:"regained_s,omitempty"`
	Silence  float64  `json:"silence_s"`
	// Zone is the zone the fail-safe hold was requested for ("" when the
	// track was not near one).
	Zone string `json:"zone,omitempty"`
}

// Rejected counts rejected input by reason and by who rejected it.
type Rejected struct {
	// Source: "live" (a reject line of the recording: refused by the live
	// service), "replay" (refused by the engine in this review) or
	// "unreadable" (a line or record the reader could not decode).
	Source string `json:"source"`
	Reason string `json:"reason"`
	Count  uint64 `json:"count"`
}

// Window is a stretch of time around one incident kept for figures: the
// hand's separation from the zone, sampled at most every WindowStep, and
// the cell's advisory level over the same time.
type Window struct {
	Recording string
	Track     string
	Zone      string
	Kind      string  // "entry", "missed entry" or "near miss"
	T         float64 // entry time or closest approach
	Lead      *float64
	MinSep    float64 // near miss: its separation; entry: −depth
	From, To  float64
	Sep       []TimeValue // separation from the zone's shape (m)
	Bands     []Band
	At        r3.Vec
	severity  [2]float64
}

// TimeValue is one point of a series.
type TimeValue struct{ T, V float64 }

// Band is a stretch of time at one advisory level.
type Band struct {
	From, To float64
	Level    string
	Scale    float64
}

// TrackPath is the decimated path of one track in one recording, split
// where the track was lost.
type TrackPath struct {
	Recording string
	Track     string
	Segments  [][]r3.Vec
	// Step is the decimation distance in the end (m): consecutive points
	// are at least this far apart.
	Step float64
}

// Mark is an incident position for the plan view.
type Mark struct {
	Kind string
	At   r3.Vec
}

// quantileSorted is the empirical quantile of sorted values (linear
// interpolation between order statistics).
func quantileSorted(v []float64, q float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	if len(v) == 1 {
		return v[0]
	}
	x := q * float64(len(v)-1)
	i := int(math.Floor(x))
	if i >= len(v)-1 {
		return v[len(v)-1]
	}
	f := x - float64(i)
	return v[i] + f*(v[i+1]-v[i])
}

// summarise fills the per-zone table from the incident lists.
func (r *Result) summarise(zoneNames []string) {
	idx := map[string]int{}
	r.Zones = make([]Zone, len(zoneNames))
	for i, n := range zoneNames {
		r.Zones[i].Name = n
		idx[n] = i
	}
	leads := make([][]float64, len(zoneNames))
	for _, e := range r.Entries {
		i, ok := idx[e.Zone]
		if !ok {
			continue
		}
		z := &r.Zones[i]
		z.Entries++
		if e.Missed {
			z.Missed++
		}
		if e.Lead != nil && !e.Missed {
			leads[i] = append(leads[i], *e.Lead)
		}
	}
	for i := range leads {
		if len(leads[i]) == 0 {
			continue
		}
		sort.Float64s(leads[i])
		mn, med := leads[i][0], quantileSorted(leads[i], 0.5)
		r.Zones[i].MinLead, r.Zones[i].MedianLead = &mn, &med
	}
	for _, n := range r.NearMisses {
		if i, ok := idx[n.Zone]; ok {
			z := &r.Zones[i]
			z.NearMisses++
			if z.MinNearMiss == nil || n.MinSep < *z.MinNearMiss {
				v := n.MinSep
				z.MinNearMiss = &v
			}
		}
	}
}
