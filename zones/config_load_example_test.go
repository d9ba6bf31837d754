package zones_test

import (
	"fmt"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// Every problem in a file is reported at once, each with its position and
// the path of the offending key.
func ExampleParse_errors() {
	_, err := zones.Parse([]byte(`cell: pl3-palletiser
zones:
  - name: press
    margin: -0.1
    sphere: {center: [1.0, 2.0, 0.5], radius: -0.3}
  - name: press
    box: {min: [0, 0, 0], max: [1, 1, 1], colour: red}
forecast:
  horizon: 0.5
`), "cell.yaml")
	fmt.Println(err)
	// Output:
	// cell.yaml:4:13: zones[0] "press": margin: must be >= 0, got -0.1 m
	// cell.yaml:5:47: zones[0] "press": sphere.radius: must be > 0, got -0.3
	// cell.yaml:6:11: zones[1] "press": name: duplicate zone name (also zones[0], line 3)
	// cell.yaml:7:43: zones[1] "press": box.colour: unknown key (known keys: min, max)
	// cell.yaml:9:12: forecast.horizon: duration "0.5" has no unit (write e.g. "350ms" or "1.5s")
}

// A file in millimetres loads to metres; BuildZones turns it into the zone
// set the advisory engine queries.
func ExampleConfig_BuildZones() {
	cfg, err := zones.Parse([]byte(`cell: kitting-bench
units: mm
zones:
  - name: kit-tray
    margin: 50
    box: {min: [100, 300, 900], max: [500, 650, 960]}
`), "kitting-bench.yaml")
	if err != nil {
		fmt.Println(err)
		return
	}
	zs, err := cfg.BuildZones()
	if err != nil {
		fmt.Println(err)
		return
	}
	z := zs.Zone(0)
	hand := r3.Vec{X: 0.3, Y: 0.5, Z: 1.0} // 40 mm above the tray
	fmt.Printf("%s: %s, %.4f m³, margin %.2f m\n", z.Name, z.Shape.Kind(), z.Shape.Volume(), z.Margin)
	fmt.Printf("hand %.3f m from the tray, within the margin: %v\n", z.SignedDistance(hand), z.Contains(hand))
	// Output:
	// kit-tray: box, 0.0084 m³, margin 0.05 m
	// hand 0.040 m from the tray, within the margin: true
}
