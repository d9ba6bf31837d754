package report

import (
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"strconv"

	xfont "golang.org/x/image/font"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"forereach/review"
	"forereach/safety"
)

// MarginSweepFigure draws the margin sweep: per zone with entries, the
// detection rate against the margin and against false alarms per hour;
// per zone with warnings, false alarms per hour against the margin. The
// recommended margins are marked.
func MarginSweepFigure(w io.Writer, res *review.MarginResult) error {
	if len(res.Zones) == 0 {
		return errors.New("margin figure: no zones")
	}
	det := plot.New()
	fa := plot.New()
	roc := plot.New()
	for _, p := range []*plot.Plot{det, fa, roc} {
		styleAxes(p)
		p.Add(plotter.NewGrid())
		p.Legend.Top, p.Legend.Left = false, false
		p.Legend.TextStyle.Font = font.From(font.Font{Typeface: "Liberation", Variant: "Sans"}, 7)
		p.Legend.Padding = vg.Points(1)
	}
	det.Title.Text = "Detection (entries warned " + strconv.FormatFloat(res.Horizon*1000, 'f', 0, 64) + " ms ahead)"
	det.X.Label.Text, det.Y.Label.Text = "margin (mm)", "detection (%)"
	det.Y.Min, det.Y.Max = 0, 100
	det.Legend.Top = false
	fa.Title.Text = "False alarms"
	fa.X.Label.Text, fa.Y.Label.Text = "margin (mm)", "false alarms per hour"
	fa.Legend.Left = true
	fa.Legend.Top = true
	roc.Title.Text = "Detection against false alarms"
	roc.X.Label.Text, roc.Y.Label.Text = "false alarms per hour", "detection (%)"
	roc.Y.Min, roc.Y.Max = 0, 100
	det.Add(hline{res.Target * 100, draw.LineStyle{Color: colMissed, Width: 0.7, Dashes: []vg.Length{3, 2}}})
	roc.Add(hline{res.Target * 100, draw.LineStyle{Color: colMissed, Width: 0.7, Dashes: []vg.Length{3, 2}}})
	n := 0
	for _, z := range res.Zones {
		anyWarn := false
		for _, sp := range z.Sweep {
			anyWarn = anyWarn || sp.Warnings > 0
		}
		if z.Entries == 0 && !anyWarn {
			continue
		}
		col := palette[n%len(palette)]
		shape := []draw.GlyphDrawer{draw.CircleGlyph{}, draw.BoxGlyph{}, draw.TriangleGlyph{}, draw.PyramidGlyph{}, draw.RingGlyph{}, draw.SquareGlyph{}}[n%6]
		n++
		var dxy, fxy, rxy plotter.XYs
		for _, sp := range z.Sweep {
			fxy = append(fxy, plotter.XY{X: sp.Margin * 1000, Y: sp.FalseAlarmsPerHour()})
			if z.Entries > 0 {
				dxy = append(dxy, plotter.XY{X: sp.Margin * 1000, Y: sp.Detection() * 100})
				rxy = append(rxy, plotter.XY{X: sp.FalseAlarmsPerHour(), Y: sp.Detection() * 100})
			}
		}
		add := func(p *plot.Plot, xy plotter.XYs, legend bool) error {
			if len(xy) == 0 || math.IsNaN(xy[0].X) || math.IsNaN(xy[0].Y) {
				return nil
			}
			l, err := plotter.NewLine(xy)
			if err != nil {
				return err
			}
			l.Color, l.Width = col, 1.2
			p.Add(l)
			if legend {
				p.Legend.Add(z.Name, l)
			}
			return nil
		}
		if err := add(det, dxy, true); err != nil {
			return err
		}
		if err := add(fa, fxy, true); err != nil {
			return err
		}
		if err := add(roc, rxy, false); err != nil {
			return err
		}
		if z.AtRec != nil {
			mark := func(p *plot.Plot, x, y float64) error {
				if math.IsNaN(x) || math.IsNaN(y) {
					return nil
				}
				s, err := plotter.NewScatter(plotter.XYs{{X: x, Y: y}})
				if err != nil {
					return err
				}
				s.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 3, Shape: shape}
				p.Add(s)
				return nil
			}
			r := z.AtRec
			if z.Entries > 0 {
				if err := mark(det, r.Margin*1000, r.Detection()*100); err != nil {
					return err
				}
				if err := mark(roc, r.FalseAlarmsPerHour(), r.Detection()*100); err != nil {
					return err
				}
			}
			if err := mark(fa, r.Margin*1000, r.FalseAlarmsPerHour()); err != nil {
				return err
			}
		}
	}
	width, height := 34*vg.Centimeter, 11*vg.Centimeter
	svg := vgsvg.NewWith(vgsvg.UseWH(width, height))
	dc := draw.New(svg)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	titleH, capH := 9*vg.Millimeter, 10*vg.Millimeter
	area := draw.Canvas{Canvas: svg, Rectangle: vg.Rectangle{
		Min: vg.Point{X: 0, Y: capH}, Max: vg.Point{X: width, Y: height - titleH}}}
	tiles := draw.Tiles{Rows: 1, Cols: 3, PadX: 6 * vg.Millimeter, PadTop: 2 * vg.Millimeter, PadBottom: 2 * vg.Millimeter, PadLeft: 2 * vg.Millimeter, PadRight: 3 * vg.Millimeter}
	cs := plot.Align([][]*plot.Plot{{det, fa, roc}}, tiles, area)
	det.Draw(cs[0][0])
	fa.Draw(cs[0][1])
	roc.Draw(cs[0][2])
	ts := textStyle(12, color.Black)
	ts.Font.Weight = xfont.WeightBold
	dc.FillText(ts, vg.Point{X: width / 2, Y: height - titleH/2 - 4}, "Zone margin sweep, cell "+res.Cell)
	cap := textStyle(7.5, color.Gray{Y: 70})
	cap.XAlign, cap.YAlign = draw.XLeft, draw.YBottom
	dc.FillText(cap, vg.Point{X: 4 * vg.Millimeter, Y: capH - 4*vg.Millimeter}, fmt.Sprintf(
		"Markers: recommended margins (target %s %%, dashed). Horizon %s ms = stopping time + system latency. %d recording(s), %s of samples.",
		strconv.FormatFloat(res.Target*100, 'f', -1, 64), strconv.FormatFloat(res.Horizon*1000, 'f', 0, 64), len(res.Recordings), review.FormatDuration(res.Duration)))
	dc.FillText(cap, vg.Point{X: 4 * vg.Millimeter, Y: capH - 8*vg.Millimeter}, "forereach is "+safety.Short+".")
	_, err := svg.WriteTo(w)
	return err
}
