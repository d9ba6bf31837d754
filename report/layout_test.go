package report

import (
	"bytes"
	"encoding/xml"
	"errors"
	"image/color"
	"io"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r2"
	"gonum.org/v1/gonum/spatial/r3"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"

	"forereach/safety"
	"forereach/zones"
)

func loadCell(t *testing.T, path string) *zones.Config {
	t.Helper()
	cfg, err := zones.Load(path)
	if err != nil {
		t.Fatal(err)
	}
	return cfg
}

// svgTexts parses an SVG document as XML and returns the character data of
// its <text> elements.
func svgTexts(t *testing.T, doc []byte) []string {
	t.Helper()
	dec := xml.NewDecoder(bytes.NewReader(doc))
	var texts []string
	depth := 0
	var cur strings.Builder
	sawSVG := false
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("SVG is not well-formed XML: %v", err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			if tok.Name.Local == "svg" {
				sawSVG = true
			}
			if tok.Name.Local == "text" {
				depth++
				cur.Reset()
			}
		case xml.CharData:
			if depth > 0 {
				cur.Write(tok)
			}
		case xml.EndElement:
			if tok.Name.Local == "text" {
				depth--
				texts = append(texts, cur.String())
			}
		}
	}
	if !sawSVG {
		t.Fatal("no <svg> element")
	}
	return texts
}

func TestLayoutSVG(t *testing.T) {
	for _, path := range []string{"../testdata/pl3-palletiser.yaml", "../testdata/kitting-bench-mm.yaml"} {
		cfg := loadCell(t, path)
		var buf bytes.Buffer
		if err := Layout(&buf, cfg, LayoutOptions{}); err != nil {
			t.Fatalf("%s: %v", path, err)
		}
		texts := svgTexts(t, buf.Bytes())
		has := func(s string) bool {
			for _, x := range texts {
				if strings.Contains(x, s) {
					return true
				}
			}
			return false
		}
		var names []string
		for _, z := range cfg.Zones {
			names = append(names, z.Name)
		}
		for _, s := range cfg.Stations {
			names = append(names, s.Name)
		}
		for _, n := range append(names, "plan (x–y)", "side elevation (x–z)", "x (m)", "y (m)", "z (m)", safety.Short, "cell "+cfg.Cell) {
			if !has(n) {
				t.Errorf("%s: %q not in the SVG text", path, n)
			}
		}
	}
}

// TestLayoutOverlays: lines and markers given by a caller (a review report)
// are drawn with their labels, in the views asked for.
func TestLayoutOverlays(t *testing.T) {
	cfg := loadCell(t, "../testdata/pl3-palletiser.yaml")
	var buf bytes.Buffer
	opt := LayoutOptions{
		Views:  []View{Plan},
		Lines:  []Polyline{{Label: "op1/right", Points: []r3.Vec{{X: 1, Y: 3.9, Z: 1}, {X: 1.6, Y: 3.8, Z: 1.1}, {X: 2.0, Y: 3.7, Z: 1.1}}, Color: color.Black}},
		Points: []Marker{{Label: "near miss 12:04:31", At: r3.Vec{X: 2.0, Y: 3.7, Z: 1.1}, Color: color.NRGBA{200, 0, 0, 255}}},
		Poses:  map[string]zones.Pose{"tool": {Pos: r3.Vec{X: 5.4, Y: 1, Z: 2.4}, Rot: r3.Rotation{Real: 0, Imag: 1}}},
	}
	if err := Layout(&buf, cfg, opt); err != nil {
		t.Fatal(err)
	}
	texts := strings.Join(svgTexts(t, buf.Bytes()), "\n")
	for _, want := range []string{"op1/right", "near miss 12:04:31", `"tool" (given pose)`, "plan (x–y)"} {
		if !strings.Contains(texts, want) {
			t.Errorf("%q not in the SVG text", want)
		}
	}
	if strings.Contains(texts, "side elevation") {
		t.Error("elevation drawn though only the plan was asked for")
	}
}

// TestLabelsDoNotOverlap: in both views of both example cells every label
// found a place of its own.
func TestLabelsDoNotOverlap(t *testing.T) {
	for _, path := range []string{"../testdata/pl3-palletiser.yaml", "../testdata/kitting-bench-mm.yaml"} {
		cfg := loadCell(t, path)
		for _, v := range []View{Plan, Elevation} {
			p, labels, err := layoutView(cfg, v, LayoutOptions{})
			if err != nil {
				t.Fatal(err)
			}
			c := vgsvg.New(15*vg.Centimeter, 12*vg.Centimeter)
			if err := DrawEqualScale([]*plot.Plot{p}, []draw.Canvas{draw.New(c)}); err != nil {
				t.Fatal(err)
			}
			if len(labels.items) != len(cfg.Zones)+len(cfg.Stations) {
				t.Fatalf("%s %v: label layer missing or incomplete", path, v)
			}
			for i, a := range labels.items {
				for _, b := range labels.items[i+1:] {
					ra, rb := a.placed, b.placed
					if ra.Min.X < rb.Max.X && rb.Min.X < ra.Max.X && ra.Min.Y < rb.Max.Y && rb.Min.Y < ra.Max.Y {
						t.Errorf("%s %v: labels %q and %q overlap", path, v, a.text, b.text)
					}
				}
			}
		}
	}
}

// TestEqualScale: after fitting, one metre is the same length along both
// axes of every view.
func TestEqualScale(t *testing.T) {
	cfg := loadCell(t, "../testdata/pl3-palletiser.yaml")
	var plots []*plot.Plot
	for _, v := range []View{Plan, Elevation} {
		p, err := LayoutView(cfg, v, LayoutOptions{})
		if err != nil {
			t.Fatal(err)
		}
		plots = append(plots, p)
	}
	c := draw.New(vgsvg.New(30*vg.Centimeter, 14*vg.Centimeter))
	cs := splitPanels(c, 2)
	fitEqualScale(plots, cs)
	var scales []float64
	for i, p := range plots {
		da := p.DataCanvas(cs[i])
		scales = append(scales, float64(da.Max.X-da.Min.X)/(p.X.Max-p.X.Min), float64(da.Max.Y-da.Min.Y)/(p.Y.Max-p.Y.Min))
	}
	for _, s := range scales[1:] {
		if math.Abs(s/scales[0]-1) > 1e-6 {
			t.Errorf("scales differ: %v", scales)
		}
	}
}

func zoneCfg(margin float64, set func(z *zones.ZoneConfig)) *zones.ZoneConfig {
	z := &zones.ZoneConfig{Name: "z", Margin: zones.Length(margin)}
	set(z)
	return z
}

var identity = zones.Pose{Rot: r3.Rotation{Real: 1}}

func ringArea(rings [][]r2.Vec) float64 {
	a := 0.0
	for _, r := range rings {
		a += math.Abs(area(r))
	}
	return a
}

// Areas of projected outlines against closed forms. Round parts are
// inscribed polygons of arcSteps sides per turn, so their areas fall short
// of the disc's by at most the factor sin(2π/n)·n/(2π) ≈ 1 − 1.0e-4
// (n = 256); tolerances below allow for that.
func TestOutlineAreas(t *testing.T) {
	const arcRel = 1.1e-4
	pt := func(x, y, z float64) zones.Point {
		return zones.Point{zones.Length(x), zones.Length(y), zones.Length(z)}
	}
	type cse struct {
		name        string
		z           *zones.ZoneConfig
		pose        zones.Pose
		view        View
		shape, marg float64 // expected areas
		tolS, tolM  float64 // relative tolerances
	}
	r, m, L := 0.3, 0.1, 1.2
	cases := []cse{
		// Box 2 × 1 (× 0.5): plan is the rectangle; the margin adds a
		// band of width m with quarter discs at the corners:
		// (2+2m)(1+2m) − (4−π)m².
		{"box plan", zoneCfg(m, func(z *zones.ZoneConfig) { z.Box = &zones.BoxConfig{Min: pt(0, 0, 0), Max: pt(2, 1, 0.5)} }), identity, Plan,
			2, (2+2*m)*(1+2*m) - (4-math.Pi)*m*m, 1e-12, arcRel},
		{"box elevation", zoneCfg(m, func(z *zones.ZoneConfig) { z.Box = &zones.BoxConfig{Min: pt(0, 0, 0), Max: pt(2, 1, 0.5)} }), identity, Elevation,
			1, (2+2*m)*(0.5+2*m) - (4-math.Pi)*m*m, 1e-12, arcRel},
		// Oriented box 1.25 × 0.85, yawed: the plan area is unchanged.
		{"obox plan", zoneCfg(0, func(z *zones.ZoneConfig) {
			z.OBox = &zones.OBoxConfig{Center: pt(5, 3, 0.6), Size: pt(1.25, 0.85, 1.2), RPY: &[3]float64{0, 0, -25}}
		}), identity, Plan, 1.25 * 0.85, 0, 1e-12, 0},
		// Sphere: a disc of r, the margin a disc of r + m.
		{"sphere", zoneCfg(m, func(z *zones.ZoneConfig) {
			z.Sphere = &zones.SphereConfig{Center: pt(1, 2, 3), Radius: zones.Length(r)}
		}), identity, Elevation,
			math.Pi * r * r, math.Pi * (r + m) * (r + m), arcRel, arcRel},
		// Horizontal capsule of axis length L: a stadium 2rL + πr².
		{"capsule plan", zoneCfg(m, func(z *zones.ZoneConfig) {
			z.Capsule = &zones.CapsuleConfig{A: pt(0, 0, 1), B: pt(L, 0, 1), Radius: zones.Length(r)}
		}), identity, Plan, 2*r*L + math.Pi*r*r, 2*(r+m)*L + math.Pi*(r+m)*(r+m), arcRel, arcRel},
		// Upright cylinder: a disc from above, a 2r × L rectangle from the
		// side (rounded by the margin).
		{"cylinder plan", zoneCfg(m, func(z *zones.ZoneConfig) {
			z.Cylinder = &zones.CylinderConfig{A: pt(0, 0, 0), B: pt(0, 0, L), Radius: zones.Length(r)}
		}), identity, Plan, math.Pi * r * r, math.Pi * (r + m) * (r + m), arcRel, arcRel},
		{"cylinder elevation", zoneCfg(m, func(z *zones.ZoneConfig) {
			z.Cylinder = &zones.CylinderConfig{A: pt(0, 0, 0), B: pt(0, 0, L), Radius: zones.Length(r)}
		}), identity, Elevation, 2 * r * L, (2*r+2*m)*(L+2*m) - (4-math.Pi)*m*m, 1e-9, arcRel},
		// Cylinder tilted 45° in the x–z plane, seen from above: the
		// shadow is an ellipse of semi-axes r and r·cos45° swept along a
		// segment of length L·sin45°, area πr²cos45° + 2r·L·sin45° (area
		// of the Minkowski sum of a convex set and a segment: the set's
		// area plus the segment length times the set's width across it;
		// standard convex geometry, from memory).
		{"tilted cylinder plan", zoneCfg(0, func(z *zones.ZoneConfig) {
			s := L / math.Sqrt2
			z.Cylinder = &zones.CylinderConfig{A: pt(0, 0, 0), B: pt(s, 0, s), Radius: zones.Length(r)}
		}), identity, Plan, math.Pi*r*r/math.Sqrt2 + 2*r*L/math.Sqrt2, 0, arcRel, 0},
	}
	for _, c := range cases {
		o, err := zoneOutline(c.z, c.pose, c.view)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if a := ringArea(o.shape); math.Abs(a-c.shape) > c.tolS*c.shape {
			t.Errorf("%s: shape area %.9g, want %.9g", c.name, a, c.shape)
		}
		if c.marg == 0 {
			if o.margin != nil {
				t.Errorf("%s: margin outline drawn for a zero margin", c.name)
			}
			continue
		}
		if a := ringArea(o.margin); math.Abs(a-c.marg) > c.tolM*c.marg {
			t.Errorf("%s: margin area %.9g, want %.9g", c.name, a, c.marg)
		}
	}
}

// The robot envelope of the demo cell: an L-shaped (non-convex) footprint.
var lFootprint = [][2]zones.Length{{3.0, 0.3}, {6.2, 0.3}, {6.2, 4.6}, {1.7, 4.6}, {1.7, 2.0}, {3.0, 2.0}}

func lPrism(margin float64) *zones.ZoneConfig {
	return zoneCfg(margin, func(z *zones.ZoneConfig) {
		z.Prism = &zones.PrismConfig{Footprint: lFootprint, ZMin: 0, ZMax: 3}
	})
}

// TestNonConvexPrismMargin: the plan of an upright L-shaped prism is its
// footprint exactly, and its margin outline is the offset curve: every
// vertex at distance m from the footprint (to within one grid step), and
// the enclosed area A + P·m + 5·(π/4)·m² − m² (five convex corners add a
// quarter disc each, the reflex corner counts the m × m square of the two
// edge bands twice).
func TestNonConvexPrismMargin(t *testing.T) {
	const m = 0.2
	o, err := zoneOutline(lPrism(m), identity, Plan)
	if err != nil {
		t.Fatal(err)
	}
	if len(o.shape) != 1 || len(o.shape[0]) != len(lFootprint) {
		t.Fatalf("plan outline %v, want the footprint", o.shape)
	}
	fp := make([]r2.Vec, len(lFootprint))
	for i, p := range lFootprint {
		fp[i] = r2.Vec{X: float64(p[0]), Y: float64(p[1])}
	}
	const A, P = 3.2*4.3 + 1.3*2.6, 2 * (4.5 + 4.3)
	if a := ringArea(o.shape); math.Abs(a-A) > 1e-12 {
		t.Errorf("footprint area %g, want %g", a, A)
	}
	if len(o.margin) != 1 {
		t.Fatalf("margin outline has %d rings, want 1", len(o.margin))
	}
	h := 4.5 / gridCells * 1.01 // the grid step
	for _, q := range o.margin[0] {
		if d := polygonSD(fp, q); math.Abs(d-m) > h {
			t.Fatalf("margin vertex %v at distance %g from the footprint, want %g ± %g", q, d, m, h)
		}
	}
	want := A + P*m + 5*math.Pi/4*m*m - m*m
	if a := ringArea(o.margin); math.Abs(a-want) > 2e-4*want {
		t.Errorf("margin area %.6g, want %.6g", a, want)
	}
	// Seen from the side the prism is the rectangle of its x extent and
	// heights.
	e, err := zoneOutline(lPrism(m), identity, Elevation)
	if err != nil {
		t.Fatal(err)
	}
	if a := ringArea(e.shape); math.Abs(a-4.5*3) > 1e-12 {
		t.Errorf("elevation area %g, want %g", a, 4.5*3.0)
	}
}

// TestTiltedPrism: an L-prism turned 90° about x stands its footprint up in
// the x–z plane: from the side it shows the L itself, from above the
// rectangle of its x extent and its height (drawn from the union of
// projected faces by marching squares, so to grid accuracy).
func TestTiltedPrism(t *testing.T) {
	pose := zones.Pose{Rot: zones.RotationRPY(90, 0, 0)}
	side, err := zoneOutline(lPrism(0), pose, Elevation)
	if err != nil {
		t.Fatal(err)
	}
	const A = 3.2*4.3 + 1.3*2.6
	if a := ringArea(side.shape); math.Abs(a-A) > 5e-3*A {
		t.Errorf("tilted prism elevation area %g, want %g (the footprint)", a, A)
	}
	top, err := zoneOutline(lPrism(0), pose, Plan)
	if err != nil {
		t.Fatal(err)
	}
	if a := ringArea(top.shape); math.Abs(a-4.5*3) > 5e-3*4.5*3 {
		t.Errorf("tilted prism plan area %g, want %g", a, 4.5*3.0)
	}
}

func TestConvexHull(t *testing.T) {
	pts := []r2.Vec{{X: 0, Y: 0}, {X: 1, Y: 0}, {X: 1, Y: 1}, {X: 0, Y: 1}, {X: 0.5, Y: 0.5}, {X: 0.5, Y: 0}, {X: 1, Y: 1}}
	h := convexHull(pts)
	if len(h) != 4 || area(h) != 1 {
		t.Errorf("hull %v (area %g), want the unit square counter-clockwise", h, area(h))
	}
	if got := convexHull([]r2.Vec{{X: 1, Y: 1}, {X: 1, Y: 1}}); len(got) != 1 {
		t.Errorf("hull of a repeated point: %v", got)
	}
}

func TestGrid(t *testing.T) {
	for _, c := range []struct{ span, step float64 }{{6.6, 0.5}, {1.6, 0.1}, {0.5, 0.05}, {30, 2}, {3.9, 0.2}} {
		if got := gridStep(c.span); got != c.step {
			t.Errorf("gridStep(%g) = %g, want %g", c.span, got, c.step)
		}
	}
	ticks := gridTicker{0.5}.Ticks(-0.2, 2.1)
	var labels []string
	for _, tk := range ticks {
		labels = append(labels, tk.Label)
	}
	if got := strings.Join(labels, ","); got != "0,0.5,1.0,1.5,2.0" {
		t.Errorf("tick labels %q", got)
	}
	ticks = gridTicker{0.1}.Ticks(0, 3)
	labelled := 0
	for _, tk := range ticks {
		if tk.Label != "" {
			labelled++
		}
	}
	if len(ticks) != 31 || labelled > 16 || labelled < 6 {
		t.Errorf("%d ticks, %d labelled", len(ticks), labelled)
	}
}

func TestMarchingSquaresCircle(t *testing.T) {
	// A disc of radius 1 from its exact distance field: every vertex
	// within the grid step of the circle.
	const n = 101
	h := 3.0 / (n - 1)
	at := func(i, j int) r2.Vec { return r2.Vec{X: -1.5 + float64(i)*h, Y: -1.5 + float64(j)*h} }
	f := make([]float64, n*n)
	for j := 0; j < n; j++ {
		for i := 0; i < n; i++ {
			f[j*n+i] = r2.Norm(at(i, j)) - 1
		}
	}
	rings := marchingSquares(f, n, n, at)
	if len(rings) != 1 {
		t.Fatalf("%d rings, want 1", len(rings))
	}
	for _, p := range rings[0] {
		if d := math.Abs(r2.Norm(p) - 1); d > h {
			t.Fatalf("vertex %v is %g off the circle", p, d)
		}
	}
	if a := math.Abs(area(rings[0])); math.Abs(a-math.Pi) > 0.01 {
		t.Errorf("area %g, want π", a)
	}
}
