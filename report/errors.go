package report

import (
	"errors"
	"fmt"
	"image/color"
	"io"
	"math"
	"sort"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"forereach/forecast"
	"forereach/safety"
)

// ErrorsOptions say how to draw the forecast-error figure.
type ErrorsOptions struct {
	Title string    // default "Forecast error by horizon"
	Width vg.Length // default 24 cm
	// Height default 11 cm.
	Height vg.Length
}

// errorPalette tells models apart in print and for colour-blind readers
// (Okabe–Ito colours); markers differ too.
var errorPalette = []color.RGBA{
	{0, 0, 0, 255}, {230, 159, 0, 255}, {86, 180, 233, 255}, {0, 158, 115, 255},
	{213, 94, 0, 255}, {0, 114, 178, 255}, {204, 121, 167, 255}, {240, 228, 66, 255},
}

// mmTicks labels a logarithmic millimetre axis at 1, 2 and 5 per decade.
type mmTicks struct{}

func (mmTicks) Ticks(min, max float64) []plot.Tick {
	var ts []plot.Tick
	for d := math.Pow(10, math.Floor(math.Log10(min))); d <= max; d *= 10 {
		for _, m := range []float64{1, 2, 5} {
			v := d * m
			if v < min || v > max {
				continue
			}
			ts = append(ts, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'g', -1, 64)})
		}
	}
	if len(ts) < 2 {
		return plot.LogTicks{}.Ticks(min, max)
	}
	return ts
}

// ErrorsFigure draws, side by side, the RMSE and the 95th percentile of the
// 3D forecast error against horizon, one line per model, as SVG.
func ErrorsFigure(w io.Writer, rows []forecast.ErrorStats, opt ErrorsOptions) error {
	if len(rows) == 0 {
		return errors.New("errors figure: no rows")
	}
	if opt.Title == "" {
		opt.Title = "Forecast error by horizon"
	}
	if opt.Width == 0 {
		opt.Width = 24 * vg.Centimeter
	}
	if opt.Height == 0 {
		opt.Height = 11 * vg.Centimeter
	}
	var models []string
	byModel := map[string][]forecast.ErrorStats{}
	for _, r := range rows {
		if _, ok := byModel[r.Model]; !ok {
			models = append(models, r.Model)
		}
		if r.Samples > 0 {
			byModel[r.Model] = append(byModel[r.Model], r)
		}
	}
	panel := func(title string, val func(forecast.ErrorStats) float64) (*plot.Plot, error) {
		p := plot.New()
		p.Title.Text = title
		p.X.Label.Text = "horizon (ms)"
		p.Y.Label.Text = "error (mm, log scale)"
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = mmTicks{}
		p.Add(plotter.NewGrid())
		p.Legend.Top, p.Legend.Left = true, true
		p.Legend.TextStyle.Font.Size = 9
		p.Legend.Padding = vg.Points(1)
		for i, m := range models {
			rs := byModel[m]
			sort.Slice(rs, func(a, b int) bool { return rs[a].HorizonMS < rs[b].HorizonMS })
			xy := make(plotter.XYs, len(rs))
			for j, r := range rs {
				// Log scale: a zero error (an exact forecast) is drawn at
				// 1 µm.
				xy[j].X, xy[j].Y = r.HorizonMS, math.Max(val(r)*1000, 1e-3)
			}
			if len(xy) == 0 {
				continue
			}
			l, pts, err := plotter.NewLinePoints(xy)
			if err != nil {
				return nil, fmt.Errorf("errors figure: %s: %w", m, err)
			}
			c := errorPalette[i%len(errorPalette)]
			l.Color, pts.Color = c, c
			l.Width = vg.Points(1.3)
			pts.Shape = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.BoxGlyph{}, draw.TriangleGlyph{}, draw.PyramidGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}, draw.RingGlyph{}, draw.SquareGlyph{}}[i%8]
			pts.Radius = vg.Points(2.5)
			p.Add(l, pts)
			p.Legend.Add(m, l, pts)
		}
		return p, nil
	}
	left, err := panel("RMSE", func(r forecast.ErrorStats) float64 { return r.RMSE })
	if err != nil {
		return err
	}
	right, err := panel("95th percentile", func(r forecast.ErrorStats) float64 { return r.P95 })
	if err != nil {
		return err
	}
	svg := vgsvg.NewWith(vgsvg.UseWH(opt.Width, opt.Height))
	dc := draw.New(svg)
	dc.SetColor(color.White)
	dc.Fill(dc.Rectangle.Path())
	titleH, capH := 9*vg.Millimeter, 11*vg.Millimeter
	area := draw.Canvas{Canvas: svg, Rectangle: vg.Rectangle{
		Min: vg.Point{X: 0, Y: capH}, Max: vg.Point{X: opt.Width, Y: opt.Height - titleH}}}
	tiles := draw.Tiles{Rows: 1, Cols: 2, PadX: 6 * vg.Millimeter, PadTop: 2 * vg.Millimeter, PadBottom: 2 * vg.Millimeter, PadLeft: 2 * vg.Millimeter, PadRight: 3 * vg.Millimeter}
	cs := plot.Align([][]*plot.Plot{{left, right}}, tiles, area)
	left.Draw(cs[0][0])
	right.Draw(cs[0][1])
	ts := text.Style{Color: color.Black, Font: font.From(plot.DefaultFont, 12), XAlign: draw.XCenter, Handler: plot.DefaultTextHandler}
	dc.FillText(ts, vg.Point{X: opt.Width / 2, Y: opt.Height - titleH/2 - 4}, opt.Title)
	cap := text.Style{Color: color.Gray{Y: 70}, Font: font.From(plot.DefaultFont, 7.5), Handler: plot.DefaultTextHandler}
	dc.FillText(cap, vg.Point{X: 4 * vg.Millimeter, Y: capH - 4*vg.Millimeter},
		"3D error of each forecast against the recorded position (fitted models: cross-validated or on new data).")
	dc.FillText(cap, vg.Point{X: 4 * vg.Millimeter, Y: capH - 8*vg.Millimeter}, "forereach is "+safety.Short+".")
	_, err = svg.WriteTo(w)
	return err
}
