package sim

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/gonum/spatial/r3"
	"gopkg.in/yaml.v3"

	"forereach/zones"
)

// Limits on what a scenario may ask for, so that a mistyped number gives an
// error rather than a run that never ends.
const (
	MaxDuration  = 24 * 3600.0 // seconds of simulated time
	MaxRate      = 10000.0     // frames per second
	MaxMoves     = 1_000_000   // movements in one run, pick-and-place cycles counted
	MaxOperators = 64
	MaxHands     = 8 // per operator
	maxNodes     = 200_000
	maxErrors    = 50
	maxLength    = 1000.0 // metres, per coordinate (the recording schema's limit)
)

// Load reads a scenario. name is the file name used in error messages.
// cell, when not nil, is the cell configuration the scenario runs in: its
// stations are available as targets (a scenario's own stations of the same
// name take precedence), its name must match the scenario's cell field when
// both are given. Every problem found is reported, each with file:line:column
// and the field, as *zones.ConfigErrors.
func Load(r io.Reader, name string, cell *zones.Config) (*Scenario, error) {
	src, err := io.ReadAll(io.LimitReader(r, 16<<20+1))
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if len(src) > 16<<20 {
		return nil, fmt.Errorf("%s: larger than 16 MiB: not a scenario", name)
	}
	d := &decoder{file: name, scale: 1}
	sc := d.scenario(src, cell)
	if len(d.errs) > 0 {
		es := d.sorted()
		return nil, &es
	}
	return sc, nil
}

// decoder walks the YAML nodes of a scenario, collecting every error with
// its position.
type decoder struct {
	file  string
	scale float64 // length unit to metres
	errs  []zones.ConfigError
	nodes int
	// tooMany is set once maxErrors errors are collected.
	tooMany bool
	// lossNodes are the nodes of sensor.losses, for checks made once the
	// operators are known.
	lossNodes []*yaml.Node
}

func (d *decoder) sorted() zones.ConfigErrors {
	es := d.errs
	sort.SliceStable(es, func(i, j int) bool {
		if es[i].Line != es[j].Line {
			return es[i].Line < es[j].Line
		}
		return es[i].Col < es[j].Col
	})
	out := es[:0]
	for i, e := range es {
		if i > 0 && e == es[i-1] {
			continue
		}
		out = append(out, e)
	}
	return zones.ConfigErrors(out)
}

func (d *decoder) errorf(n *yaml.Node, field, format string, a ...any) {
	if len(d.errs) >= maxErrors {
		d.tooMany = true
		return
	}
	e := zones.ConfigError{File: d.file, Field: field, Msg: fmt.Sprintf(format, a...)}
	if n != nil {
		e.Line, e.Col = n.Line, n.Column
	}
	if e.Line == 0 {
		e.Line = 1
	}
	d.errs = append(d.errs, e)
}

// resolve follows aliases and counts nodes against the budget.
func (d *decoder) resolve(n *yaml.Node) *yaml.Node {
	for i := 0; n != nil && n.Kind == yaml.AliasNode && i < 100; i++ {
		n = n.Alias
	}
	d.nodes++
	return n
}

// fields walks a mapping node: each key must be one of handlers, at most
// once. It returns false (after an error) when n is not a mapping.
func (d *decoder) fields(n *yaml.Node, path string, handlers map[string]func(v *yaml.Node, path string)) bool {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.MappingNode {
		d.errorf(n, path, "want a mapping of keys to values, got %s", kindName(n))
		return false
	}
	if d.nodes > maxNodes {
		d.errorf(n, path, "too many YAML nodes (more than %d, counting aliases)", maxNodes)
		return false
	}
	seen := map[string]bool{}
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, v := d.resolve(n.Content[i]), n.Content[i+1]
		kp := join(path, k.Value)
		if k.Kind != yaml.ScalarNode {
			d.errorf(k, path, "a key must be a plain name")
			continue
		}
		h, ok := handlers[k.Value]
		if !ok {
			d.errorf(k, kp, "unknown key (want one of %s)", keyList(handlers))
			continue
		}
		if seen[k.Value] {
			d.errorf(k, kp, "given twice")
			continue
		}
		seen[k.Value] = true
		h(v, kp)
	}
	return true
}

func join(path, key string) string {
	if path == "" {
		return key
	}
	return path + "." + key
}

func keyList(m map[string]func(*yaml.Node, string)) string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return strings.Join(ks, ", ")
}

func kindName(n *yaml.Node) string {
	if n == nil {
		return "nothing"
	}
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return "a list"
	case yaml.ScalarNode:
		if n.ShortTag() == "!!null" {
			return "nothing (null)"
		}
		return strconv.Quote(n.Value)
	case yaml.AliasNode:
		return "an alias"
	}
	return "a document"
}

// seq returns the items of a sequence node, or nil after an error.
func (d *decoder) seq(n *yaml.Node, path string) []*yaml.Node {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.SequenceNode {
		d.errorf(n, path, "want a list, got %s", kindName(n))
		return nil
	}
	return n.Content
}

func (d *decoder) str(n *yaml.Node, path string) (string, bool) {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.ScalarNode || n.ShortTag() == "!!null" {
		d.errorf(n, path, "want a name, got %s", kindName(n))
		return "", false
	}
	return n.Value, true
}

func (d *decoder) boolean(n *yaml.Node, path string) bool {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.ScalarNode || n.ShortTag() != "!!bool" {
		d.errorf(n, path, "want true or false, got %s", kindName(n))
		return false
	}
	var b bool
	if err := n.Decode(&b); err != nil {
		d.errorf(n, path, "want true or false, got %s", kindName(n))
	}
	return b
}

// number reads a finite number.
func (d *decoder) number(n *yaml.Node, path string) (float64, bool) {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.ScalarNode || (n.ShortTag() != "!!int" && n.ShortTag() != "!!float") {
		d.errorf(n, path, "want a number, got %s", kindName(n))
		return 0, false
	}
	var x float64
	if err := n.Decode(&x); err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		d.errorf(n, path, "want a finite number, got %s", kindName(n))
		return 0, false
	}
	return x, true
}

func (d *decoder) integer(n *yaml.Node, path string) (int64, bool) {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.ScalarNode || n.ShortTag() != "!!int" {
		d.errorf(n, path, "want a whole number, got %s", kindName(n))
		return 0, false
	}
	var x int64
	if err := n.Decode(&x); err != nil {
		d.errorf(n, path, "want a whole number that fits 64 bits, got %s", kindName(n))
		return 0, false
	}
	return x, true
}

// inRange checks lo <= x <= hi (either bound skipped when NaN).
func (d *decoder) inRange(n *yaml.Node, path string, x, lo, hi float64, unit string) bool {
	if (!math.IsNaN(lo) && x < lo) || (!math.IsNaN(hi) && x > hi) {
		switch {
		case math.IsNaN(hi):
			d.errorf(n, path, "must be at least %g%s, got %g%s", lo, unit, x, unit)
		case math.IsNaN(lo):
			d.errorf(n, path, "must be at most %g%s, got %g%s", hi, unit, x, unit)
		default:
			d.errorf(n, path, "must be in [%g, %g]%s, got %g%s", lo, hi, unit, x, unit)
		}
		return false
	}
	return true
}

var nan = math.NaN()

// numberIn reads a number within [lo, hi].
func (d *decoder) numberIn(n *yaml.Node, path string, lo, hi float64) float64 {
	x, ok := d.number(n, path)
	if ok && !d.inRange(n, path, x, lo, hi, "") {
		return lo
	}
	return x
}

// length reads a length in the file's unit and returns metres, within
// [lo, hi] metres.
func (d *decoder) length(n *yaml.Node, path string, lo, hi float64) float64 {
	x, ok := d.number(n, path)
	if !ok {
		return 0
	}
	x *= d.scale
	if !d.inRange(n, path, x, lo, hi, " m") {
		return 0
	}
	return x
}

// duration reads a Go duration string ("600ms", "1.5s") in seconds within
// [lo, hi].
func (d *decoder) duration(n *yaml.Node, path string, lo, hi float64) (float64, bool) {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.ScalarNode {
		d.errorf(n, path, "want a duration such as 600ms or 1.5s, got %s", kindName(n))
		return 0, false
	}
	if t := n.ShortTag(); t == "!!int" || t == "!!float" {
		d.errorf(n, path, "a duration needs a unit: write e.g. %ss or %sms", n.Value, n.Value)
		return 0, false
	}
	v, err := time.ParseDuration(n.Value)
	if err != nil {
		d.errorf(n, path, "want a duration such as 600ms or 1.5s, got %s", kindName(n))
		return 0, false
	}
	s := v.Seconds()
	if !d.inRange(n, path, s, lo, hi, " s") {
		return 0, false
	}
	return s, true
}

// durRange reads a duration or a range [lo, hi] of durations.
func (d *decoder) durRange(n *yaml.Node, path string, lo, hi float64) Range {
	return d.rangeOf(n, path, func(n *yaml.Node, path string) (float64, bool) { return d.duration(n, path, lo, hi) })
}

// rangeOf reads a scalar or a two-element list [lo, hi] with lo <= hi.
func (d *decoder) rangeOf(n *yaml.Node, path string, one func(*yaml.Node, string) (float64, bool)) Range {
	n = d.resolve(n)
	if n != nil && n.Kind == yaml.SequenceNode {
		if len(n.Content) != 2 {
			d.errorf(n, path, "a range is two values [low, high], got %d", len(n.Content))
			return Range{}
		}
		a, ok1 := one(n.Content[0], path+"[0]")
		b, ok2 := one(n.Content[1], path+"[1]")
		if ok1 && ok2 && a > b {
			d.errorf(n, path, "range [low, high] has low > high")
			return Range{}
		}
		return Range{a, b}
	}
	x, _ := one(n, path)
	return fixed(x)
}

// point reads [x, y, z] (or [x, y] when dims is 2, z = 0) in the file's
// unit and returns metres.
func (d *decoder) point(n *yaml.Node, path string, dims int) (r3.Vec, bool) {
	n = d.resolve(n)
	if n == nil || n.Kind != yaml.SequenceNode || len(n.Content) != dims {
		want := "[x, y, z]"
		if dims == 2 {
			want = "[x, y]"
		}
		d.errorf(n, path, "want a point %s, got %s", want, kindName(n))
		return r3.Vec{}, false
	}
	var c [3]float64
	ok := true
	for i, e := range n.Content {
		x, good := d.number(e, fmt.Sprintf("%s[%d]", path, i))
		x *= d.scale
		if good && !d.inRange(e, fmt.Sprintf("%s[%d]", path, i), x, -maxLength, maxLength, " m") {
			good = false
		}
		ok = ok && good
		c[i] = x
	}
	return r3.Vec{X: c[0], Y: c[1], Z: c[2]}, ok
}

// ---- the document -------------------------------------------------------

func (d *decoder) scenario(src []byte, cell *zones.Config) *Scenario {
	var doc yaml.Node
	dec := yaml.NewDecoder(strings.NewReader(string(src)))
	if err := dec.Decode(&doc); err != nil {
		if errors.Is(err, io.EOF) {
			d.errorf(nil, "", "empty file: not a scenario")
		} else {
			d.yamlError(err)
		}
		return nil
	}
	var extra yaml.Node
	if err := dec.Decode(&extra); err == nil {
		d.errorf(&extra, "", "a scenario is one YAML document; found a second")
		return nil
	} else if !errors.Is(err, io.EOF) {
		d.yamlError(err)
		return nil
	}
	root := &doc
	if root.Kind == yaml.DocumentNode && len(root.Content) == 1 {
		root = root.Content[0]
	}
	if root.Kind != yaml.MappingNode {
		d.errorf(root, "", "a scenario is a mapping (scenario:, operators:, ...), got %s", kindName(root))
		return nil
	}

	sc := &Scenario{
		Name:   strings.TrimSuffix(filepath.Base(d.file), filepath.Ext(d.file)),
		Source: d.file,
		Seed:   1,
		Tail:   0.5,
		Sensor: DefaultSensor,
		Tremor: DefaultTremor,
		fitts:  DefaultFitts,
	}
	// The unit comes first: every length depends on it.
	for i := 0; i+1 < len(root.Content); i += 2 {
		if k := root.Content[i]; k.Kind == yaml.ScalarNode && k.Value == "units" {
			switch u, _ := d.str(root.Content[i+1], "units"); u {
			case "m":
			case "mm":
				d.scale = 0.001
			default:
				d.errorf(root.Content[i+1], "units", "want m or mm, got %q", u)
			}
		}
	}
	var opsNode, stationsNode *yaml.Node
	d.fields(root, "", map[string]func(*yaml.Node, string){
		"scenario": func(v *yaml.Node, p string) {
			if s, ok := d.str(v, p); ok {
				sc.Name = s
			}
		},
		"cell": func(v *yaml.Node, p string) {
			s, ok := d.str(v, p)
			if !ok {
				return
			}
			sc.Cell = s
			if cell != nil && cell.Cell != "" && cell.Cell != s {
				d.errorf(v, p, "the scenario is for cell %q, the cell configuration is %q", s, cell.Cell)
			}
		},
		"units": func(*yaml.Node, string) {},
		"seed": func(v *yaml.Node, p string) {
			if x, ok := d.integer(v, p); ok {
				if x < 0 {
					d.errorf(v, p, "must be >= 0")
				}
				sc.Seed = uint64(x)
			}
		},
		"duration": func(v *yaml.Node, p string) {
			sc.Duration, _ = d.duration(v, p, 1e-3, MaxDuration)
		},
		"tail": func(v *yaml.Node, p string) {
			sc.Tail, _ = d.duration(v, p, 0, 3600)
		},
		"fitts":     func(v *yaml.Node, p string) { d.fittsSection(v, p, &sc.fitts) },
		"tremor":    func(v *yaml.Node, p string) { d.tremorSection(v, p, &sc.Tremor) },
		"sensor":    func(v *yaml.Node, p string) { d.sensorSection(v, p, &sc.Sensor) },
		"stations":  func(v *yaml.Node, p string) { stationsNode = v },
		"operators": func(v *yaml.Node, p string) { opsNode = v },
	})

	sc.stations = map[string]r3.Vec{}
	if cell != nil {
		for _, s := range cell.Stations {
			sc.stations[s.Name] = r3.Vec{X: float64(s.At[0]), Y: float64(s.At[1]), Z: float64(s.At[2])}
		}
	}
	if stationsNode != nil {
		d.stationsSection(stationsNode, "stations", sc.stations)
	}
	if opsNode == nil {
		d.errorf(root, "operators", "missing: a scenario needs at least one operator")
	} else {
		d.operatorsSection(opsNode, "operators", sc)
	}
	d.checkLosses(sc)
	if d.tooMany {
		d.errorf(nil, "", "too many errors; stopped after %d", maxErrors)
	}
	return sc
}

// yamlError turns a YAML syntax error into a positioned error.
func (d *decoder) yamlError(err error) {
	msg := err.Error()
	msg = strings.TrimPrefix(msg, "yaml: ")
	line := 1
	if rest, ok := strings.CutPrefix(msg, "line "); ok {
		if i := strings.IndexByte(rest, ':'); i > 0 {
			if l, e := strconv.Atoi(rest[:i]); e == nil {
				line = l
				msg = strings.TrimSpace(rest[i+1:])
			}
		}
	}
	d.errs = append(d.errs, zones.ConfigError{File: d.file, Line: line, Msg: "YAML: " + msg})
}

func (d *decoder) fittsSection(n *yaml.Node, path string, f *Fitts) {
	d.fields(n, path, map[string]func(*yaml.Node, string){
		"a":     func(v *yaml.Node, p string) { f.A, _ = d.duration(v, p, 0, 10) },
		"b":     func(v *yaml.Node, p string) { f.B, _ = d.duration(v, p, 0, 10) },
		"width": func(v *yaml.Node, p string) { f.Width = d.length(v, p, 1e-4, 10) },
	})
	if f.Width <= 0 {
		f.Width = DefaultFitts.Width
	}
}

func (d *decoder) tremorSection(n *yaml.Node, path string, t *Tremor) {
	d.fields(n, path, map[string]func(*yaml.Node, string){
		"rms": func(v *yaml.Node, p string) { t.RMS = d.length(v, p, 0, 0.01) },
		"band": func(v *yaml.Node, p string) {
			r := d.rangeOf(v, p, func(n *yaml.Node, p string) (float64, bool) {
				x, ok := d.number(n, p)
				return x, ok && d.inRange(n, p, x, 0.1, 100, " Hz")
			})
			t.Lo, t.Hi = r.Lo, r.Hi
		},
	})
}

func (d *decoder) sensorSection(n *yaml.Node, path string, s *Sensor) {
	d.fields(n, path, map[string]func(*yaml.Node, string){
		"rate":     func(v *yaml.Node, p string) { s.Rate = d.numberIn(v, p, 1, MaxRate) },
		"noise":    func(v *yaml.Node, p string) { s.Noise = d.length(v, p, 0, 1) },
		"latency":  func(v *yaml.Node, p string) { s.Latency, _ = d.duration(v, p, 0, 10) },
		"jitter":   func(v *yaml.Node, p string) { s.Jitter, _ = d.duration(v, p, 0, 10) },
		"in_order": func(v *yaml.Node, p string) { s.InOrder = d.boolean(v, p) },
		"dropout": func(v *yaml.Node, p string) {
			d.fields(v, p, map[string]func(*yaml.Node, string){
				"fraction": func(v *yaml.Node, p string) { s.DropFraction = d.numberIn(v, p, 0, 0.9) },
				"gap":      func(v *yaml.Node, p string) { s.DropGap, _ = d.duration(v, p, 0, 60) },
			})
		},
		"outliers": func(v *yaml.Node, p string) {
			d.fields(v, p, map[string]func(*yaml.Node, string){
				"rate": func(v *yaml.Node, p string) { s.OutlierRate = d.numberIn(v, p, 0, 1) },
				"size": func(v *yaml.Node, p string) { s.OutlierSize = d.length(v, p, 0, 100) },
			})
		},
		"occluders": func(v *yaml.Node, p string) {
			names := map[string]bool{}
			for i, e := range d.seq(v, p) {
				ep := fmt.Sprintf("%s[%d]", p, i)
				o, ok := d.occluder(e, ep)
				if !ok {
					continue
				}
				if names[o.Name] {
					d.errorf(e, ep+".name", "occluder %q given twice", o.Name)
				}
				names[o.Name] = true
				s.Occluders = append(s.Occluders, o)
			}
		},
		"losses": func(v *yaml.Node, p string) {
			for i, e := range d.seq(v, p) {
				ep := fmt.Sprintf("%s[%d]", p, i)
				var l Loss
				var haveAt, haveDur bool
				d.fields(e, ep, map[string]func(*yaml.Node, string){
					"track": func(v *yaml.Node, p string) { l.Track, _ = d.str(v, p) },
					"at":    func(v *yaml.Node, p string) { l.At = d.durRange(v, p, 0, MaxDuration); haveAt = true },
					"duration": func(v *yaml.Node, p string) {
						l.Duration = d.durRange(v, p, 1e-6, MaxDuration)
						haveDur = true
					},
				})
				if !haveAt {
					d.errorf(e, ep+".at", "missing: when the loss begins")
				}
				if !haveDur {
					d.errorf(e, ep+".duration", "missing: how long the loss lasts")
				}
				s.Losses = append(s.Losses, l)
				d.lossNodes = append(d.lossNodes, e)
			}
		},
	})
}

func (d *decoder) stationsSection(n *yaml.Node, path string, st map[string]r3.Vec) {
	own := map[string]bool{}
	for i, e := range d.seq(n, path) {
		ep := fmt.Sprintf("%s[%d]", path, i)
		var name string
		var at r3.Vec
		var haveAt bool
		d.fields(e, ep, map[string]func(*yaml.Node, string){
			"name": func(v *yaml.Node, p string) { name, _ = d.str(v, p) },
			"at":   func(v *yaml.Node, p string) { at, _ = d.point(v, p, 3); haveAt = true },
		})
		switch {
		case name == "":
			d.errorf(e, ep+".name", "missing: every station has a name")
			continue
		case name == "rest":
			d.errorf(e, ep+".name", `"rest" is reserved (a hand's rest position)`)
			continue
		case own[name]:
			d.errorf(e, ep+".name", "station %q given twice", name)
		}
		own[name] = true
		if !haveAt {
			d.errorf(e, ep+".at", "missing: the station's position [x, y, z]")
			continue
		}
		st[name] = at
	}
}

func (d *decoder) operatorsSection(n *yaml.Node, path string, sc *Scenario) {
	items := d.seq(n, path)
	if items == nil {
		return
	}
	if len(items) == 0 {
		d.errorf(n, path, "empty: a scenario needs at least one operator")
	}
	if len(items) > MaxOperators {
		d.errorf(n, path, "more than %d operators", MaxOperators)
		return
	}
	names := map[string]bool{}
	moves := 0
	for i, e := range items {
		ep := fmt.Sprintf("%s[%d]", path, i)
		op := d.operator(e, ep, sc, &moves)
		if op == nil {
			continue
		}
		if names[op.name] {
			d.errorf(e, ep+".name", "operator %q given twice", op.name)
		}
		names[op.name] = true
		sc.operators = append(sc.operators, op)
	}
	if moves > MaxMoves {
		d.errorf(n, path, "the timelines add up to %d movements, more than %d", moves, MaxMoves)
	}
}

func (d *decoder) operator(n *yaml.Node, path string, sc *Scenario, moves *int) *operator {
	op := &operator{swing: defaultSwing}
	var haveAt bool
	var handsNode, timeline *yaml.Node
	// the name first, so that the path of every later error shows it
	if m := d.resolve(n); m != nil && m.Kind == yaml.MappingNode {
		for i := 0; i+1 < len(m.Content); i += 2 {
			if k := d.resolve(m.Content[i]); k.Value == "name" {
				if s, ok := d.str(m.Content[i+1], path+".name"); ok {
					op.name = s
					path += " " + strconv.Quote(s)
				}
			}
		}
	}
	ok := d.fields(n, path, map[string]func(*yaml.Node, string){
		"name":    func(*yaml.Node, string) {},
		"at":      func(v *yaml.Node, p string) { op.at, _ = d.point(v, p, 2); haveAt = true },
		"heading": func(v *yaml.Node, p string) { op.heading = d.numberIn(v, p, -360, 360) * math.Pi / 180 },
		"hands":   func(v *yaml.Node, p string) { handsNode = v },
		"swing": func(v *yaml.Node, p string) {
			d.fields(v, p, map[string]func(*yaml.Node, string){
				"amplitude": func(v *yaml.Node, p string) { op.swing.amp = d.length(v, p, 0, 1) },
				"frequency": func(v *yaml.Node, p string) { op.swing.freq = d.numberIn(v, p, 0, 5) },
			})
		},
		"timeline": func(v *yaml.Node, p string) { timeline = v },
	})
	if !ok {
		return nil
	}
	switch {
	case op.name == "":
		d.errorf(n, path+".name", "missing: every operator has a name")
	case !validName(op.name):
		d.errorf(n, path+".name", "%q: an operator's name is letters, digits, '-', '_' and '.' (tracks are named operator/hand)", op.name)
	}
	if !haveAt {
		d.errorf(n, path+".at", "missing: where the operator stands at the start, [x, y]")
	}
	if handsNode == nil {
		op.hands = append(op.hands, defaultHands...)
	} else {
		names := map[string]bool{}
		items := d.seq(handsNode, path+".hands")
		if items != nil && (len(items) == 0 || len(items) > MaxHands) {
			d.errorf(handsNode, path+".hands", "want 1 to %d hands, got %d", MaxHands, len(items))
		}
		for i, e := range items {
			ep := fmt.Sprintf("%s.hands[%d]", path, i)
			var h hand
			var haveRest bool
			d.fields(e, ep, map[string]func(*yaml.Node, string){
				"name": func(v *yaml.Node, p string) { h.name, _ = d.str(v, p) },
				"rest": func(v *yaml.Node, p string) { h.rest, _ = d.point(v, p, 3); haveRest = true },
			})
			switch {
			case h.name == "":
				d.errorf(e, ep+".name", "missing: every hand has a name")
				continue
			case !validName(h.name):
				d.errorf(e, ep+".name", "%q: a hand's name is letters, digits, '-', '_' and '.'", h.name)
			case names[h.name]:
				d.errorf(e, ep+".name", "hand %q given twice", h.name)
			}
			names[h.name] = true
			if !haveRest {
				for _, dh := range defaultHands {
					if dh.name == h.name {
						h.rest, haveRest = dh.rest, true
					}
				}
				if !haveRest {
					d.errorf(e, ep+".rest", "missing: the hand's rest position in the body frame [forward, left, up]")
				}
			}
			op.hands = append(op.hands, h)
		}
	}
	if timeline == nil {
		d.errorf(n, path+".timeline", "missing: what the operator does")
		return op
	}
	items := d.seq(timeline, path+".timeline")
	for i, e := range items {
		ep := fmt.Sprintf("%s.timeline[%d]", path, i)
		st := d.step(e, ep, sc, op)
		if st == nil {
			continue
		}
		if st.parallel {
			if len(op.steps) == 0 {
				d.errorf(e, ep+".parallel", "the first step cannot run in parallel with a previous one")
			} else if st.kind == KindWalk {
				d.errorf(e, ep+".parallel", "a walk moves the whole operator and cannot run in parallel")
			} else if st.at != nil {
				d.errorf(e, ep+".at", "a parallel step starts with the step before it; give at on that step")
			} else {
				for j := len(op.steps) - 1; j >= 0; j-- {
					prev := op.steps[j]
					if prev.kind == KindWalk {
						d.errorf(e, ep+".parallel", "cannot run in parallel with a walk")
					}
					if prev.hand >= 0 && prev.hand == st.hand {
						d.errorf(e, ep+".hand", "hand %q is already moved by the step it runs in parallel with", op.hands[st.hand].name)
					}
					if !prev.parallel {
						break
					}
				}
			}
		}
		switch st.kind {
		case KindPickPlace:
			*moves += 4 * st.cycles
		default:
			*moves++
		}
		op.steps = append(op.steps, st)
	}
	return op
}

// step decodes one timeline entry: a mapping with exactly one primitive key
// (walk, reach, sweep, pick_place, pause) and optionally at, label, parallel.
func (d *decoder) step(n *yaml.Node, path string, sc *Scenario, op *operator) *step {
	st := &step{hand: -1}
	var prim []string
	var primNode = map[string]*yaml.Node{}
	handler := func(kind string) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) { prim = append(prim, kind); primNode[kind] = v }
	}
	ok := d.fields(n, path, map[string]func(*yaml.Node, string){
		"at": func(v *yaml.Node, p string) {
			r := d.durRange(v, p, 0, MaxDuration)
			st.at = &r
		},
		"label":       func(v *yaml.Node, p string) { st.label, _ = d.str(v, p) },
		"parallel":    func(v *yaml.Node, p string) { st.parallel = d.boolean(v, p) },
		KindWalk:      handler(KindWalk),
		KindReach:     handler(KindReach),
		KindSweep:     handler(KindSweep),
		KindPickPlace: handler(KindPickPlace),
		KindPause:     handler(KindPause),
	})
	if !ok {
		return nil
	}
	if len(prim) != 1 {
		d.errorf(n, path, "want exactly one of walk, reach, sweep, pick_place, pause; got %d", len(prim))
		return nil
	}
	st.kind = prim[0]
	v := primNode[st.kind]
	p := path + "." + st.kind
	var spread r3.Vec // applied once the targets are read, whatever the key order
	switch st.kind {
	case KindPause:
		st.pause = d.durRange(v, p, 0, MaxDuration)
	case KindWalk:
		st.speed = fixed(WalkSpeed)
		var haveTo bool
		d.fields(v, p, map[string]func(*yaml.Node, string){
			"to":       func(v *yaml.Node, p string) { st.to, _ = d.target(v, p, sc, false); haveTo = true },
			"spread":   func(v *yaml.Node, p string) { spread = d.spread(v, p) },
			"standoff": func(v *yaml.Node, p string) { st.standoff = d.length(v, p, 0, 100) },
			"speed": func(v *yaml.Node, p string) {
				st.speed = d.rangeOf(v, p, func(n *yaml.Node, p string) (float64, bool) {
					x, ok := d.number(n, p)
					x *= d.scale
					return x, ok && d.inRange(n, p, x, 0.05, 10, " m/s")
				})
			},
		})
		if !haveTo {
			d.errorf(v, p+".to", "missing: where the operator walks to (a station or [x, y])")
		}
		st.to.spread = spread
	case KindReach, KindSweep, KindPickPlace:
		var haveHand, haveTo, haveFrom, haveCenter, haveAngle, haveDur, haveWidth bool
		st.cycles = 1
		h := map[string]func(*yaml.Node, string){
			"hand": func(v *yaml.Node, p string) {
				name, ok := d.str(v, p)
				if !ok {
					return
				}
				haveHand = true
				for i, h := range op.hands {
					if h.name == name {
						st.hand = i
					}
				}
				if st.hand < 0 {
					names := make([]string, len(op.hands))
					for i, h := range op.hands {
						names[i] = h.name
					}
					d.errorf(v, p, "operator %q has no hand %q (hands: %s)", op.name, name, strings.Join(names, ", "))
				}
			},
			"duration": func(v *yaml.Node, p string) {
				r := d.durRange(v, p, 1e-3, 3600)
				st.timing.dur = &r
				haveDur = true
			},
			"width": func(v *yaml.Node, p string) { st.timing.width = d.length(v, p, 1e-4, 10); haveWidth = true },
		}
		switch st.kind {
		case KindReach, KindPickPlace:
			h["to"] = func(v *yaml.Node, p string) { st.to, _ = d.target(v, p, sc, true); haveTo = true }
			h["spread"] = func(v *yaml.Node, p string) { spread = d.spread(v, p) }
			h["lift"] = func(v *yaml.Node, p string) { st.lift = d.length(v, p, -2, 2) }
		}
		switch st.kind {
		case KindSweep:
			h["center"] = func(v *yaml.Node, p string) {
				t, _ := d.target(v, p, sc, false)
				st.center, haveCenter = t.p, true
			}
			h["angle"] = func(v *yaml.Node, p string) {
				st.angle = d.rangeOf(v, p, func(n *yaml.Node, p string) (float64, bool) {
					x, ok := d.number(n, p)
					return x * math.Pi / 180, ok && d.inRange(n, p, x, -720, 720, " degrees")
				})
				haveAngle = true
			}
			h["rise"] = func(v *yaml.Node, p string) { st.rise = d.length(v, p, -2, 2) }
		case KindPickPlace:
			h["from"] = func(v *yaml.Node, p string) { st.from, _ = d.target(v, p, sc, true); haveFrom = true }
			h["cycles"] = func(v *yaml.Node, p string) {
				if c, ok := d.integer(v, p); ok && d.inRange(v, p, float64(c), 1, MaxMoves/4, "") {
					st.cycles = int(c)
				}
			}
			h["dwell"] = func(v *yaml.Node, p string) { st.dwell = d.durRange(v, p, 0, 3600) }
		}
		d.fields(v, p, h)
		if !haveHand {
			d.errorf(v, p+".hand", "missing: which hand moves")
		}
		if st.kind != KindSweep && !haveTo {
			d.errorf(v, p+".to", "missing: the target (a station, [x, y, z] or rest)")
		}
		if st.kind == KindPickPlace && !haveFrom {
			d.errorf(v, p+".from", "missing: where the hand picks (a station or [x, y, z])")
		}
		if st.kind == KindSweep && !haveCenter {
			d.errorf(v, p+".center", "missing: the vertical axis the hand turns about (a station or [x, y])")
		}
		if st.kind == KindSweep && !haveAngle {
			d.errorf(v, p+".angle", "missing: the angle swept, degrees (positive counter-clockwise)")
		}
		st.to.spread, st.from.spread = spread, spread // pick_place: both ends
		if haveDur && haveWidth {
			d.errorf(v, p+".width", "give duration or width (Fitts' law), not both")
		}
		if !haveWidth {
			st.timing.width = sc.fitts.Width
		}
	}
	return st
}

// target reads a station name, "rest" (when allowRest) or a point. A point
// has three coordinates, or two for a floor position (walk, sweep centre).
func (d *decoder) target(n *yaml.Node, path string, sc *Scenario, allowRest bool) (target, bool) {
	n = d.resolve(n)
	if n != nil && n.Kind == yaml.SequenceNode {
		dims := 3
		if len(n.Content) == 2 && !allowRest {
			dims = 2
		}
		p, ok := d.point(n, path, dims)
		return target{p: p}, ok
	}
	name, ok := d.str(n, path)
	if !ok {
		return target{}, false
	}
	if name == "rest" {
		if !allowRest {
			d.errorf(n, path, `"rest" is a hand's position, not a place to walk to or turn about`)
			return target{}, false
		}
		return target{rest: true}, true
	}
	// Stations are resolved after the stations section; operators are
	// decoded after it, so the map is complete here.
	p, found := sc.stations[name]
	if !found {
		known := make([]string, 0, len(sc.stations))
		for k := range sc.stations {
			known = append(known, k)
		}
		sort.Strings(known)
		hint := "no stations are defined (give -c CELL.yaml, or a stations section)"
		if len(known) > 0 {
			hint = "stations: " + strings.Join(known, ", ")
		}
		d.errorf(n, path, "unknown station %q (%s)", name, hint)
		return target{}, false
	}
	return target{station: name, p: p}, true
}

// spread reads a length (the same ± on every axis) or [sx, sy, sz].
func (d *decoder) spread(n *yaml.Node, path string) r3.Vec {
	n = d.resolve(n)
	if n != nil && n.Kind == yaml.SequenceNode {
		p, _ := d.point(n, path, 3)
		if p.X < 0 || p.Y < 0 || p.Z < 0 {
			d.errorf(n, path, "a spread is not negative")
		}
		return p
	}
	s := d.length(n, path, 0, 10)
	return r3.Vec{X: s, Y: s, Z: s}
}

// checkLosses checks that each planted loss names a track, an operator or
// nothing (all tracks).
func (d *decoder) checkLosses(sc *Scenario) {
	for i, l := range sc.Sensor.Losses {
		if l.Track == "" || i >= len(d.lossNodes) {
			continue
		}
		found := false
		for _, op := range sc.operators {
			if l.Track == op.name {
				found = true
			}
			for _, h := range op.hands {
				if l.Track == op.name+"/"+h.name {
					found = true
				}
			}
		}
		if !found {
			d.errorf(d.lossNodes[i], fmt.Sprintf("sensor.losses[%d].track", i), "no track or operator %q in the scenario", l.Track)
		}
	}
}

// occluder decodes one occluder: a name and one shape section, written as
// a zone's shape in the cell configuration (box, obox, sphere, cylinder,
// capsule, prism) and built by the zones package.
func (d *decoder) occluder(n *yaml.Node, path string) (Occluder, bool) {
	var o Occluder
	var zc zones.ZoneConfig
	var shapeKey string
	var shapeNode *yaml.Node
	fieldNodes := map[string]*yaml.Node{}
	pt := func(dst *zones.Point) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) {
			fieldNodes[p[strings.LastIndexByte(p, '.')+1:]] = v
			q, _ := d.point(v, p, 3)
			*dst = zones.Point{zones.Length(q.X), zones.Length(q.Y), zones.Length(q.Z)}
		}
	}
	ln := func(dst *zones.Length) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) {
			fieldNodes[p[strings.LastIndexByte(p, '.')+1:]] = v
			*dst = zones.Length(d.length(v, p, -maxLength, maxLength))
		}
	}
	angles := func(dst **[3]float64) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) {
			fieldNodes["rpy"] = v
			var a [3]float64
			items := d.seq(v, p)
			if len(items) != 3 {
				d.errorf(v, p, "want [roll, pitch, yaw] in degrees")
				return
			}
			for i, e := range items {
				a[i], _ = d.number(e, fmt.Sprintf("%s[%d]", p, i))
			}
			*dst = &a
		}
	}
	quat := func(dst **[4]float64) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) {
			fieldNodes["quat"] = v
			var q [4]float64
			items := d.seq(v, p)
			if len(items) != 4 {
				d.errorf(v, p, "want a unit quaternion [w, x, y, z]")
				return
			}
			for i, e := range items {
				q[i], _ = d.number(e, fmt.Sprintf("%s[%d]", p, i))
			}
			*dst = &q
		}
	}
	section := func(key string, fields func() map[string]func(*yaml.Node, string)) func(*yaml.Node, string) {
		return func(v *yaml.Node, p string) {
			if shapeKey != "" {
				d.errorf(v, p, "an occluder has one shape; %s is given already", shapeKey)
				return
			}
			shapeKey, shapeNode = key, v
			d.fields(v, p, fields())
		}
	}
	nerr := len(d.errs)
	ok := d.fields(n, path, map[string]func(*yaml.Node, string){
		"name": func(v *yaml.Node, p string) { o.Name, _ = d.str(v, p) },
		"box": section("box", func() map[string]func(*yaml.Node, string) {
			zc.Box = &zones.BoxConfig{}
			return map[string]func(*yaml.Node, string){"min": pt(&zc.Box.Min), "max": pt(&zc.Box.Max)}
		}),
		"obox": section("obox", func() map[string]func(*yaml.Node, string) {
			zc.OBox = &zones.OBoxConfig{}
			return map[string]func(*yaml.Node, string){"center": pt(&zc.OBox.Center), "size": pt(&zc.OBox.Size),
				"rpy": angles(&zc.OBox.RPY), "quat": quat(&zc.OBox.Quat)}
		}),
		"sphere": section("sphere", func() map[string]func(*yaml.Node, string) {
			zc.Sphere = &zones.SphereConfig{}
			return map[string]func(*yaml.Node, string){"center": pt(&zc.Sphere.Center), "radius": ln(&zc.Sphere.Radius)}
		}),
		"cylinder": section("cylinder", func() map[string]func(*yaml.Node, string) {
			zc.Cylinder = &zones.CylinderConfig{}
			return map[string]func(*yaml.Node, string){"a": pt(&zc.Cylinder.A), "b": pt(&zc.Cylinder.B), "radius": ln(&zc.Cylinder.Radius)}
		}),
		"capsule": section("capsule", func() map[string]func(*yaml.Node, string) {
			zc.Capsule = &zones.CapsuleConfig{}
			return map[string]func(*yaml.Node, string){"a": pt(&zc.Capsule.A), "b": pt(&zc.Capsule.B), "radius": ln(&zc.Capsule.Radius)}
		}),
		"prism": section("prism", func() map[string]func(*yaml.Node, string) {
			zc.Prism = &zones.PrismConfig{}
			return map[string]func(*yaml.Node, string){
				"footprint": func(v *yaml.Node, p string) {
					fieldNodes["footprint"] = v
					for i, e := range d.seq(v, p) {
						ep := fmt.Sprintf("%s[%d]", p, i)
						fieldNodes[fmt.Sprintf("footprint[%d]", i)] = e
						q, _ := d.point(e, ep, 2)
						zc.Prism.Footprint = append(zc.Prism.Footprint, [2]zones.Length{zones.Length(q.X), zones.Length(q.Y)})
					}
				},
				"zmin": ln(&zc.Prism.ZMin),
				"zmax": ln(&zc.Prism.ZMax),
			}
		}),
	})
	if !ok {
		return o, false
	}
	if o.Name == "" {
		d.errorf(n, path+".name", "missing: every occluder has a name")
	}
	if shapeKey == "" {
		d.errorf(n, path, "no shape: give one of box, obox, sphere, cylinder, capsule, prism")
		return o, false
	}
	if len(d.errs) > nerr {
		return o, false // the shape's fields are reported already
	}
	shape, err := zc.Shape()
	if err != nil {
		at, field := shapeNode, path+"."+shapeKey
		var se *zones.ShapeError
		if errors.As(err, &se) {
			if fn := fieldNodes[se.Field]; fn != nil {
				at = fn
			}
			if se.Field != "" {
				field += "." + se.Field
			}
			d.errorf(at, field, "%s", se.Msg)
		} else {
			d.errorf(at, field, "%v", err)
		}
		return o, false
	}
	o.Shape = shape
	return o, o.Name != ""
}

// validName reports whether s is a usable operator or hand name: 1 to 31
// ASCII letters, digits, '-', '_' or '.', so that a track id
// "operator/hand" is safe in a CSV field, an MQTT topic and a file name.
func validName(s string) bool {
	if len(s) == 0 || len(s) > 31 {
		return false
	}
	for _, c := range []byte(s) {
		switch {
		case c >= 'a' && c <= 'z', c >= 'A' && c <= 'Z', c >= '0' && c <= '9', c == '-', c == '_', c == '.':
		default:
			return false
		}
	}
	return true
}
