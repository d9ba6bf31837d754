package report

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"forereach/review"
	"forereach/zones"
)

// Colours of the review figures (our own choice): incidents by kind, and
// the advisory level behind the separation curves.
var (
	colMissed   = color.NRGBA{190, 0, 40, 255}
	colEntry    = color.NRGBA{230, 120, 0, 255}
	colNearMiss = color.NRGBA{110, 60, 170, 255}
	colReduce   = color.NRGBA{240, 200, 90, 255}
	colHold     = color.NRGBA{225, 110, 110, 255}
	trackCols   = []color.NRGBA{
		{0, 114, 178, 255}, {0, 158, 115, 255}, {86, 180, 233, 255}, {100, 100, 100, 255},
		{204, 121, 167, 255}, {0, 70, 110, 255},
	}
)

func kindColor(kind string) color.NRGBA {
	switch kind {
	case "missed entry":
		return colMissed
	case "entry":
		return colEntry
	}
	return colNearMiss
}

// ReviewPlan draws the cell's zones (plan and side elevation) with the
// hands' decimated paths and the incidents: the ones with a separation
// figure labelled #1, #2, … in the order of res.Windows, the others as
// unlabelled markers.
func ReviewPlan(w io.Writer, cfg *zones.Config, res *review.Result) error {
	opt := LayoutOptions{Title: "Hands' paths and incidents, cell " + cfg.Cell, NoStations: true}
	trackIdx := map[string]int{}
	for _, p := range res.Paths {
		i, ok := trackIdx[p.Track]
		if !ok {
			i = len(trackIdx)
			trackIdx[p.Track] = i
		}
		col := withAlpha(trackCols[i%len(trackCols)], 0.55)
		for j, seg := range p.Segments {
			if len(seg) < 2 {
				continue
			}
			label := ""
			if j == len(p.Segments)-1 && len(res.Paths) <= 8 {
				label = p.Track
			}
			opt.Lines = append(opt.Lines, Polyline{Label: label, Points: seg, Color: col})
		}
	}
	labelled := map[[3]float64]bool{}
	for i, win := range res.Windows {
		opt.Points = append(opt.Points, Marker{Label: "#" + strconv.Itoa(i+1), At: win.At, Color: kindColor(win.Kind)})
		labelled[[3]float64{win.At.X, win.At.Y, win.At.Z}] = true
	}
	for _, m := range res.OtherMarks {
		if labelled[[3]float64{m.At.X, m.At.Y, m.At.Z}] {
			continue
		}
		opt.Points = append(opt.Points, Marker{At: m.At, Color: withAlpha(kindColor(m.Kind), 0.7)})
	}
	return Layout(w, cfg, opt)
}

// bands fills the time spans of the advisory levels over the whole height
// of the plot: clear blank, reduce amber (paler for a gentler reduction),
// hold red.
type bands struct {
	b   []review.Band
	off float64 // subtracted from times (the incident's time)
}

func (bs bands) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	for _, b := range bs.b {
		var col color.NRGBA
		switch b.Level {
		case "hold":
			col = withAlpha(colHold, 0.45)
		case "reduce":
			col = withAlpha(colReduce, 0.25+0.4*(1-b.Scale))
		default:
			continue
		}
		x0 := math.Max(float64(trX(b.From-bs.off)), float64(c.Min.X))
		x1 := math.Min(float64(trX(b.To-bs.off)), float64(c.Max.X))
		if !(x1 > x0) {
			continue
		}
		var path vg.Path
		path.Move(vg.Point{X: vg.Length(x0), Y: c.Min.Y})
		path.Line(vg.Point{X: vg.Length(x1), Y: c.Min.Y})
		path.Line(vg.Point{X: vg.Length(x1), Y: c.Max.Y})
		path.Line(vg.Point{X: vg.Length(x0), Y: c.Max.Y})
		path.Close()
		c.SetColor(col)
		c.Fill(path)
	}
}

// vline is a vertical line across the plot at x.
type vline struct {
	x     float64
	style draw.LineStyle
}

func (v vline) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x := trX(v.x)
	if x < c.Min.X || x > c.Max.X {
		return
	}
	c.StrokeLine2(v.style, x, c.Min.Y, x, c.Max.Y)
}

// hline is a horizontal line across the plot at y.
type hline struct {
	y     float64
	style draw.LineStyle
}

func (h hline) Plot(c draw.Canvas, p *plot.Plot) {
	_, trY := p.Transforms(&c)
	y := trY(h.y)
	if y < c.Min.Y || y > c.Max.Y {
		return
	}
	c.StrokeLine2(h.style, c.Min.X, y, c.Max.X, y)
}

// sepGap is the longest time between samples drawn as one line in a
// separation figure (s): longer gaps are tracking gaps.
const sepGap = 0.1

// SeparationFigure draws one incident's window: the hand's separation from
// the zone's shape (mm, negative inside) against time from the incident,
// over the advisory level of the cell, with the zone's surface, the near
// miss distance and, for entries, the needed horizon before the entry.
func SeparationFigure(w io.Writer, win *review.Window, n int, nearMiss, horizon float64) error {
	p := plot.New()
	styleAxes(p)
	title := fmt.Sprintf("#%d %s: %s, %s at %.3f s", n, win.Kind, win.Track, win.Zone, win.T)
	p.Title.Text = title
	p.X.Label.Text = "time from the incident (s)"
	p.Y.Label.Text = "separation (mm)"
	p.X.Min, p.X.Max = win.From-win.T, win.To-win.T
	p.Add(bands{b: win.Bands, off: win.T})
	p.Add(plotter.NewGrid())
	xy := make(plotter.XYs, 0, len(win.Sep))
	lo, hi := 0.0, nearMiss*1000*1.5
	for _, tv := range win.Sep {
		v := tv.V * 1000
		xy = append(xy, plotter.XY{X: tv.T - win.T, Y: v})
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if hi > 1500 {
		hi = 1500 // the approach matters, not how far away the hand was
	}
	p.Y.Min, p.Y.Max = lo-0.05*(hi-lo), hi+0.05*(hi-lo)
	p.Add(hline{0, draw.LineStyle{Color: color.Black, Width: 0.8}})
	p.Add(hline{nearMiss * 1000, draw.LineStyle{Color: colNearMiss, Width: 0.6, Dashes: []vg.Length{3, 2}}})
	p.Add(vline{0, draw.LineStyle{Color: kindColor(win.Kind), Width: 0.8}})
	if horizon > 0 && win.Kind != "near miss" {
		p.Add(vline{-horizon, draw.LineStyle{Color: color.Gray{Y: 90}, Width: 0.6, Dashes: []vg.Length{2, 2}}})
	}
	for i := range xy { // clip far values to the top of the plot
		xy[i].Y = math.Min(xy[i].Y, p.Y.Max)
	}
	// One line per stretch of samples: no line across a tracking gap.
	for start := 0; start < len(xy); {
		end := start + 1
		for end < len(xy) && xy[end].X-xy[end-1].X <= sepGap {
			end++
		}
		if end-start > 1 {
			l, err := plotter.NewLine(xy[start:end])
			if err != nil {
				return err
			}
			l.Color = color.Black
			l.Width = 1.2
			p.Add(l)
		}
		start = end
	}
	width, height := 13*vg.Centimeter, 7*vg.Centimeter
	svg := vgsvg.NewWith(vgsvg.UseWH(width, height))
	dc := draw.New(svg)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	capH := 8 * vg.Millimeter
	p.Draw(draw.Crop(dc, 0, 0, capH, 0))
	cap := textStyle(6.5, color.Gray{Y: 60})
	cap.XAlign = draw.XLeft
	line1 := "Background: cell advisory (amber reduce, red hold). Dashed purple: near-miss distance. Breaks: no samples."
	line2 := ""
	if win.Lead != nil {
		line2 = fmt.Sprintf("Lead %.3f s. ", *win.Lead)
	}
	if horizon > 0 && win.Kind != "near miss" {
		line2 += fmt.Sprintf("Dashed grey: needed horizon (%s ms) before the entry. ", strconv.FormatFloat(horizon*1000, 'f', 0, 64))
	}
	line2 += win.Recording
	dc.FillText(cap, vg.Point{X: 3 * vg.Millimeter, Y: capH - 3*vg.Millimeter}, line1)
	dc.FillText(cap, vg.Point{X: 3 * vg.Millimeter, Y: capH - 6.5*vg.Millimeter}, line2)
	_, err := svg.WriteTo(w)
	return err
}

// LeadHistogram draws the lead times of the warned entries, with the
// needed horizon marked and the number of missed entries in the title.
func LeadHistogram(w io.Writer, res *review.Result) error {
	var leads plotter.Values
	for _, e := range res.Entries {
		if !e.Missed && e.Lead != nil {
			leads = append(leads, *e.Lead)
		}
	}
	p := plot.New()
	styleAxes(p)
	p.Title.Text = fmt.Sprintf("Lead time of %d warned entries (%d missed)", len(leads), res.Totals.Missed)
	p.X.Label.Text = "lead time (s)"
	p.Y.Label.Text = "entries"
	p.Add(plotter.NewGrid())
	if len(leads) > 0 {
		bins := int(math.Max(5, math.Min(40, math.Sqrt(float64(len(leads)))*2)))
		h, err := plotter.NewHist(leads, bins)
		if err != nil {
			return err
		}
		h.FillColor = withAlpha(colEntry, 0.7)
		h.LineStyle.Color = darker(colEntry)
		p.Add(h)
		p.X.Min = math.Min(p.X.Min, 0)
	} else {
		p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1, 0, 1
	}
	if res.Horizon > 0 {
		p.Add(vline{res.Horizon, draw.LineStyle{Color: colMissed, Width: 1, Dashes: []vg.Length{3, 2}}})
		p.X.Max = math.Max(p.X.Max, res.Horizon*1.1)
	}
	width, height := 13*vg.Centimeter, 7*vg.Centimeter
	svg := vgsvg.NewWith(vgsvg.UseWH(width, height))
	dc := draw.New(svg)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	capH := 8 * vg.Millimeter
	p.Draw(draw.Crop(dc, 0, 0, capH, 0))
	cap := textStyle(6.5, color.Gray{Y: 60})
	cap.XAlign = draw.XLeft
	dc.FillText(cap, vg.Point{X: 3 * vg.Millimeter, Y: capH - 3*vg.Millimeter}, "Lead: from the first advisory for the entry to the entry.")
	if res.Horizon > 0 {
		dc.FillText(cap, vg.Point{X: 3 * vg.Millimeter, Y: capH - 6.5*vg.Millimeter}, fmt.Sprintf(
			"Dashed red: the needed horizon, %s ms (robot stopping time + system latency).", strconv.FormatFloat(res.Horizon*1000, 'f', 0, 64)))
	}
	_, err := svg.WriteTo(w)
	return err
}

// inlineSVG renders an SVG figure for inclusion in HTML: without the XML
// prolog and comment vgsvg writes before the <svg> element.
func inlineSVG(draw func(io.Writer) error) (string, error) {
	var b bytes.Buffer
	if err := draw(&b); err != nil {
		return "", err
	}
	s := b.Bytes()
	if i := bytes.Index(s, []byte("<svg")); i > 0 {
		s = s[i:]
	}
	return string(s), nil
}
