package zones

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"
)

var sinkF float64

// BenchmarkSignedDistance measures one point query per shape kind, on
// points spread over the shape's bounds grown by 0.4 m.
func BenchmarkSignedDistance(b *testing.B) {
	for _, ns := range testShapes() {
		rng := rand.New(rand.NewPCG(51, 52))
		pts := make([]r3.Vec, 1024)
		for i := range pts {
			pts[i] = randIn(rng, ns.s.Bounds(), 0.4)
		}
		b.Run(ns.name, func(b *testing.B) {
			b.ReportAllocs()
			var s float64
			for i := 0; b.Loop(); i++ {
				s += ns.s.SignedDistance(pts[i&1023])
			}
			sinkF = s
		})
	}
}

// BenchmarkZoneSetSweep is the per-sample path query of the advisory engine:
// a 25-point forecast against the 10 zones of the demo cell (three attached
// to robot frames; one touching, some near, most far), with the cutoff the
// engine would use (0.5 m) and without one.
func BenchmarkZoneSetSweep(b *testing.B) {
	zs := must(NewZoneSet(demoCell()))
	path := demoPath()
	for _, bc := range []struct {
		name   string
		cutoff float64
	}{{"cutoff=0.5m", 0.5}, {"cutoff=inf", math.Inf(1)}} {
		b.Run(bc.name, func(b *testing.B) {
			out := zs.Sweep(path, bc.cutoff, nil)
			b.ReportAllocs()
			for b.Loop() {
				out = zs.Sweep(path, bc.cutoff, out)
			}
		})
	}
}

// BenchmarkZoneSweep is the path query of one zone per shape kind with
// random 25-point paths near the shape.
func BenchmarkZoneSweep(b *testing.B) {
	for _, ns := range testShapes() {
		rng := rand.New(rand.NewPCG(53, 54))
		paths := make([]PathView, 64)
		for i := range paths {
			paths[i] = randomPath(rng, ns.s.Bounds(), 25)
		}
		z := &Zone{Name: ns.name, Shape: ns.s, Margin: 0.05}
		b.Run(ns.name, func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; b.Loop(); i++ {
				sinkF += z.Sweep(paths[i&63], math.Inf(1)).MinSep
			}
		})
	}
}

// BenchmarkZoneSweepAlongWall is the hard case of the path query: a
// 25-point path running parallel to a wall, inside the zone and just
// outside its margin, where the separation is flat along the whole path.
func BenchmarkZoneSweepAlongWall(b *testing.B) {
	shapes := []namedShape{
		{"box", must(NewBox(r3.Vec{}, r3.Vec{X: 2, Y: 1, Z: 1}))},
		{"prism-L", must(NewPrism(lShape, 0, 1))},
	}
	for _, ns := range shapes {
		for _, y := range []float64{0.03, -0.07} {
			path := PathView{T: make([]float64, 25), P: make([]r3.Vec, 25), R: make([]float64, 25)}
			for k := range path.T {
				s := float64(k) / 24
				path.T[k], path.P[k], path.R[k] = 0.02*float64(k), r3.Vec{X: 0.1 + 1.8*s, Y: y, Z: 0.5}, 0.01
			}
			z := &Zone{Name: ns.name, Shape: ns.s, Margin: 0.05}
			b.Run(fmt.Sprintf("%s/y=%g", ns.name, y), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					sinkF += z.Sweep(path, math.Inf(1)).MinSep
				}
			})
		}
	}
}
