package report

import (
	"image/color"
	"math"
	"sort"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// labelLayer places text labels near their anchor points without letting
// them overlap one another: each label tries its anchor first, then
// positions stepping away from it (below, above, right, left, then
// diagonals, further each round); a label moved off its anchor gets a thin
// leader line to it. Labels with a smaller rank are placed first.
type labelLayer struct {
	items []labelItem
}

type labelItem struct {
	text   string
	at     r2.Vec // data coordinates
	col    color.Color
	rank   float64
	beside bool // next to a marker at the anchor, not on it
	placed vg.Rectangle
}

// add labels a region: the label goes on its anchor when there is room.
func (l *labelLayer) add(text string, at r2.Vec, col color.Color, rank float64) {
	l.items = append(l.items, labelItem{text: text, at: at, col: col, rank: rank})
}

// addBeside labels a marker: the label goes next to the anchor, leaving the
// marker visible.
func (l *labelLayer) addBeside(text string, at r2.Vec, col color.Color, rank float64) {
	l.items = append(l.items, labelItem{text: text, at: at, col: col, rank: rank, beside: true})
}

// Plot implements plot.Plotter.
func (l *labelLayer) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	sty := textStyle(8, color.Black)
	order := make([]int, len(l.items))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return l.items[order[a]].rank < l.items[order[b]].rank })

	var taken []vg.Rectangle
	pad := vg.Length(1.5)
	for _, i := range order {
		it := &l.items[i]
		anchor := vg.Point{X: trX(it.at.X), Y: trY(it.at.Y)}
		// Room for a viewer that lacks the font and substitutes a wider
		// one (SVG text is rendered with the viewer's fonts).
		w := sty.Width(it.text)*1.15 + 2*pad
		h := sty.Height(it.text) + 2*pad
		box := func(ctr vg.Point) vg.Rectangle {
			r := vg.Rectangle{Min: vg.Point{X: ctr.X - w/2, Y: ctr.Y - h/2}, Max: vg.Point{X: ctr.X + w/2, Y: ctr.Y + h/2}}
			// Keep inside the data area.
			if dx := c.Min.X - r.Min.X; dx > 0 {
				r.Min.X, r.Max.X = r.Min.X+dx, r.Max.X+dx
			}
			if dx := r.Max.X - c.Max.X; dx > 0 {
				r.Min.X, r.Max.X = r.Min.X-dx, r.Max.X-dx
			}
			if dy := c.Min.Y - r.Min.Y; dy > 0 {
				r.Min.Y, r.Max.Y = r.Min.Y+dy, r.Max.Y+dy
			}
			if dy := r.Max.Y - c.Max.Y; dy > 0 {
				r.Min.Y, r.Max.Y = r.Min.Y-dy, r.Max.Y-dy
			}
			return r
		}
		free := func(r vg.Rectangle) bool {
			for _, t := range taken {
				if r.Min.X < t.Max.X && t.Min.X < r.Max.X && r.Min.Y < t.Max.Y && t.Min.Y < r.Max.Y {
					return false
				}
			}
			return !it.beside || !inRect(r, anchor)
		}
		var best vg.Rectangle
		if it.beside {
			// Right of the marker, else left of it.
			gap := w/2 + 4
			best = box(vg.Point{X: anchor.X + gap, Y: anchor.Y})
			if !free(best) {
				if r := box(vg.Point{X: anchor.X - gap, Y: anchor.Y}); free(r) {
					best = r
				}
			}
		} else {
			best = box(anchor)
		}
		if !free(best) {
			found := false
			dirs := []vg.Point{{X: 0, Y: -1}, {X: 0, Y: 1}, {X: 1, Y: 0}, {X: -1, Y: 0}, {X: 1, Y: -1}, {X: -1, Y: -1}, {X: 1, Y: 1}, {X: -1, Y: 1}}
			for k := 1; k <= 8 && !found; k++ {
				for _, d := range dirs {
					ctr := vg.Point{X: anchor.X + d.X*vg.Length(k)*(w*0.6), Y: anchor.Y + d.Y*vg.Length(k)*h}
					if r := box(ctr); free(r) {
						best, found = r, true
						break
					}
				}
			}
		}
		it.placed = best
		taken = append(taken, best)
	}

	for _, i := range order {
		it := l.items[i]
		anchor := vg.Point{X: trX(it.at.X), Y: trY(it.at.Y)}
		ctr := vg.Point{X: (it.placed.Min.X + it.placed.Max.X) / 2, Y: (it.placed.Min.Y + it.placed.Max.Y) / 2}
		// Leader from the box edge nearest the anchor, when the label is
		// not on its region's anchor or right beside its marker.
		end := vg.Point{X: clampLen(anchor.X, it.placed.Min.X, it.placed.Max.X), Y: clampLen(anchor.Y, it.placed.Min.Y, it.placed.Max.Y)}
		if dist := math.Hypot(float64(end.X-anchor.X), float64(end.Y-anchor.Y)); !it.beside && dist > 0 || dist > 6 {
			lead := draw.LineStyle{Color: it.col, Width: 0.5}
			c.StrokeLine2(lead, anchor.X, anchor.Y, end.X, end.Y)
			c.DrawGlyph(draw.GlyphStyle{Color: it.col, Radius: 1, Shape: draw.CircleGlyph{}}, anchor)
		}
		c.SetColor(color.NRGBA{255, 255, 255, 200})
		c.Fill(it.placed.Path())
		s := sty
		s.Color = it.col
		c.FillText(s, ctr, it.text)
	}
}

func clampLen(v, lo, hi vg.Length) vg.Length {
	return vg.Length(math.Max(float64(lo), math.Min(float64(hi), float64(v))))
}

// diamondGlyph draws a diamond (a square on its corner).
type diamondGlyph struct{}

func (diamondGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetColor(sty.Color)
	r := sty.Radius
	var p vg.Path
	p.Move(vg.Point{X: pt.X, Y: pt.Y + r})
	p.Line(vg.Point{X: pt.X + r, Y: pt.Y})
	p.Line(vg.Point{X: pt.X, Y: pt.Y - r})
	p.Line(vg.Point{X: pt.X - r, Y: pt.Y})
	p.Close()
	c.Fill(p)
}

func inRect(r vg.Rectangle, p vg.Point) bool {
	return p.X >= r.Min.X && p.X <= r.Max.X && p.Y >= r.Min.Y && p.Y <= r.Max.Y
}
