package sim

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// Bad scenarios give errors naming file:line:column, the field and what is
// wrong; every problem is reported, not only the first.
func TestLoadErrors(t *testing.T) {
	const op = "operators:\n  - name: op1\n    at: [0, 0]\n    timeline:\n"
	cases := []struct {
		name string
		src  string
		want []string
	}{
		{"unknown top key", "scenarios: x\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:1:1: scenarios: unknown key (want one of cell, duration, fitts, operators, scenario, seed, sensor, stations, tail, tremor, units)`}},
		{"duration without unit", "duration: 10\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:1:11: duration: a duration needs a unit: write e.g. 10s or 10ms`}},
		{"negative noise", "sensor:\n  noise: -0.1\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:2:10: sensor.noise: must be in [0, 1] m, got -0.1 m`}},
		{"rate NaN", "sensor:\n  rate: .nan\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:2:9: sensor.rate: want a finite number, got ".nan"`}},
		{"unknown station", op + "      - reach: {hand: right, to: infeed}\n",
			[]string{`test.yaml:5:34: operators[0] "op1".timeline[0].reach.to: unknown station "infeed" (no stations are defined (give -c CELL.yaml, or a stations section))`}},
		{"unknown hand", op + "      - reach: {hand: third, to: rest}\n",
			[]string{`test.yaml:5:23: operators[0] "op1".timeline[0].reach.hand: operator "op1" has no hand "third" (hands: left, right)`}},
		{"two primitives", op + "      - pause: 1s\n        reach: {hand: right, to: rest}\n",
			[]string{`test.yaml:5:9: operators[0] "op1".timeline[0]: want exactly one of walk, reach, sweep, pick_place, pause; got 2`}},
		{"range reversed", op + "      - pause: [2s, 1s]\n",
			[]string{`test.yaml:5:16: operators[0] "op1".timeline[0].pause: range [low, high] has low > high`}},
		{"duration and width", op + "      - reach: {hand: right, to: rest, duration: 1s, width: 0.02}\n",
			[]string{`operators[0] "op1".timeline[0].reach.width: give duration or width (Fitts' law), not both`}},
		{"walk to rest", op + "      - walk: {to: rest}\n",
			[]string{`test.yaml:5:20: operators[0] "op1".timeline[0].walk.to: "rest" is a hand's position`}},
		{"point of two", op + "      - reach: {hand: right, to: [1, 2]}\n",
			[]string{`test.yaml:5:34: operators[0] "op1".timeline[0].reach.to: want a point [x, y, z], got a list`}},
		{"bad operator name", "operators:\n  - name: op/1\n    at: [0, 0]\n    timeline:\n      - pause: 1s\n",
			[]string{`test.yaml:2:5: operators[0] "op/1".name: "op/1": an operator's name is letters, digits`}},
		{"no operators", "scenario: x\n",
			[]string{`test.yaml:1:1: operators: missing: a scenario needs at least one operator`}},
		{"parallel walk", op + "      - pause: 1s\n      - parallel: true\n        walk: {to: [1, 1]}\n",
			[]string{`test.yaml:6:9: operators[0] "op1".timeline[1].parallel: a walk moves the whole operator and cannot run in parallel`}},
		{"same hand in parallel", op + "      - reach: {hand: right, to: rest, duration: 1s}\n      - parallel: true\n        reach: {hand: right, to: rest, duration: 1s}\n",
			[]string{`operators[0] "op1".timeline[1].hand: hand "right" is already moved by the step it runs in parallel with`}},
		{"loss of unknown track", "sensor:\n  losses:\n    - {track: op9, at: 1s, duration: 1s}\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:3:7: sensor.losses[0].track: no track or operator "op9" in the scenario`}},
		{"key twice", "seed: 1\nseed: 2\n" + op + "      - pause: 1s\n",
			[]string{`test.yaml:2:1: seed: given twice`}},
		{"yaml syntax", "operators: [\n",
			[]string{`test.yaml:1: YAML: did not find expected node content`}},
		{"two documents", op + "      - pause: 1s\n---\nseed: 2\n",
			[]string{`a scenario is one YAML document; found a second`}},
		{"not a mapping", "- 1\n- 2\n",
			[]string{`test.yaml:1:1: a scenario is a mapping (scenario:, operators:, ...), got a list`}},
		{"empty", "", []string{`test.yaml:1: empty file: not a scenario`}},
		{"several problems", "seed: -1\nsensor:\n  rate: 0\n" + op + "      - pause: -1s\n",
			[]string{`test.yaml:1:7: seed: must be >= 0`, `test.yaml:3:9: sensor.rate: must be in [1, 10000], got 0`,
				`test.yaml:8:16: operators[0] "op1".timeline[0].pause: must be in [0, 86400] s, got -1 s`}},
		{"too many moves", op + "      - pick_place: {hand: right, from: rest, to: rest, cycles: 250000, duration: 1s}\n      - pick_place: {hand: right, from: rest, to: rest, cycles: 250000, duration: 1s}\n",
			[]string{`operators: the timelines add up to 2000000 movements, more than 1000000`}},
		{"aliases", "a: &a [1, 2]\n", []string{`test.yaml:1:1: a: unknown key`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			sc, err := Load(strings.NewReader(c.src), "test.yaml", nil)
			if err == nil {
				t.Fatalf("no error; scenario %+v", sc)
			}
			if sc != nil {
				t.Errorf("a scenario returned with the error")
			}
			var ce *zones.ConfigErrors
			if !errors.As(err, &ce) {
				t.Errorf("error %T, want *zones.ConfigErrors", err)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error\n%v\ndoes not contain\n%s", err, w)
				}
			}
		})
	}
}

// The scenario's cell must match the cell configuration it runs in.
func TestLoadCellMismatch(t *testing.T) {
	cell := &zones.Config{Cell: "pl2-wrapper"}
	_, err := Load(strings.NewReader("cell: pl3-palletiser\noperators:\n  - name: a\n    at: [0, 0]\n    timeline:\n      - pause: 1s\n"), "s.yaml", cell)
	if err == nil || !strings.Contains(err.Error(), `s.yaml:1:7: cell: the scenario is for cell "pl3-palletiser", the cell configuration is "pl2-wrapper"`) {
		t.Errorf("error %v", err)
	}
}

// Units: a scenario in millimetres gives the same run as in metres.
func TestLoadUnits(t *testing.T) {
	m := load(t, `
tremor: {rms: 0}
stations: [{name: s, at: [0.5, 0.2, 1.0]}]
operators:
  - name: op1
    at: [0.1, 0]
    timeline:
      - walk: {to: [1.1, 0], speed: 1.0, standoff: 0.2}
      - reach: {hand: right, to: s, spread: 0.01, lift: 0.05, width: 0.02}
`)
	mm := load(t, `
units: mm
tremor: {rms: 0.0}
stations: [{name: s, at: [500, 200, 1000]}]
operators:
  - name: op1
    at: [100, 0]
    timeline:
      - walk: {to: [1100, 0], speed: 1000, standoff: 200}
      - reach: {hand: right, to: s, spread: 10, lift: 50, width: 20}
`)
	a, b := m.Run(5).Actions(), mm.Run(5).Actions()
	if len(a) != len(b) {
		t.Fatalf("%d and %d actions", len(a), len(b))
	}
	for i := range a {
		if math.Abs(a[i].End-b[i].End) > 1e-9 || r3.Norm(r3.Sub(a[i].To, b[i].To)) > 1e-9 {
			t.Errorf("action %d: m %+v, mm %+v", i, a[i], b[i])
		}
	}
}

// Every example scenario loads in the example cell and runs.
func TestExampleScenarios(t *testing.T) {
	paths, err := filepath.Glob(filepath.Join("..", "testdata", "scenarios", "*.yaml"))
	if err != nil || len(paths) == 0 {
		t.Fatalf("no example scenarios: %v", err)
	}
	for _, p := range paths {
		sc := loadFile(t, filepath.Base(p))
		if _, ok := exampleCells[sc.Cell]; !ok {
			t.Errorf("%s: cell %q is not one of the example cells", p, sc.Cell)
		}
		r := sc.Run(sc.Seed)
		n := 0
		for {
			if _, ok := r.Next(); !ok {
				break
			}
			n++
		}
		if n == 0 {
			t.Errorf("%s: no samples", p)
		}
	}
}

// The scenario reference in the package documentation (doc.go) is a
// scenario that loads in the example cell.
func TestDocExampleLoads(t *testing.T) {
	b, err := os.ReadFile("doc.go")
	if err != nil {
		t.Fatal(err)
	}
	var src []string
	in := false
	for _, l := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(l, "//\tscenario: demo") {
			in = true
		}
		if in {
			if !strings.HasPrefix(l, "//\t") {
				break
			}
			src = append(src, strings.TrimPrefix(l, "//\t"))
		}
	}
	if len(src) < 40 {
		t.Fatalf("found %d lines of the reference in doc.go", len(src))
	}
	sc, err := Load(strings.NewReader(strings.Join(src, "\n")), "doc.go example", exampleCell(t))
	if err != nil {
		t.Fatal(err)
	}
	acts := sc.Run(1).Actions()
	if n := 1 + 2 + 1 + 12 + 1 + 2; len(acts) != n { // walk, 2 reaches, sweep, 3 cycles × 4, pause, jab + parallel
		t.Errorf("%d actions, want %d", len(acts), n)
	}
}
