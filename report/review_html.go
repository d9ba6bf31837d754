package report

import (
	"fmt"
	"html/template"
	"io"
	"strconv"

	"forereach/review"
	"forereach/safety"
	"forereach/zones"
)

// ReviewHTML writes the review as one self-contained HTML page: the safety
// notice, the summary and tables, and the figures as inline SVG (the plan
// and side view with the hands' paths and incidents, the separation around
// each of the most severe incidents with the advisory level, the lead-time
// histogram). It loads nothing: no scripts, style sheets, fonts or images
// from elsewhere.
func ReviewHTML(w io.Writer, cfg *zones.Config, res *review.Result) error {
	plan, err := inlineSVG(func(w io.Writer) error { return ReviewPlan(w, cfg, res) })
	if err != nil {
		return fmt.Errorf("review report: plan: %w", err)
	}
	hist, err := inlineSVG(func(w io.Writer) error { return LeadHistogram(w, res) })
	if err != nil {
		return fmt.Errorf("review report: lead times: %w", err)
	}
	var wins []template.HTML
	for i := range res.Windows {
		s, err := inlineSVG(func(w io.Writer) error {
			return SeparationFigure(w, &res.Windows[i], i+1, res.NearMiss, res.Horizon)
		})
		if err != nil {
			return fmt.Errorf("review report: incident %d: %w", i+1, err)
		}
		wins = append(wins, template.HTML(s))
	}
	mode := "advisories replayed through the engine"
	if res.Mode == "as-recorded" {
		mode = "advisories as recorded"
	}
	data := map[string]any{
		"Res":     res,
		"Mode":    mode,
		"Notice":  safety.Notice,
		"Plan":    template.HTML(plan),
		"Hist":    template.HTML(hist),
		"Windows": wins,
		"MaxRows": review.MaxRows,
	}
	return reviewPage.Execute(w, data)
}

var reviewPage = template.Must(template.New("review").Funcs(template.FuncMap{
	"mm":   review.FormatMM,
	"s":    review.FormatSecs,
	"os":   review.FormatOptSecs,
	"dur":  review.FormatDuration,
	"pct":  review.FormatPct,
	"ms":   review.FormatMS,
	"inc":  func(i int) int { return i + 1 },
	"more": func(n, max int) int { return n - max },
	"short": func(e review.Entry, h float64) bool {
		return !e.Missed && h > 0 && e.Lead != nil && *e.Lead < h
	},
	"optmm": func(v *float64) string {
		if v == nil {
			return "—"
		}
		return review.FormatMM(*v)
	},
	"scale": func(l review.LevelTime) string {
		if l.Level == "reduce" {
			return "reduce to " + strconv.FormatFloat(l.Scale, 'f', -1, 64)
		}
		return l.Level
	},
	"source": func(s string) string {
		return map[string]string{"live": "refused live (recorded)", "replay": "refused by the engine", "unreadable": "unreadable line"}[s]
	},
}).Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>forereach review: cell {{.Res.Cell}}</title>
<style>
body { font-family: "Liberation Sans", Arial, sans-serif; margin: 1.5em 2em; color: #222; max-width: 75em; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.15em; margin-top: 1.6em; border-bottom: 1px solid #ccc; }
.notice { border: 2px solid #b00028; background: #fff3f3; padding: 0.6em 1em; white-space: pre-wrap; font-size: 0.9em; }
table { border-collapse: collapse; font-size: 0.85em; margin: 0.4em 0; }
th, td { border-bottom: 1px solid #ddd; padding: 0.2em 0.7em; text-align: right; }
th { background: #f2f2f2; }
td.l, th.l { text-align: left; }
.missed { color: #b00028; font-weight: bold; }
.short { color: #b36b00; }
.figs { display: flex; flex-wrap: wrap; gap: 0.8em; }
.figs svg, .fig svg { max-width: 100%; height: auto; border: 1px solid #eee; }
.small { font-size: 0.85em; color: #555; }
</style>
</head>
<body>
<h1>forereach review: cell {{.Res.Cell}}</h1>
<p class="notice">{{.Notice}}</p>
<p>{{len .Res.Recordings}} recording(s), {{dur .Res.Duration}} of samples ({{.Res.Totals.Samples}} samples); {{.Mode}} (forecast model {{.Res.Model}}).
{{if gt .Res.Horizon 0.0}}Needed horizon {{ms .Res.Horizon}} (robot stopping time + system latency).{{end}}</p>
<p><b>{{.Res.Totals.Entries}}</b> entries ({{.Res.Totals.Missed}} missed{{if gt .Res.Horizon 0.0}}, {{.Res.Totals.ShortLead}} warned less than {{ms .Res.Horizon}} ahead{{end}}),
<b>{{.Res.Totals.NearMisses}}</b> near misses (closer than {{mm .Res.NearMiss}} mm),
<b>{{.Res.Totals.FalseAlarms}}</b> false alarms of {{.Res.Totals.Warnings}} warning episodes (window {{.Res.FalseAlarmWindow}} s),
<b>{{.Res.Totals.TrackingLosses}}</b> tracking losses, {{.Res.Totals.Rejected}} rejected inputs, {{.Res.Totals.BadLines}} unreadable lines.</p>

<h2>Plan and side view</h2>
<div class="fig">{{.Plan}}</div>
<p class="small">Hands' paths (decimated), the zones with their margins, and the incidents: labelled crosses have a separation figure below (red missed entry, orange entry, purple near miss).</p>

<h2>Incidents: separation and advisory</h2>
{{if .Windows}}<div class="figs">{{range .Windows}}{{.}}{{end}}</div>{{else}}<p>No entries or near misses.</p>{{end}}

<h2>Lead times</h2>
<div class="fig">{{.Hist}}</div>

<h2>Per zone</h2>
<table><tr><th class="l">zone</th><th>entries</th><th>missed</th><th>min lead (s)</th><th>median lead (s)</th><th>near misses</th><th>closest (mm)</th><th>warnings</th><th>false alarms</th></tr>
{{range .Res.Zones}}<tr><td class="l">{{.Name}}</td><td>{{.Entries}}</td><td>{{.Missed}}</td><td>{{os .MinLead}}</td><td>{{os .MedianLead}}</td><td>{{.NearMisses}}</td><td>{{optmm .MinNearMiss}}</td><td>{{.Warnings}}</td><td>{{.FalseAlarms}}</td></tr>
{{end}}</table>

<h2>Zone entries ({{len .Res.Entries}})</h2>
<table><tr><th class="l">recording</th><th class="l">track</th><th class="l">zone</th><th>time (s)</th><th>lead (s)</th><th>cell lead (s)</th><th></th><th>depth (mm)</th><th>exit (s)</th></tr>
{{$h := .Res.Horizon}}{{$max := .MaxRows}}{{range $i, $e := .Res.Entries}}{{if lt $i $max}}<tr><td class="l">{{$e.Recording}}</td><td class="l">{{$e.Track}}</td><td class="l">{{$e.Zone}}</td><td>{{s $e.T}}</td><td>{{os $e.Lead}}</td><td>{{os $e.CellLead}}</td><td>{{if $e.Missed}}<span class="missed">missed</span>{{else if short $e $h}}<span class="short">short</span>{{end}}</td><td>{{mm $e.Depth}}</td><td>{{os $e.Exit}}</td></tr>
{{end}}{{end}}</table>
{{if gt (len .Res.Entries) .MaxRows}}<p class="small">… and {{more (len .Res.Entries) .MaxRows}} more (forereach review --json lists all).</p>{{end}}

<h2>Near misses ({{len .Res.NearMisses}})</h2>
<table><tr><th class="l">recording</th><th class="l">track</th><th class="l">zone</th><th>closest at (s)</th><th>min separation (mm)</th><th class="l">advisory then</th></tr>
{{range $i, $n := .Res.NearMisses}}{{if lt $i $max}}<tr><td class="l">{{$n.Recording}}</td><td class="l">{{$n.Track}}</td><td class="l">{{$n.Zone}}</td><td>{{s $n.T}}</td><td>{{mm $n.MinSep}}</td><td class="l">{{$n.Level}}</td></tr>
{{end}}{{end}}</table>

<h2>False alarms ({{len .Res.FalseAlarms}} of {{.Res.Totals.Warnings}} warning episodes)</h2>
<p class="small">A warning episode of a hand and zone with no entry or near miss of that hand at that zone from its first request to {{.Res.FalseAlarmWindow}} s after its last.</p>
<table><tr><th class="l">recording</th><th class="l">track</th><th class="l">zone</th><th>from (s)</th><th>to (s)</th><th>closest (mm)</th></tr>
{{range $i, $f := .Res.FalseAlarms}}{{if lt $i $max}}<tr><td class="l">{{$f.Recording}}</td><td class="l">{{$f.Track}}</td><td class="l">{{$f.Zone}}</td><td>{{s $f.Start}}</td><td>{{s $f.End}}</td><td>{{optmm $f.MinSep}}</td></tr>
{{end}}{{end}}</table>

<h2>Time at each level</h2>
<table><tr><th class="l">level</th><th>time</th><th>share</th></tr>
{{range .Res.Levels}}<tr><td class="l">{{scale .}}</td><td>{{dur .Seconds}}</td><td>{{pct .Share}}</td></tr>
{{end}}</table>

<h2>Tracking-loss episodes ({{len .Res.TrackingLosses}})</h2>
<table><tr><th class="l">recording</th><th class="l">track</th><th>last seen (s)</th><th>declared lost (s)</th><th>regained (s)</th><th>silence (s)</th><th class="l">fail-safe hold for</th></tr>
{{range $i, $l := .Res.TrackingLosses}}{{if lt $i $max}}<tr><td class="l">{{$l.Recording}}</td><td class="l">{{$l.Track}}</td><td>{{s $l.LastSeen}}</td><td>{{s $l.Declared}}</td><td>{{os $l.Regained}}</td><td>{{s $l.Silence}}</td><td class="l">{{if $l.Zone}}{{$l.Zone}}{{else}}— (not near a zone){{end}}</td></tr>
{{end}}{{end}}</table>

<h2>Rejected input</h2>
<table><tr><th class="l">source</th><th class="l">reason</th><th>count</th></tr>
{{range .Res.Rejected}}<tr><td class="l">{{source .Source}}</td><td class="l">{{.Reason}}</td><td>{{.Count}}</td></tr>
{{else}}<tr><td class="l">none</td><td></td><td></td></tr>{{end}}</table>
{{range .Res.BadLines}}<p class="small">{{.}}</p>{{end}}

<h2>Recordings</h2>
<table><tr><th class="l">recording</th><th>start (s)</th><th>end (s)</th><th>samples</th><th>accepted</th><th>robot states</th><th>advisory lines</th><th>bad lines</th><th>tracks</th></tr>
{{range .Res.Recordings}}<tr><td class="l">{{.Name}}</td><td>{{s .Start}}</td><td>{{s .End}}</td><td>{{.Samples}}</td><td>{{.Accepted}}</td><td>{{.Robot}}</td><td>{{.Recorded}}</td><td>{{.BadLines}}</td><td>{{.Tracks}}</td></tr>
{{end}}</table>

<p class="notice">{{.Notice}}</p>
</body>
</html>
`))
