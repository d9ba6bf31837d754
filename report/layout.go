package report

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	xfont "golang.org/x/image/font"
	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"forereach/safety"
	"forereach/zones"
)

// LayoutOptions say how to draw a cell layout. The zero value draws the
// plan and the side elevation side by side, 30 cm wide, with a grid chosen
// from the cell's size and robot-attached zones at their frames' configured
// poses.
type LayoutOptions struct {
	// Width of the whole figure; default 30 cm.
	Width vg.Length
	// Height of the whole figure; default: what the width allows at one
	// common scale for all views, plus the caption.
	Height vg.Length
	// Views to draw, left to right; default Plan then Elevation.
	Views []View
	// Grid is the grid spacing in metres; 0 chooses 0.05, 0.1, 0.2, 0.25,
	// 0.5, 1 or 2 m so that the longer side has 6 to 20 grid lines
	// (0.5 m for a cell of a few metres).
	Grid float64
	// Title above the views; default "cell <name>".
	Title string
	// Poses places robot frames for the zones attached to them (by frame
	// name); frames not given keep their configured pose (robot.frames).
	// A review report sets them to the robot's pose at an incident.
	Poses map[string]zones.Pose
	// NoStations leaves out the stations (named work positions).
	NoStations bool
	// Lines are drawn over the zones in every view (projected), e.g.
	// recorded hand paths.
	Lines []Polyline
	// Points are labelled markers drawn over everything, e.g. incidents.
	Points []Marker
}

// Polyline is a path drawn over the layout.
type Polyline struct {
	Label  string   // shown at the last point; may be empty
	Points []r3.Vec // cell frame, metres
	Color  color.Color
	Dashed bool
}

// Marker is a labelled point drawn over the layout.
type Marker struct {
	Label string
	At    r3.Vec // cell frame, metres
	Color color.Color
}

// Layout draws the zones of a cell configuration as SVG: each selected view
// (default plan x–y and side elevation x–z) on a metric grid at one common
// scale (1 m is the same length in every view and along both axes), each
// zone's shape tinted with a solid outline and named, its margin (the shape
// grown by the zone's margin) as a paler region with a dashed outline,
// robot-attached zones in their own colour at their frame's pose, stations
// as grey diamonds, and the overlays of opt. The caption explains the
// drawing and carries the advisory-only notice.
//
// Outlines are exact projections up to the tolerances stated at arcSteps
// and gridCells.
func Layout(w io.Writer, cfg *zones.Config, opt LayoutOptions) error {
	if cfg == nil {
		return errors.New("layout: no configuration")
	}
	views := opt.Views
	if len(views) == 0 {
		views = []View{Plan, Elevation}
	}
	plots := make([]*plot.Plot, len(views))
	for i, v := range views {
		p, err := LayoutView(cfg, v, opt)
		if err != nil {
			return err
		}
		plots[i] = p
	}
	width := opt.Width
	if width <= 0 {
		width = 30 * vg.Centimeter
	}

	capStyle := textStyle(8, color.Gray{Y: 60})
	capStyle.XAlign = draw.XLeft
	caption := wrapText(layoutCaption(cfg, plots, opt), capStyle, width-10*vg.Millimeter)
	capH := vg.Length(len(caption))*capStyle.Font.Size*1.35 + 6*vg.Millimeter
	titleStyle := textStyle(12, color.Black)
	titleStyle.Font.Weight = xfont.WeightBold
	title := opt.Title
	if title == "" {
		title = "cell " + cfg.Cell
	}
	titleH := titleStyle.Font.Size * 2.6

	panels := func(h vg.Length) []draw.Canvas {
		c := draw.NewCanvas(nullCanvas{}, width, h)
		return splitPanels(draw.Crop(c, 3*vg.Millimeter, -3*vg.Millimeter, capH, -titleH), len(plots))
	}
	height := opt.Height
	if height <= 0 {
		// Fit: find the common scale a generous height gives (width
		// limited), then drop the vertical slack.
		trial := width
		saved := saveRanges(plots)
		slack := fitEqualScale(plots, panels(trial))
		restoreRanges(plots, saved)
		height = trial - slack
		if min := 8 * vg.Centimeter; height < min {
			height = min
		}
	}

	svg := vgsvg.NewWith(vgsvg.UseWH(width, height))
	dc := draw.New(svg)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	pcs := panels(height)
	for i := range pcs {
		pcs[i].Canvas = svg
	}
	fitEqualScale(plots, pcs)
	for i, p := range plots {
		p.Draw(pcs[i])
	}
	dc.FillText(titleStyle, vg.Point{X: width / 2, Y: height - titleH/2 - titleStyle.Font.Size/3}, title)
	y := capH - 3*vg.Millimeter
	for _, line := range caption {
		y -= capStyle.Font.Size * 1.35
		dc.FillText(capStyle, vg.Point{X: 5 * vg.Millimeter, Y: y}, line)
	}
	_, err := svg.WriteTo(w)
	return err
}

// LayoutView builds the plot of one view of the cell: the zones, stations
// and overlays of opt on a metric grid, with axis ranges covering them all.
// Other figures (a review report's plan with hand paths, say) may add
// plotters to it. Draw such plots with DrawEqualScale so that the view keeps
// equal scales on both axes.
func LayoutView(cfg *zones.Config, v View, opt LayoutOptions) (*plot.Plot, error) {
	p, _, err := layoutView(cfg, v, opt)
	return p, err
}

func layoutView(cfg *zones.Config, v View, opt LayoutOptions) (*plot.Plot, *labelLayer, error) {
	drawings, err := zoneDrawings(cfg, v, opt.Poses)
	if err != nil {
		return nil, nil, err
	}
	p := plot.New()
	styleAxes(p)
	p.Title.Text = v.String()
	p.X.Label.Text = "x (m)"
	if v == Elevation {
		p.Y.Label.Text = "z (m)"
	} else {
		p.Y.Label.Text = "y (m)"
	}

	// Data ranges: everything drawn, padded.
	var b bounds2
	for _, d := range drawings {
		b.addRings(d.o.shape)
		b.addRings(d.o.margin)
	}
	var stations []zones.StationConfig
	if !opt.NoStations {
		stations = cfg.Stations
	}
	for _, s := range stations {
		b.add(v.project(s.At.Vec()))
	}
	for _, l := range opt.Lines {
		for _, q := range l.Points {
			b.add(v.project(q))
		}
	}
	for _, m := range opt.Points {
		b.add(v.project(m.At))
	}
	if v == Elevation {
		b.add(r2.Vec{X: b.lo.X, Y: 0}) // show the floor
	}
	if b.empty() {
		b.add(r2.Vec{})
	}
	pad := math.Max(0.1, 0.04*math.Max(b.hi.X-b.lo.X, b.hi.Y-b.lo.Y))
	p.X.Min, p.X.Max = b.lo.X-pad, b.hi.X+pad
	p.Y.Min, p.Y.Max = b.lo.Y-pad, b.hi.Y+pad

	step := opt.Grid
	if !(step > 0) {
		step = gridStep(math.Max(cellSpan(cfg, opt.Poses), math.Max(b.hi.X-b.lo.X, b.hi.Y-b.lo.Y)))
	}
	p.X.Tick.Marker = gridTicker{step}
	p.Y.Tick.Marker = gridTicker{step}
	p.Add(&gridLines{step: step})

	// Margins under shapes, larger zones under smaller ones.
	sort.SliceStable(drawings, func(i, j int) bool { return drawings[i].area > drawings[j].area })
	for _, d := range drawings {
		if len(d.o.margin) == 0 {
			continue
		}
		poly, err := polygon(d.o.margin)
		if err != nil {
			return nil, nil, err
		}
		poly.Color = withAlpha(d.col, 0.10)
		poly.LineStyle = draw.LineStyle{Color: withAlpha(d.col, 0.9), Width: 0.7, Dashes: []vg.Length{3, 2}}
		p.Add(poly)
	}
	labels := &labelLayer{}
	for _, d := range drawings {
		poly, err := polygon(d.o.shape)
		if err != nil {
			return nil, nil, err
		}
		poly.Color = withAlpha(d.col, 0.30)
		poly.LineStyle = draw.LineStyle{Color: d.col, Width: 1.1}
		p.Add(poly)
		labels.add(d.name, labelPoint(d.o.shape), darker(d.col), d.area)
	}
	if len(stations) > 0 {
		xys := make(plotter.XYs, len(stations))
		for i, s := range stations {
			q := v.project(s.At.Vec())
			xys[i] = plotter.XY{X: q.X, Y: q.Y}
			labels.addBeside(s.Name, q, color.Gray{Y: 70}, math.Inf(1))
		}
		sc, err := plotter.NewScatter(xys)
		if err != nil {
			return nil, nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: color.Gray{Y: 90}, Radius: 2.6, Shape: diamondGlyph{}}
		p.Add(sc)
	}
	for _, l := range opt.Lines {
		if len(l.Points) == 0 {
			continue
		}
		xys := make(plotter.XYs, len(l.Points))
		for i, q := range l.Points {
			pq := v.project(q)
			xys[i] = plotter.XY{X: pq.X, Y: pq.Y}
		}
		line, err := plotter.NewLine(xys)
		if err != nil {
			return nil, nil, err
		}
		col := l.Color
		if col == nil {
			col = color.Black
		}
		line.LineStyle = draw.LineStyle{Color: col, Width: 1}
		if l.Dashed {
			line.LineStyle.Dashes = []vg.Length{4, 2}
		}
		p.Add(line)
		if l.Label != "" {
			labels.addBeside(l.Label, v.project(l.Points[len(l.Points)-1]), col, math.Inf(1))
		}
	}
	for _, m := range opt.Points {
		q := v.project(m.At)
		col := m.Color
		if col == nil {
			col = color.Black
		}
		sc, err := plotter.NewScatter(plotter.XYs{{X: q.X, Y: q.Y}})
		if err != nil {
			return nil, nil, err
		}
		sc.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 3.5, Shape: draw.CrossGlyph{}}
		p.Add(sc)
		if m.Label != "" {
			labels.addBeside(m.Label, q, col, -1) // placed first: nearest their point
		}
	}
	p.Add(labels)
	return p, labels, nil
}

// DrawEqualScale draws plots (views from LayoutView, possibly with added
// plotters) into canvases, first widening their axis ranges so that all of
// them share one scale, equal along both axes.
func DrawEqualScale(plots []*plot.Plot, canvases []draw.Canvas) error {
	if len(plots) != len(canvases) {
		return fmt.Errorf("layout: %d plots for %d canvases", len(plots), len(canvases))
	}
	fitEqualScale(plots, canvases)
	for i, p := range plots {
		p.Draw(canvases[i])
	}
	return nil
}

// ---- zones to drawings ----

type zoneDrawing struct {
	name  string
	col   color.NRGBA
	o     outline
	area  float64 // of the shape's outline in this view, for drawing order
	frame string
}

// palette for fixed zones and the colour of robot-attached zones: from the
// Okabe–Ito colour-blind-safe set.
var (
	palette = []color.NRGBA{
		{0, 114, 178, 255},   // blue
		{0, 158, 115, 255},   // bluish green
		{204, 121, 167, 255}, // reddish purple
		{230, 159, 0, 255},   // orange
		{86, 180, 233, 255},  // sky blue
		{100, 100, 100, 255}, // grey
	}
	attachedColor = color.NRGBA{213, 94, 0, 255} // vermilion
)

func zoneDrawings(cfg *zones.Config, v View, poses map[string]zones.Pose) ([]zoneDrawing, error) {
	out := make([]zoneDrawing, 0, len(cfg.Zones))
	fixed := 0
	for i := range cfg.Zones {
		z := &cfg.Zones[i]
		pose := zones.Pose{Rot: r3.Rotation{Real: 1}}
		col := attachedColor
		if z.Frame != "" {
			if p, ok := poses[z.Frame]; ok {
				pose = p
			} else {
				p, err := cfg.FramePose(z.Frame)
				if err != nil {
					return nil, fmt.Errorf("layout: zone %q: %w", z.Name, err)
				}
				pose = p
			}
		} else {
			col = palette[fixed%len(palette)]
			fixed++
		}
		o, err := zoneOutline(z, pose, v)
		if err != nil {
			return nil, fmt.Errorf("layout: %w", err)
		}
		a := 0.0
		for _, r := range o.shape {
			a += math.Abs(area(r))
		}
		out = append(out, zoneDrawing{name: z.Name, col: col, o: o, area: a, frame: z.Frame})
	}
	return out, nil
}

// cellSpan is the larger horizontal extent of the fixed zones' bounds, to
// pick the same grid for every view.
func cellSpan(cfg *zones.Config, poses map[string]zones.Pose) float64 {
	var b bounds2
	for i := range cfg.Zones {
		o, err := zoneOutline(&cfg.Zones[i], zones.Pose{Rot: r3.Rotation{Real: 1}}, Plan)
		if err == nil && cfg.Zones[i].Frame == "" {
			b.addRings(o.shape)
		}
	}
	if b.empty() {
		return 1
	}
	return math.Max(b.hi.X-b.lo.X, b.hi.Y-b.lo.Y)
}

// gridStep picks a grid spacing giving 6 to 20 lines across span.
func gridStep(span float64) float64 {
	for _, s := range []float64{0.05, 0.1, 0.2, 0.25, 0.5, 1, 2, 5, 10} {
		if span/s <= 20 {
			return s
		}
	}
	return 20
}

type bounds2 struct {
	lo, hi r2.Vec
	n      int
}

func (b *bounds2) add(p r2.Vec) {
	if b.n == 0 {
		b.lo, b.hi = p, p
	}
	b.n++
	b.lo = r2.Vec{X: math.Min(b.lo.X, p.X), Y: math.Min(b.lo.Y, p.Y)}
	b.hi = r2.Vec{X: math.Max(b.hi.X, p.X), Y: math.Max(b.hi.Y, p.Y)}
}

func (b *bounds2) addRings(rings [][]r2.Vec) {
	for _, r := range rings {
		for _, p := range r {
			b.add(p)
		}
	}
}

func (b *bounds2) empty() bool { return b.n == 0 }

func polygon(rings [][]r2.Vec) (*plotter.Polygon, error) {
	xys := make([]plotter.XYer, len(rings))
	for i, r := range rings {
		x := make(plotter.XYs, len(r))
		for j, p := range r {
			x[j] = plotter.XY{X: p.X, Y: p.Y}
		}
		xys[i] = x
	}
	return plotter.NewPolygon(xys...)
}

func withAlpha(c color.NRGBA, a float64) color.NRGBA {
	c.A = uint8(math.Round(255 * a))
	return c
}

func darker(c color.NRGBA) color.NRGBA {
	return color.NRGBA{R: uint8(float64(c.R) * 0.7), G: uint8(float64(c.G) * 0.7), B: uint8(float64(c.B) * 0.7), A: 255}
}

// ---- scale, grid, text ----

func textStyle(size vg.Length, c color.Color) text.Style {
	return text.Style{
		Color:   c,
		Font:    font.From(font.Font{Typeface: "Liberation", Variant: "Sans"}, size),
		XAlign:  draw.XCenter,
		YAlign:  draw.YCenter,
		Handler: plot.DefaultTextHandler,
	}
}

func styleAxes(p *plot.Plot) {
	set := func(s *text.Style, size vg.Length) {
		s.Font = font.From(font.Font{Typeface: "Liberation", Variant: "Sans"}, size)
	}
	set(&p.Title.TextStyle, 10)
	set(&p.X.Label.TextStyle, 9)
	set(&p.Y.Label.TextStyle, 9)
	set(&p.X.Tick.Label, 8)
	set(&p.Y.Tick.Label, 8)
}

// gridTicker puts a tick on every grid line and labels as many as fit
// (every one, every second or every fifth ...).
type gridTicker struct{ step float64 }

func (g gridTicker) Ticks(min, max float64) []plot.Tick {
	if !(g.step > 0) || !(max > min) {
		return nil
	}
	first := math.Ceil(min/g.step - 1e-9)
	last := math.Floor(max/g.step + 1e-9)
	n := last - first + 1
	if n > 400 {
		return nil
	}
	every := 1.0
	for _, e := range []float64{1, 2, 4, 5, 10, 20} {
		every = e
		if n/e <= 14 {
			break
		}
	}
	decimals := 0
	for s := g.step * every; decimals < 3 && math.Abs(s-math.Round(s)) > 1e-9; s *= 10 {
		decimals++
	}
	var ticks []plot.Tick
	for k := first; k <= last; k++ {
		t := plot.Tick{Value: k * g.step}
		if math.Mod(math.Abs(k), every) < 0.5 {
			t.Label = strconv.FormatFloat(t.Value+0, 'f', decimals, 64)
			if t.Label == "-0" || strings.Trim(t.Label, "-0.") == "" {
				t.Label = "0"
			}
		}
		ticks = append(ticks, t)
	}
	return ticks
}

// gridLines draws a line at every grid step, labelled or not.
type gridLines struct{ step float64 }

func (g *gridLines) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	thin := draw.LineStyle{Color: color.Gray{Y: 222}, Width: 0.5}
	axis := draw.LineStyle{Color: color.Gray{Y: 160}, Width: 0.7}
	for _, t := range (gridTicker{g.step}).Ticks(p.X.Min, p.X.Max) {
		sty := thin
		if math.Abs(t.Value) < 1e-9 {
			sty = axis
		}
		x := trX(t.Value)
		c.StrokeLine2(sty, x, c.Min.Y, x, c.Max.Y)
	}
	for _, t := range (gridTicker{g.step}).Ticks(p.Y.Min, p.Y.Max) {
		sty := thin
		if math.Abs(t.Value) < 1e-9 {
			sty = axis
		}
		y := trY(t.Value)
		c.StrokeLine2(sty, c.Min.X, y, c.Max.X, y)
	}
}

// splitPanels divides c into n side-by-side panels with a gap between them.
func splitPanels(c draw.Canvas, n int) []draw.Canvas {
	gap := 6 * vg.Millimeter
	w := (c.Max.X - c.Min.X - gap*vg.Length(n-1)) / vg.Length(n)
	out := make([]draw.Canvas, n)
	for i := range out {
		out[i] = c
		out[i].Min.X = c.Min.X + vg.Length(i)*(w+gap)
		out[i].Max.X = out[i].Min.X + w
	}
	return out
}

type axisRanges struct{ x0, x1, y0, y1 float64 }

func saveRanges(plots []*plot.Plot) []axisRanges {
	out := make([]axisRanges, len(plots))
	for i, p := range plots {
		out[i] = axisRanges{p.X.Min, p.X.Max, p.Y.Min, p.Y.Max}
	}
	return out
}

func restoreRanges(plots []*plot.Plot, r []axisRanges) {
	for i, p := range plots {
		p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = r[i].x0, r[i].x1, r[i].y0, r[i].y1
	}
}

// fitEqualScale widens the plots' axis ranges around their current ones so
// that every plot shows the same number of points per metre along both
// axes, as large as the canvases allow. It returns the smallest vertical
// slack left over in a canvas (what the figure could lose in height).
func fitEqualScale(plots []*plot.Plot, canvases []draw.Canvas) vg.Length {
	want := saveRanges(plots)
	slack := vg.Length(0)
	for iter := 0; iter < 4; iter++ {
		scale := math.Inf(1)
		das := make([]draw.Canvas, len(plots))
		for i, p := range plots {
			das[i] = p.DataCanvas(canvases[i])
			w := float64(das[i].Max.X - das[i].Min.X)
			h := float64(das[i].Max.Y - das[i].Min.Y)
			r := want[i]
			scale = math.Min(scale, math.Min(w/(r.x1-r.x0), h/(r.y1-r.y0)))
		}
		if !(scale > 0) || math.IsInf(scale, 0) {
			return 0
		}
		slack = vg.Length(math.Inf(1))
		for i, p := range plots {
			w := float64(das[i].Max.X - das[i].Min.X)
			h := float64(das[i].Max.Y - das[i].Min.Y)
			r := want[i]
			cx, cy := (r.x0+r.x1)/2, (r.y0+r.y1)/2
			p.X.Min, p.X.Max = cx-w/scale/2, cx+w/scale/2
			p.Y.Min, p.Y.Max = cy-h/scale/2, cy+h/scale/2
			slack = min(slack, vg.Length(h-(r.y1-r.y0)*scale))
		}
	}
	return slack
}

// nullCanvas measures without drawing.
type nullCanvas struct{}

func (nullCanvas) SetLineWidth(vg.Length)                 {}
func (nullCanvas) SetLineDash([]vg.Length, vg.Length)     {}
func (nullCanvas) SetColor(color.Color)                   {}
func (nullCanvas) Rotate(float64)                         {}
func (nullCanvas) Translate(vg.Point)                     {}
func (nullCanvas) Scale(float64, float64)                 {}
func (nullCanvas) Push()                                  {}
func (nullCanvas) Pop()                                   {}
func (nullCanvas) Stroke(vg.Path)                         {}
func (nullCanvas) Fill(vg.Path)                           {}
func (nullCanvas) FillString(font.Face, vg.Point, string) {}
func (nullCanvas) DrawImage(vg.Rectangle, image.Image)    {}

// wrapText breaks lines at spaces so that each fits in width (with room
// for a wider substitute font).
func wrapText(lines []string, sty text.Style, width vg.Length) []string {
	var out []string
	for _, l := range lines {
		words := strings.Fields(l)
		cur := ""
		for _, w := range words {
			try := w
			if cur != "" {
				try = cur + " " + w
			}
			if cur != "" && sty.Width(try)*1.15 > width {
				out = append(out, cur)
				cur = w
				continue
			}
			cur = try
		}
		if cur != "" {
			out = append(out, cur)
		}
	}
	return out
}

// layoutCaption is the text under the views.
func layoutCaption(cfg *zones.Config, plots []*plot.Plot, opt LayoutOptions) []string {
	step := 0.0
	if len(plots) > 0 {
		if g, ok := plots[0].X.Tick.Marker.(gridTicker); ok {
			step = g.step
		}
	}
	same := "along both axes"
	elevation := false
	for _, p := range plots {
		if p.Title.Text == Elevation.String() {
			elevation = true
		}
	}
	if len(plots) > 1 {
		same = "in every view and along both axes"
	}
	lines := []string{
		fmt.Sprintf("Tinted with solid outline: zone shape. Pale with dashed outline: the shape grown by the zone's margin. Grid %s m; 1 m is the same length %s.", strconv.FormatFloat(step, 'f', -1, 64), same),
	}
	side := ""
	if elevation {
		side = " Elevation seen from −y."
	}
	frames := map[string]bool{}
	for _, z := range cfg.Zones {
		if z.Frame != "" {
			frames[z.Frame] = true
		}
	}
	if len(frames) > 0 {
		names := make([]string, 0, len(frames))
		for f := range frames {
			how := "configured pose"
			if _, ok := opt.Poses[f]; ok {
				how = "given pose"
			}
			names = append(names, fmt.Sprintf("%q (%s)", f, how))
		}
		sort.Strings(names)
		lines = append(lines, "Vermilion: zones that move with robot frames "+strings.Join(names, ", ")+". Grey diamonds: stations."+side)
	} else {
		lines = append(lines, "Grey diamonds: stations."+side)
	}
	src := cfg.Source
	if src != "" {
		src = filepath.Base(src)
	}
	digest := cfg.Digest
	if len(digest) > 12 {
		digest = digest[:12]
	}
	lines = append(lines, fmt.Sprintf("Configuration %s (sha256 %s). forereach is %s.", src, digest, safety.Short))
	return lines
}
