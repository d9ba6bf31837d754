package zones

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/gonum/spatial/r3"
)

// Every file in testdata/invalid must be in this table, with every error
// line the loader reports for it, exactly.
var invalidConfigs = map[string][]string{
	"alias-loop.yaml": {
		`5:9: zones[0] "pallet-a": merge (<<) refers to the mapping that contains it`,
	},
	"bad-duration.yaml": {
		`6:9: forecast.step: bad duration "20 ms" (write e.g. "350ms" or "1.5s")`,
		`7:12: forecast.horizon: duration "0.5" has no unit (write e.g. "350ms" or "1.5s")`,
	},
	"bad-quat.yaml": {
		`7:13: zones[0] "slip-sheet-magazine": obox.quat: zero quaternion is not a rotation`,
	},
	"bad-units.yaml": {
		`2:8: units: unknown unit "cm" (want m or mm)`,
	},
	"capsule-missing-radius.yaml": {
		`4:5: zones[0] "tool-gripper": capsule.radius: missing (capsule needs a, b, radius)`,
	},
	"cell-name.yaml": {
		`1:7: cell: "line 3/palletiser": the cell name goes into MQTT topics and must not contain '/', '+', '#', spaces or control characters`,
	},
	"duplicate-key.yaml": {
		`5:5: zones[0] "pallet-a": margin: key given twice (first at 4:5)`,
	},
	"duplicate-station.yaml": {
		`8:11: stations[1] "infeed": name: duplicate station name (also stations[0], line 6)`,
		`10:5: stations[2] "walkway": at: missing: give the station's position [x, y, z]`,
	},
	"duplicate-zone.yaml": {
		`5:11: zones[1] "pallet-a": name: duplicate zone name (also zones[0], line 3)`,
	},
	"empty.yaml": {
		`1:1: the file is empty (a cell configuration needs at least cell and zones)`,
	},
	"inf.yaml": {
		`4:13: zones[0] "pallet-a": margin: must be a finite number, got .inf`,
	},
	"many-errors.yaml": {
		`9:15: zones[0] "robot-pedestal": cylinder.radius: must be > 0, got -0.45`,
		`11:13: zones[1] "pallet-a": margin: must be >= 0, got -0.15 m`,
		`15:11: zones[2] "pallet-a": name: duplicate zone name (also zones[1], line 10)`,
		`20:12: zones[3] "tool-wrist": frame: unknown frame "wrist" (robot.frames defines none)`,
		`22:7: zones[3] "tool-wrist": sphere.centre: unknown key (did you mean "center"?)`,
		`25:12: forecast.horizon: bad duration "half a second" (write e.g. "350ms" or "1.5s")`,
	},
	"merge.yaml": {
		`11:13: zones[1] "pallet-b": margin: must be >= 0, got -0.15 m`,
	},
	"min-above-max.yaml": {
		`5:12: zones[0] "pallet-a": box.min: min.x 6 is above max.x 4.8`,
	},
	"nan.yaml": {
		`5:26: zones[0] "tool-wrist": sphere.center[2]: must be a finite number, got .nan`,
	},
	"negative-duration.yaml": {
		`6:18: robot.stopping_time: duration must not be negative, got -600ms`,
	},
	"negative-margin.yaml": {
		`4:13: zones[0] "pallet-a": margin: must be >= 0, got -0.05 m`,
	},
	"negative-radius.yaml": {
		`7:15: zones[0] "column-c4": cylinder.radius: must be > 0, got -0.2`,
	},
	"no-cell.yaml": {
		`1:1: cell: missing: name the cell, e.g. cell: pl3-palletiser`,
	},
	"no-shape.yaml": {
		`3:5: zones[0] "pallet-a": no shape: give exactly one of box, obox, sphere, cylinder, capsule, prism`,
	},
	"no-zones.yaml": {
		`2:8: zones: no zones: a cell configuration needs at least one zone`,
	},
	"not-a-mapping.yaml": {
		`1:1: the file must be a mapping of keys (cell, units, zones, ...), got a list of 1`,
	},
	"obox-size.yaml": {
		`6:13: zones[0] "slip-sheet-magazine": obox.size: must be > 0 (size.y = 0)`,
	},
	"point-length.yaml": {
		`5:12: zones[0] "pallet-a": box.min: want a point [x, y, z], got a list of 2`,
	},
	"prism-heights.yaml": {
		`6:13: zones[0] "robot-envelope": prism.zmin: zmin 3 is above zmax 0`,
	},
	"rpy-and-quat.yaml": {
		`8:13: zones[0] "slip-sheet-magazine": obox.quat: give the rotation as rpy or as quat, not both`,
	},
	"self-intersecting.yaml": {
		`6:9: zones[0] "robot-envelope": prism.footprint: edges 1 and 3 cross: footprint is not a simple polygon`,
	},
	// The parser names line 2 (where the block starts); the loader finds
	// the line that breaks it. No column: the YAML parser does not give one.
	"syntax.yaml": {
		`6: YAML syntax: did not find expected key (in the block that starts at line 2)`,
	},
	"two-documents.yaml": {
		`6:1: a second YAML document starts here; a cell configuration is one document`,
	},
	"two-shapes.yaml": {
		`5:5: zones[0] "pallet-a": sphere: a zone has exactly one shape, this one also has box (line 4)`,
	},
	"unknown-frame.yaml": {
		`4:12: zones[0] "tool-gripper": frame: unknown frame "toool" (robot.frames has "tool")`,
	},
	"unknown-key.yaml": {
		`4:5: zones[0] "pallet-a": margn: unknown key (did you mean "margin"?)`,
	},
	"unknown-rule.yaml": {
		`4:23: zones[0] "pallet-a": rules[1]: unknown rule "slow-down" (policy.rules has "approach")`,
	},
	"unknown-section.yaml": {
		`5:1: lighting: unknown key (known keys: cell, units, zones, stations, bus, forecast, policy, robot)`,
	},
	"wrong-type.yaml": {
		`4:13: zones[0] "pallet-a": margin: want a length (number), got text "wide"`,
	},
	"zero-volume.yaml": {
		`6:12: zones[0] "floor-marking": box.max: zero volume: min.z = max.z = 0`,
	},
	"zone-name-missing.yaml": {
		`3:5: zones[0].name: missing: every zone needs a name`,
	},
}

func TestInvalidConfigs(t *testing.T) {
	files, err := filepath.Glob("testdata/invalid/*.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != len(invalidConfigs) {
		t.Errorf("%d files in testdata/invalid, %d in the table", len(files), len(invalidConfigs))
	}
	for _, path := range files {
		name := filepath.Base(path)
		t.Run(name, func(t *testing.T) {
			want, ok := invalidConfigs[name]
			if !ok {
				t.Fatalf("%s is not in the table", name)
			}
			cfg, err := Load(path)
			if err == nil {
				t.Fatalf("loaded without error: %+v", cfg)
			}
			if cfg != nil {
				t.Errorf("got a Config along with the error")
			}
			var ces *ConfigErrors
			if !errors.As(err, &ces) {
				t.Fatalf("error is %T, want *ConfigErrors: %v", err, err)
			}
			var got []string
			for _, e := range *ces {
				if e.File != path {
					t.Errorf("File = %q, want %q", e.File, path)
				}
				got = append(got, strings.TrimPrefix(e.Error(), path+":"))
			}
			if !reflect.DeepEqual(got, want) {
				t.Errorf("errors:\n got  %s\n want %s", strings.Join(got, "\n      "), strings.Join(want, "\n      "))
			}
			if err.Error() != joinLines(path, want) {
				t.Errorf("Error() = %q", err.Error())
			}
		})
	}
}

func joinLines(path string, lines []string) string {
	out := make([]string, len(lines))
	for i, l := range lines {
		out[i] = path + ":" + l
	}
	return strings.Join(out, "\n")
}

// TestAllErrorsReportedTogether: one file with six unrelated mistakes gives
// six errors, in file order, each on its own line of Error().
func TestAllErrorsReportedTogether(t *testing.T) {
	_, err := Load("testdata/invalid/many-errors.yaml")
	var ces *ConfigErrors
	if !errors.As(err, &ces) {
		t.Fatalf("want *ConfigErrors, got %v", err)
	}
	if len(*ces) != 6 {
		t.Fatalf("got %d errors, want 6:\n%v", len(*ces), err)
	}
	lines := map[int]bool{}
	for i, e := range *ces {
		lines[e.Line] = true
		if i > 0 && (*ces)[i-1].Line > e.Line {
			t.Errorf("errors not sorted by line: %d after %d", e.Line, (*ces)[i-1].Line)
		}
		if e.Col < 1 || e.Field == "" || e.Msg == "" {
			t.Errorf("incomplete error %+v", e)
		}
	}
	if len(lines) != 6 {
		t.Errorf("errors on %d distinct lines, want 6", len(lines))
	}
	if n := strings.Count(err.Error(), "\n"); n != 5 {
		t.Errorf("Error() has %d line breaks, want 5", n)
	}
}

func TestConfigErrorFormat(t *testing.T) {
	for _, c := range []struct {
		e    ConfigError
		want string
	}{
		{ConfigError{"cell.yaml", 12, 9, `zones[2] "press"`, "must be > 0"}, `cell.yaml:12:9: zones[2] "press": must be > 0`},
		{ConfigError{"cell.yaml", 3, 0, "", "YAML syntax: bad"}, `cell.yaml:3: YAML syntax: bad`},
		{ConfigError{"c.yaml", 1, 1, "", "empty"}, `c.yaml:1:1: empty`},
	} {
		if got := c.e.Error(); got != c.want {
			t.Errorf("Error() = %q, want %q", got, c.want)
		}
	}
}

func TestLoadExamples(t *testing.T) {
	for _, c := range []struct {
		path  string
		zones int
	}{
		{"../testdata/pl3-palletiser.yaml", 9},
		{"../testdata/kitting-bench-mm.yaml", 7},
		{"testdata/units/kitting-bench-m.yaml", 7},
	} {
		cfg, err := Load(c.path)
		if err != nil {
			t.Fatalf("%s: %v", c.path, err)
		}
		data, err := os.ReadFile(c.path)
		if err != nil {
			t.Fatal(err)
		}
		sum := sha256.Sum256(data)
		if cfg.Digest != hex.EncodeToString(sum[:]) || cfg.Source != c.path {
			t.Errorf("%s: Source %q Digest %q", c.path, cfg.Source, cfg.Digest)
		}
		if len(cfg.Zones) != c.zones {
			t.Errorf("%s: %d zones, want %d", c.path, len(cfg.Zones), c.zones)
		}
		kinds := map[string]bool{}
		for _, z := range cfg.Zones {
			kinds[z.shapeSection()] = true
		}
		if len(kinds) != len(shapeKeys) {
			t.Errorf("%s uses shapes %v, want every kind %v", c.path, kinds, shapeKeys)
		}
		zs, err := cfg.BuildZones()
		if err != nil {
			t.Fatalf("%s: BuildZones: %v", c.path, err)
		}
		if zs.Len() != c.zones {
			t.Errorf("%s: zone set has %d zones", c.path, zs.Len())
		}
	}
}

// TestExampleValues checks decoded values of the palletiser cell against
// the file, and the robot-attached zone's placement at the configured pose
// against a hand computation.
func TestExampleValues(t *testing.T) {
	cfg, err := Load("../testdata/pl3-palletiser.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Cell != "pl3-palletiser" || cfg.Units != "m" {
		t.Errorf("cell %q units %q", cfg.Cell, cfg.Units)
	}
	env := cfg.Zones[0]
	if env.Name != "robot-envelope" || env.Prism == nil || len(env.Prism.Footprint) != 6 ||
		env.Prism.Footprint[3] != [2]Length{1.7, 4.6} || env.Prism.ZMax != 3 || env.Margin != 0.2 {
		t.Errorf("robot-envelope decoded as %+v / %+v", env, env.Prism)
	}
	if got := cfg.Zones[4].OBox.RPY; got == nil || *got != [3]float64{0, 0, -25} {
		t.Errorf("slip-sheet-magazine rpy = %v", got)
	}
	if cfg.Forecast.Horizon != Duration(500*time.Millisecond) || cfg.Robot.StoppingTime != Duration(300*time.Millisecond) {
		t.Errorf("durations: horizon %v stopping_time %v", time.Duration(cfg.Forecast.Horizon), time.Duration(cfg.Robot.StoppingTime))
	}
	if sb := cfg.Policy.Rules[1].SepBelow; sb == nil || *sb != 0.15 {
		t.Errorf("close.sep_below = %v", sb)
	}

	zs, err := cfg.BuildZones()
	if err != nil {
		t.Fatal(err)
	}
	g := zs.Zone(zs.Index("tool-gripper"))
	if g.Frame != "tool" || g.Margin != 0.15 {
		t.Fatalf("tool-gripper: frame %q margin %g", g.Frame, g.Margin)
	}
	// tool frame at (3.0, 3.4, 2.1), roll 180°: (x, y, z) -> (x, -y, -z)
	// then translated, so the capsule axis a = (0, 0, 0.05) lands at
	// (3.0, 3.4, 2.05) and b = (0, 0, 0.45) at (3.0, 3.4, 1.65).
	for _, c := range []struct{ local, cell r3.Vec }{
		{r3.Vec{Z: 0.05}, r3.Vec{X: 3, Y: 3.4, Z: 2.05}},
		{r3.Vec{Z: 0.45}, r3.Vec{X: 3, Y: 3.4, Z: 1.65}},
		{r3.Vec{X: 1, Y: 1}, r3.Vec{X: 4, Y: 2.4, Z: 2.1}},
	} {
		if got := g.ToCell(c.local); r3.Norm(r3.Sub(got, c.cell)) > 1e-12 {
			t.Errorf("ToCell(%v) = %v, want %v", c.local, got, c.cell)
		}
	}
	// A point 1 m below the flange on the tool axis: nearest axis point is
	// b at z = 1.65, so the distance to the capsule is 0.65 - 0.35 = 0.30.
	if d := g.SignedDistance(r3.Vec{X: 3, Y: 3.4, Z: 1.0}); math.Abs(d-0.30) > 1e-12 {
		t.Errorf("signed distance below the gripper = %g, want 0.30", d)
	}
	if i := zs.Index("pallet-a"); zs.Zone(i).Frame != "" || !zs.Zone(i).Contains(r3.Vec{X: 5.4, Y: 1, Z: 1}) {
		t.Errorf("pallet-a should be fixed and contain its centre")
	}
}

// TestUnitsMillimetres: the kitting bench written in mm loads to the same
// configuration as its hand-converted twin in m (every length and speed
// divided by 1000 by hand), to 1e-12 relative.
func TestUnitsMillimetres(t *testing.T) {
	mm, err := Load("../testdata/kitting-bench-mm.yaml")
	if err != nil {
		t.Fatal(err)
	}
	m, err := Load("testdata/units/kitting-bench-m.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if mm.Units != "mm" || m.Units != "m" {
		t.Fatalf("units %q and %q", mm.Units, m.Units)
	}
	mm.Units, mm.Source, mm.Digest = "", "", ""
	m.Units, m.Source, m.Digest = "", "", ""
	var diffs []string
	approxEqual(reflect.ValueOf(*mm), reflect.ValueOf(*m), "", &diffs)
	if len(diffs) > 0 {
		t.Errorf("mm and m configurations differ:\n%s", strings.Join(diffs, "\n"))
	}
	// Spot checks in metres, so that a loader scaling both files alike
	// (or neither) cannot pass.
	if r := mm.Zones[0].Cylinder.Radius; math.Abs(float64(r)-0.65) > 1e-12 {
		t.Errorf("robot-reach radius = %g m, want 0.65", float64(r))
	}
	if s := mm.Policy.MaxSpeed; math.Abs(float64(s)-8) > 1e-12 {
		t.Errorf("max_speed = %g m/s, want 8", float64(s))
	}
	if p := mm.Robot.Frames[0].Pos; math.Abs(float64(p[2])-1.3) > 1e-12 {
		t.Errorf("flange z = %g m, want 1.3", float64(p[2]))
	}
	if mm.Robot.StoppingTime != Duration(150*time.Millisecond) {
		t.Errorf("durations must not be scaled: %v", time.Duration(mm.Robot.StoppingTime))
	}
	if rpy := mm.Zones[3].OBox.RPY; rpy == nil || rpy[2] != 30 {
		t.Errorf("angles must not be scaled: %v", rpy)
	}
}

// approxEqual compares two values field by field, floats to 1e-12
// relative, and records the paths that differ.
func approxEqual(a, b reflect.Value, path string, diffs *[]string) {
	switch a.Kind() {
	case reflect.Float32, reflect.Float64:
		x, y := a.Float(), b.Float()
		if math.Abs(x-y) > 1e-12*math.Max(1, math.Max(math.Abs(x), math.Abs(y))) {
			*diffs = append(*diffs, path+": "+fmtF(x)+" vs "+fmtF(y))
		}
	case reflect.Pointer:
		if a.IsNil() != b.IsNil() {
			*diffs = append(*diffs, path+": nil vs non-nil")
		} else if !a.IsNil() {
			approxEqual(a.Elem(), b.Elem(), path, diffs)
		}
	case reflect.Struct:
		for i := 0; i < a.NumField(); i++ {
			approxEqual(a.Field(i), b.Field(i), path+"."+a.Type().Field(i).Name, diffs)
		}
	case reflect.Slice, reflect.Array:
		if a.Len() != b.Len() {
			*diffs = append(*diffs, path+": lengths differ")
			return
		}
		for i := 0; i < a.Len(); i++ {
			approxEqual(a.Index(i), b.Index(i), path+"["+itoa(i)+"]", diffs)
		}
	case reflect.Map:
		if !reflect.DeepEqual(a.Interface(), b.Interface()) {
			*diffs = append(*diffs, path+": maps differ")
		}
	default:
		if !reflect.DeepEqual(a.Interface(), b.Interface()) {
			*diffs = append(*diffs, path+": differ")
		}
	}
}

func fmtF(x float64) string { return ftoa(x) }
func itoa(i int) string     { return ftoa(float64(i)) }

// TestAliasesAndMerge: values reached through anchors, aliases and merge
// keys decode like written ones; explicit keys win over merged ones.
func TestAliasesAndMerge(t *testing.T) {
	src := `cell: pl3-palletiser
zones:
  - &pallet
    name: pallet-a
    margin: 0.15
    box: {min: [4.8, 0.6, 0.0], max: &top [6.0, 1.4, 2.0]}
  - <<: *pallet
    name: pallet-b
    margin: 0.25
  - name: pallet-c
    box: {min: [3.0, 0.6, 0.0], max: *top}
`
	cfg, err := Parse([]byte(src), "merge.yaml")
	if err != nil {
		t.Fatal(err)
	}
	b := cfg.Zones[1]
	if b.Name != "pallet-b" || b.Margin != 0.25 || b.Box == nil || b.Box.Min != (Point{4.8, 0.6, 0}) {
		t.Errorf("pallet-b = %+v box %+v", b, b.Box)
	}
	if c := cfg.Zones[2]; c.Box.Max != (Point{6, 1.4, 2}) {
		t.Errorf("pallet-c max = %v", c.Box.Max)
	}
}

func TestSuggestions(t *testing.T) {
	_, err := Parse([]byte("cell: x\nzones:\n  - name: a\n    sphere: {centre: [0, 0, 0], raduis: 1}\n"), "s.yaml")
	if err == nil {
		t.Fatal("no error")
	}
	for _, want := range []string{`sphere.centre: unknown key (did you mean "center"?)`, `sphere.raduis: unknown key (did you mean "radius"?)`} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("missing %q in\n%v", want, err)
		}
	}
}

func TestEditDistance(t *testing.T) {
	// Textbook Levenshtein examples.
	for _, c := range []struct {
		a, b string
		d    int
	}{{"kitten", "sitting", 3}, {"", "abc", 3}, {"radius", "radius", 0}, {"centre", "center", 2}, {"flaw", "lawn", 2}} {
		if got := editDistance(c.a, c.b); got != c.d {
			t.Errorf("editDistance(%q, %q) = %d, want %d", c.a, c.b, got, c.d)
		}
	}
}

// ---- the hooks for section owners, on a section made up for the test ----

var hookLog []string

type hookRoot struct {
	Units string      `yaml:"units"`
	Sec   hookSection `yaml:"sec"`
}

type hookSection struct {
	Gap   Duration   `yaml:"gap"`
	Reach Length     `yaml:"reach"`
	Noise float64    `yaml:"noise"` // file units squared
	Items []hookItem `yaml:"items"`
}

type hookItem struct {
	Name  string `yaml:"name"`
	Scale float64
}

func (s *hookSection) ScaleUnits(k float64) {
	hookLog = append(hookLog, "scale sec")
	s.Noise *= k * k
}

func (s *hookSection) Defaults() {
	hookLog = append(hookLog, "defaults sec")
	if s.Gap == 0 {
		s.Gap = Duration(250 * time.Millisecond)
	}
	if len(s.Items) == 0 {
		s.Items = []hookItem{{Name: "added"}}
	}
}

func (it *hookItem) Defaults() {
	hookLog = append(hookLog, "defaults item "+it.Name)
	if it.Scale == 0 {
		it.Scale = 1
	}
}

func (s *hookSection) Check(c *Checker) {
	hookLog = append(hookLog, "check sec")
	if s.Reach > 2 {
		c.Errorf("reach", "%g m is beyond the robot", float64(s.Reach))
	}
	if !c.Has("gap") {
		c.Errorf("gap", "left out, defaulted to %v", time.Duration(s.Gap))
	}
	for i := range s.Items {
		if s.Items[i].Scale > 1 {
			c.At("items["+itoa(i)+"]").Errorf("scale", "must be <= 1")
		}
	}
}

func (it *hookItem) Check(c *Checker) {
	hookLog = append(hookLog, "check item "+it.Name+" at "+c.Path())
	if it.Name == "" {
		c.Errorf("name", "missing")
	}
}

func loadHooks(t *testing.T, src string) (*hookRoot, []string) {
	t.Helper()
	hookLog = nil
	var r hookRoot
	st := newLoadState("hooks.yaml")
	st.load([]byte(src), &r, nil, nil)
	var msgs []string
	if len(st.errs) > 0 {
		for _, e := range *st.configErrors() {
			msgs = append(msgs, e.Error())
		}
	}
	return &r, msgs
}

func TestCheckerHooks(t *testing.T) {
	r, msgs := loadHooks(t, `units: mm
sec:
  reach: 2500
  noise: 4
  items:
    - name: first
      scale: 0.5
    - name: second
      scale: 3
    - scale: 0.2
`)
	want := []string{
		"hooks.yaml:2:1: sec.gap: left out, defaulted to 250ms",
		"hooks.yaml:3:10: sec.reach: 2.5 m is beyond the robot",
		`hooks.yaml:9:14: sec.items[1] "second": scale: must be <= 1`,
		"hooks.yaml:10:7: sec.items[2].name: missing",
	}
	if !reflect.DeepEqual(msgs, want) {
		t.Errorf("messages:\n got  %q\n want %q", msgs, want)
	}
	// 4 mm² = 4e-6 m²: ScaleUnits ran once, with 0.001.
	if math.Abs(r.Sec.Noise-4e-6) > 1e-18 || r.Sec.Reach != 2.5 {
		t.Errorf("noise %g reach %g", r.Sec.Noise, float64(r.Sec.Reach))
	}
	if r.Sec.Items[0].Scale != 0.5 || r.Sec.Items[2].Scale != 0.2 {
		t.Errorf("defaults overwrote written values: %+v", r.Sec.Items)
	}
	wantLog := []string{
		"scale sec", "defaults sec", "defaults item first", "defaults item second", "defaults item ",
		"check sec", "check item first at sec.items[0]", "check item second at sec.items[1]", "check item  at sec.items[2]",
	}
	if !reflect.DeepEqual(hookLog, wantLog) {
		t.Errorf("call order:\n got  %q\n want %q", hookLog, wantLog)
	}

	// Defaults run parents first: the element the section adds gets its own
	// defaults; its checks point at the nearest written key.
	r, msgs = loadHooks(t, "sec:\n  gap: 1s\n")
	if len(r.Sec.Items) != 1 || r.Sec.Items[0].Scale != 1 {
		t.Errorf("added item not defaulted: %+v", r.Sec.Items)
	}
	if len(msgs) != 0 {
		t.Errorf("unexpected messages %q", msgs)
	}
	hookLog = nil
}

// TestCheckerQuietOnBadFields: a check about a field whose value failed to
// decode is dropped, so one mistake gives one message.
func TestCheckerQuietOnBadFields(t *testing.T) {
	_, msgs := loadHooks(t, "sec:\n  gap: soon\n  reach: far\n  items:\n    - name: [x]\n")
	want := []string{
		`hooks.yaml:2:8: sec.gap: bad duration "soon" (write e.g. "350ms" or "1.5s")`,
		`hooks.yaml:3:10: sec.reach: want a length (number), got text "far"`,
		`hooks.yaml:5:13: sec.items[0].name: want a text, got a list of 1`,
	}
	if !reflect.DeepEqual(msgs, want) {
		t.Errorf("messages:\n got  %q\n want %q", msgs, want)
	}
}

func TestPathHelpers(t *testing.T) {
	for _, c := range []struct{ in, parent string }{
		{"zones[2].sphere.radius", "zones[2].sphere"},
		{"zones[2].sphere", "zones[2]"},
		{"zones[2]", "zones"},
		{"zones", ""},
		{"a.b[1][2]", "a.b[1]"},
		{"x]", ""},
		{"zones[0].x]", "zones[0]"},
	} {
		if got := parentPath(c.in); got != c.parent {
			t.Errorf("parentPath(%q) = %q, want %q", c.in, got, c.parent)
		}
	}
	if !isPrefixPath("zones[1]", "zones[1].box") || isPrefixPath("zones[1]", "zones[10]") || !isPrefixPath("", "x") {
		t.Error("isPrefixPath")
	}
}

func TestSortErrors(t *testing.T) {
	es := []ConfigError{{Line: 3, Col: 1, Msg: "c"}, {Line: 1, Col: 5, Msg: "b"}, {Line: 1, Col: 2, Msg: "a"}, {Line: 3, Col: 1, Msg: "c"}}
	got := sortErrors(es)
	var msgs []string
	for _, e := range got {
		msgs = append(msgs, e.Msg)
	}
	if !sort.StringsAreSorted(msgs) || len(msgs) != 3 {
		t.Errorf("sorted = %v", msgs)
	}
}

func TestUnitsDefault(t *testing.T) {
	cfg, err := Parse([]byte("cell: c\nzones:\n  - name: z\n    sphere: {center: [0, 0, 1], radius: 200}\n"), "u.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Units != "m" || cfg.Zones[0].Sphere.Radius != 200 {
		t.Errorf("units %q radius %g: want metres, unscaled", cfg.Units, float64(cfg.Zones[0].Sphere.Radius))
	}
	// The unit applies to the whole file, wherever the key is.
	cfg, err = Parse([]byte("zones:\n  - name: z\n    sphere: {center: [0, 0, 1000], radius: 200}\ncell: c\nunits: mm\n"), "u.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if r := cfg.Zones[0].Sphere.Radius; math.Abs(float64(r)-0.2) > 1e-15 {
		t.Errorf("radius %g m, want 0.2", float64(r))
	}
}
