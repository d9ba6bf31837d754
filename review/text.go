package review

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"forereach/safety"
	"forereach/zones"
)

// MaxRows is how many rows a text table lists; the JSON output has all.
const MaxRows = 50

// The formatters of the text tables, also used by the HTML page (package
// report), so that both spell a value the same way.

// FormatMM writes metres as whole millimetres ("—" for NaN or infinite).
func FormatMM(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "—"
	}
	return strconv.FormatFloat(v*1000, 'f', 0, 64)
}

// FormatSecs writes seconds with three decimals.
func FormatSecs(v float64) string { return strconv.FormatFloat(v, 'f', 3, 64) }

// FormatOptSecs is FormatSecs, or "—" when there is no value.
func FormatOptSecs(v *float64) string {
	if v == nil {
		return "—"
	}
	return FormatSecs(*v)
}

// FormatMS writes seconds as whole milliseconds with the unit.
func FormatMS(v float64) string { return strconv.FormatFloat(v*1000, 'f', 0, 64) + " ms" }

// FormatDuration writes seconds as h:mm:ss.s (or s.s s under a minute).
func FormatDuration(s float64) string {
	if s < 60 {
		return strconv.FormatFloat(s, 'f', 1, 64) + " s"
	}
	h := int(s / 3600)
	m := int(math.Mod(s, 3600) / 60)
	sec := math.Mod(s, 60)
	if h > 0 {
		return fmt.Sprintf("%d:%02d:%04.1f", h, m, sec)
	}
	return fmt.Sprintf("%d:%04.1f", m, sec)
}

// FormatPct writes a share as a percentage with one decimal ("—" for NaN).
func FormatPct(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return strconv.FormatFloat(v*100, 'f', 1, 64) + " %"
}

type table struct {
	tw *tabwriter.Writer
}

func newTable(w io.Writer, title string, head ...string) *table {
	fmt.Fprintf(w, "\n%s\n", title)
	t := &table{tw: tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)}
	t.row(head...)
	return t
}

func (t *table) row(cells ...string) { fmt.Fprintln(t.tw, "  "+strings.Join(cells, "\t")) }

func (t *table) flush() { t.tw.Flush() }

func more(w io.Writer, n int) {
	if n > MaxRows {
		fmt.Fprintf(w, "  … and %d more (--json lists all)\n", n-MaxRows)
	}
}

// WriteText writes the review as text tables, ending with the safety
// notice.
func (r *Result) WriteText(w io.Writer) error {
	var b bytes.Buffer
	mode := "advisories replayed through the engine"
	if r.Mode == "as-recorded" {
		mode = "advisories as recorded"
	}
	fmt.Fprintf(&b, "forereach review: cell %s, %d recording(s), %s of samples (%d samples); %s (forecast model %s)\n",
		r.Cell, len(r.Recordings), FormatDuration(r.Duration), r.Totals.Samples, mode, r.Model)
	if r.Horizon > 0 {
		fmt.Fprintf(&b, "Needed horizon: %s (robot stopping time + system latency); leads shorter than that leave the robot moving at the entry.\n", FormatMS(r.Horizon))
	}

	t := newTable(&b, "Recordings", "recording", "start (s)", "end (s)", "duration", "samples", "accepted", "robot states", "advisory lines", "bad lines", "tracks")
	for _, rc := range r.Recordings {
		t.row(rc.Name, FormatSecs(rc.Start), FormatSecs(rc.End), FormatDuration(rc.End-rc.Start), strconv.FormatUint(rc.Samples, 10),
			strconv.FormatUint(rc.Accepted, 10), strconv.FormatUint(rc.Robot, 10), strconv.FormatUint(rc.Recorded, 10),
			strconv.FormatUint(rc.BadLines, 10), strconv.Itoa(rc.Tracks))
	}
	t.flush()

	tt := r.Totals
	fmt.Fprintf(&b, "\nSummary: %d entries (%d missed", tt.Entries, tt.Missed)
	if r.Horizon > 0 {
		fmt.Fprintf(&b, ", %d warned less than %s ahead", tt.ShortLead, FormatMS(r.Horizon))
	}
	fmt.Fprintf(&b, "), %d near misses (closer than %s mm), %d false alarms of %d warning episodes (window %s s), %d tracking losses, %d rejected inputs, %d unreadable lines.\n",
		tt.NearMisses, FormatMM(r.NearMiss), tt.FalseAlarms, tt.Warnings, strconv.FormatFloat(r.FalseAlarmWindow, 'f', -1, 64),
		tt.TrackingLosses, tt.Rejected, tt.BadLines)

	t = newTable(&b, "Per zone", "zone", "entries", "missed", "min lead (s)", "median lead (s)", "near misses", "closest (mm)", "warnings", "false alarms")
	for _, z := range r.Zones {
		closest := "—"
		if z.MinNearMiss != nil {
			closest = FormatMM(*z.MinNearMiss)
		}
		t.row(z.Name, strconv.Itoa(z.Entries), strconv.Itoa(z.Missed), FormatOptSecs(z.MinLead), FormatOptSecs(z.MedianLead),
			strconv.Itoa(z.NearMisses), closest, strconv.Itoa(z.Warnings), strconv.Itoa(z.FalseAlarms))
	}
	t.flush()

	leadHead := "lead (s)"
	if r.Mode == "as-recorded" {
		leadHead = "lead, recorded (s)"
	}
	t = newTable(&b, fmt.Sprintf("Zone entries (%d)", len(r.Entries)), "recording", "track", "zone", "time (s)", leadHead, "cell lead (s)", "missed", "depth (mm)", "exit (s)")
	for i, e := range r.Entries {
		if i == MaxRows {
			break
		}
		missed := ""
		if e.Missed {
			missed = "MISSED"
		} else if r.Horizon > 0 && e.Lead != nil && *e.Lead < r.Horizon {
			missed = "short"
		}
		t.row(e.Recording, e.Track, e.Zone, FormatSecs(e.T), FormatOptSecs(e.Lead), FormatOptSecs(e.CellLead), missed, FormatMM(e.Depth), FormatOptSecs(e.Exit))
	}
	t.flush()
	more(&b, len(r.Entries))

	t = newTable(&b, fmt.Sprintf("Near misses (%d)", len(r.NearMisses)), "recording", "track", "zone", "closest at (s)", "min separation (mm)", "advisory then")
	for i, n := range r.NearMisses {
		if i == MaxRows {
			break
		}
		lv := n.Level
		if lv == "" {
			lv = "—"
		}
		t.row(n.Recording, n.Track, n.Zone, FormatSecs(n.T), FormatMM(n.MinSep), lv)
	}
	t.flush()
	more(&b, len(r.NearMisses))

	t = newTable(&b, fmt.Sprintf("False alarms (%d of %d warning episodes): no entry or near miss of the same hand at the same zone from the first request to %s s after the last",
		len(r.FalseAlarms), tt.Warnings, strconv.FormatFloat(r.FalseAlarmWindow, 'f', -1, 64)),
		"recording", "track", "zone", "from (s)", "to (s)", "closest (mm)")
	for i, f := range r.FalseAlarms {
		if i == MaxRows {
			break
		}
		closest := "—"
		if f.MinSep != nil {
			closest = FormatMM(*f.MinSep)
		}
		t.row(f.Recording, f.Track, f.Zone, FormatSecs(f.Start), FormatSecs(f.End), closest)
	}
	t.flush()
	more(&b, len(r.FalseAlarms))

	t = newTable(&b, "Time at each level", "level", "time", "share")
	for _, l := range r.Levels {
		name := l.Level
		if l.Level == "reduce" {
			name = "reduce to " + strconv.FormatFloat(l.Scale, 'f', -1, 64)
		}
		t.row(name, FormatDuration(l.Seconds), FormatPct(l.Share))
	}
	t.flush()

	t = newTable(&b, fmt.Sprintf("Tracking-loss episodes (%d)", len(r.TrackingLosses)), "recording", "track", "last seen (s)", "declared lost (s)", "regained (s)", "silence (s)", "fail-safe hold for")
	for i, l := range r.TrackingLosses {
		if i == MaxRows {
			break
		}
		zone := l.Zone
		if zone == "" {
			zone = "— (not near a zone)"
		}
		t.row(l.Recording, l.Track, FormatSecs(l.LastSeen), FormatSecs(l.Declared), FormatOptSecs(l.Regained), FormatSecs(l.Silence), zone)
	}
	t.flush()
	more(&b, len(r.TrackingLosses))

	t = newTable(&b, "Rejected input", "source", "reason", "count")
	for _, rj := range r.Rejected {
		src := map[string]string{"live": "refused live (recorded)", "replay": "refused by the engine", "unreadable": "unreadable line"}[rj.Source]
		t.row(src, rj.Reason, strconv.FormatUint(rj.Count, 10))
	}
	if len(r.Rejected) == 0 {
		t.row("none", "", "")
	}
	t.flush()
	for _, l := range r.BadLines {
		fmt.Fprintf(&b, "  %s\n", l)
	}
	if n := int(tt.BadLines) - len(r.BadLines); n > 0 {
		fmt.Fprintf(&b, "  … and %d more unreadable lines\n", n)
	}
	fmt.Fprintf(&b, "\n%s\n", safety.Notice)
	_, err := w.Write(b.Bytes())
	return err
}

// WriteText writes the margin sweep as text: forecast errors, the
// recommended margins, each zone's sweep (every rowEvery-th margin), the
// standards' distances, and the zones section with the recommended
// margins, ending with the safety notice.
func (r *MarginResult) WriteText(w io.Writer, cfg *zones.Config, rowEvery int) error {
	var b bytes.Buffer
	fmt.Fprintf(&b, "forereach margins: cell %s, %d recording(s), %s of samples (%d samples), forecast model %s\n",
		r.Cell, len(r.Recordings), FormatDuration(r.Duration), r.Samples, r.Model)
	fmt.Fprintf(&b, "Horizon the cell needs: %s = robot stopping time %s + system latency %s. Target detection %s.\n",
		FormatMS(r.Horizon), FormatMS(r.StoppingTime), FormatMS(r.SystemLatency), FormatPct(r.Target))
	fmt.Fprintf(&b, "A warning at margin m: the forecast path over the horizon, grown by its uncertainty radius, comes within m of the zone;\n"+
		"it lasts while warnings follow within the release time (%s s). Detected: an entry warned at least the horizon ahead.\n"+
		"False alarm: a warning episode with no entry or near miss (closer than %s mm) of the same hand within %s s.\n",
		strconv.FormatFloat(r.Release, 'f', -1, 64), FormatMM(r.NearMiss), strconv.FormatFloat(r.Window, 'f', -1, 64))
	if r.BadLines > 0 {
		fmt.Fprintf(&b, "%d unreadable lines were skipped.\n", r.BadLines)
	}

	t := newTable(&b, fmt.Sprintf("Forecast error at %s (mm); per zone: forecasts whose true position is within %s mm of the zone", FormatMS(r.Horizon), FormatMM(r.Approach)),
		"zone", "forecasts", "p50", "p90", "p95", "p99", "at target", "max")
	eq := func(name string, e ErrQuantiles) {
		if e.Samples == 0 {
			t.row(name, "0", "—", "—", "—", "—", "—", "—")
			return
		}
		t.row(name, strconv.FormatUint(e.Samples, 10), FormatMM(e.P50), FormatMM(e.P90), FormatMM(e.P95), FormatMM(e.P99), FormatMM(e.AtTarget), FormatMM(e.Max))
	}
	eq("(all)", r.Errors)
	for _, z := range r.Zones {
		eq(z.Name, z.Errors)
	}
	t.flush()

	t = newTable(&b, "Recommended margins", "zone", "configured (mm)", "entries", "near misses", "recommended (mm)", "from", "detection", "false alarms/h", "at configured: detection", "false alarms/h")
	for _, z := range r.Zones {
		rec, det, fa := "—", "—", "—"
		if z.Recommended != nil {
			rec = FormatMM(*z.Recommended)
		}
		if z.AtRec != nil {
			det, fa = FormatPct(z.AtRec.Detection()), perHour(z.AtRec.FalseAlarmsPerHour())
		}
		cdet, cfa := "—", "—"
		if z.AtConf != nil {
			cdet, cfa = FormatPct(z.AtConf.Detection()), perHour(z.AtConf.FalseAlarmsPerHour())
		}
		t.row(z.Name, FormatMM(z.Configured), strconv.Itoa(z.Entries), strconv.Itoa(z.NearMisses), rec, z.From, det, fa, cdet, cfa)
	}
	t.flush()

	if rowEvery < 1 {
		rowEvery = 1
	}
	for _, z := range r.Zones {
		if z.Entries == 0 && (len(z.Sweep) == 0 || z.Sweep[len(z.Sweep)-1].Warnings == 0) {
			continue
		}
		t = newTable(&b, "Sweep: "+z.Name, "margin (mm)", "detected", "detection", "warnings", "false alarms", "false alarms/h", "")
		for k, sp := range z.Sweep {
			mark := ""
			if z.Recommended != nil && sp.Margin == *z.Recommended {
				mark = "← recommended"
			}
			if sp.Margin == z.Configured {
				mark = strings.TrimSpace(mark + " ← configured")
			}
			if k%rowEvery != 0 && k != len(z.Sweep)-1 && mark == "" {
				continue
			}
			t.row(FormatMM(sp.Margin), fmt.Sprintf("%d/%d", sp.Detected, sp.Entries), FormatPct(sp.Detection()), strconv.Itoa(sp.Warnings),
				strconv.Itoa(sp.FalseAlarms), perHour(sp.FalseAlarmsPerHour()), mark)
		}
		t.flush()
	}

	r.References.writeText(&b)

	if cfg != nil {
		fmt.Fprintf(&b, "\nZones section with the recommended margins (replaces the zones section of the cell configuration; units %s):\n\n", unitsOf(cfg))
		if err := WriteZonesYAML(&b, cfg, r.RecommendedMargins(), r.noteFor); err != nil {
			return err
		}
	}
	fmt.Fprintf(&b, "\n%s\n", safety.Notice)
	_, err := w.Write(b.Bytes())
	return err
}

func unitsOf(cfg *zones.Config) string {
	if cfg.Units == "mm" {
		return "mm"
	}
	return "m"
}

func perHour(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return strconv.FormatFloat(v, 'f', 1, 64)
}

// RecommendedMargins maps each zone with a recommendation to its margin.
func (r *MarginResult) RecommendedMargins() map[string]float64 {
	out := map[string]float64{}
	for _, z := range r.Zones {
		if z.Recommended != nil {
			out[z.Name] = *z.Recommended
		}
	}
	return out
}

// noteFor is the comment on a zone's margin line in the zones section.
func (r *MarginResult) noteFor(zone string) string {
	for _, z := range r.Zones {
		if z.Name != zone {
			continue
		}
		switch {
		case z.Recommended != nil && z.From == "sweep":
			return fmt.Sprintf("forereach margins: was %s mm; detects %s of %d entries %s ahead, %s false alarms/h",
				FormatMM(z.Configured), FormatPct(z.AtRec.Detection()), z.Entries, FormatMS(r.Horizon), perHour(z.AtRec.FalseAlarmsPerHour()))
		case z.Recommended != nil:
			return fmt.Sprintf("forereach margins: was %s mm; no entries recorded: forecast error at %s, quantile %s",
				FormatMM(z.Configured), FormatMS(r.Horizon), FormatPct(r.Target))
		case z.From == "target not reached":
			return fmt.Sprintf("forereach margins: kept; %s detection not reached within the sweep", FormatPct(r.Target))
		default:
			return "forereach margins: kept; no data for this zone"
		}
	}
	return ""
}

func (ref *References) writeText(b *bytes.Buffer) {
	fmt.Fprintf(b, "\nThe standards' distances for the same stopping data (protective separation is the job of certified safety equipment; advisory margins are no substitute):\n")
	if ref.MinDistance != nil {
		fmt.Fprintf(b, "  ISO 13855:2010 minimum distance, detection zone orthogonal to the approach: S = K·T + C = %s mm/s × %s s + %s mm = %s mm\n",
			strconv.FormatFloat(ref.MinDistanceK*1000, 'f', 0, 64), strconv.FormatFloat(ref.T, 'f', 3, 64), FormatMM(ref.MinDistanceC), FormatMM(*ref.MinDistance))
		fmt.Fprintf(b, "    (T = stopping time + system latency; K = 2000 mm/s, or 1600 mm/s when that gives more than 500 mm, then not below 500 mm; never below 100 mm)\n")
	} else {
		fmt.Fprintf(b, "  ISO 13855:2010 minimum distance: not computed: %s\n", ref.MinDistanceErr)
	}
	if s := ref.Separation; s != nil {
		in := ref.SeparationIn
		fmt.Fprintf(b, "  ISO/TS 15066 protective separation distance: Sp = Sh + Sr + Ss + C + Zd + Zr = %s + %s + %s + %s + %s + %s = %s mm\n",
			FormatMM(s.Sh), FormatMM(s.Sr), FormatMM(s.Ss), FormatMM(s.C), FormatMM(s.Zd), FormatMM(s.Zr), FormatMM(s.Sp))
		fmt.Fprintf(b, "    (v_h = %s mm/s, v_r = %s mm/s, Tr = reaction time + system latency = %s, Ts = %s)\n",
			strconv.FormatFloat(in.HumanSpeed*1000, 'f', 0, 64), strconv.FormatFloat(in.RobotSpeed*1000, 'f', 0, 64), FormatMS(in.ReactionTime), FormatMS(in.StoppingTime))
	} else {
		fmt.Fprintf(b, "  ISO/TS 15066 protective separation distance: not computed: %s\n", ref.SeparationErr)
	}
}

// ZonesYAML returns the zones section of cfg with the recommended margins
// (see WriteZonesYAML).
func (r *MarginResult) ZonesYAML(cfg *zones.Config) (string, error) {
	var b bytes.Buffer
	err := WriteZonesYAML(&b, cfg, r.RecommendedMargins(), r.noteFor)
	return b.String(), err
}
