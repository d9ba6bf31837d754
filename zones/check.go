package zones

import (
	"reflect"
	"sort"
	"strconv"
	"strings"
)

// UnitScaler is implemented by configuration types with fields the loader
// cannot convert to SI units itself: plain numbers in the file's length
// unit, or in a power of it (a noise spectral density in unit²/s³, say).
// The loader calls ScaleUnits(metresPerUnit) on every struct value whose
// pointer implements it, once, right after decoding and before Defaults;
// metresPerUnit is 1 for a file in m and 0.001 for mm. Length, Point and
// Speed fields are converted already and must not be scaled again.
type UnitScaler interface {
	ScaleUnits(metresPerUnit float64)
}

// Defaulter is implemented by configuration types that fill in defaults for
// what the file left out. The loader calls Defaults on every struct value of
// the configuration whose pointer implements it (a section, a list element,
// a nested struct), after decoding and before any check, parents before
// children. Values are already in metres, metres per second and
// time.Duration units, and defaults must be written in those units too.
//
//	func (p *PolicyConfig) Defaults() {
//		if p.MaxSpeed == 0 {
//			p.MaxSpeed = 10 // m/s
//		}
//	}
type Defaulter interface {
	Defaults()
}

// Checkable is implemented by configuration types that check their own
// values. The loader calls Check on every struct value of the
// configuration whose pointer implements it, after all defaults are
// applied, with a Checker rooted at that value: field paths given to
// c.Errorf are relative to it.
//
//	func (r *RuleConfig) Check(c *zones.Checker) {
//		if r.Scale < 0 || r.Scale > 1 {
//			c.Errorf("scale", "must be in [0, 1], got %g", r.Scale)
//		}
//	}
//
// reports `cell.yaml:40:14: policy.rules[1] "slow": scale: must be in [0, 1], got 1.5`.
type Checkable interface {
	Check(c *Checker)
}

// Checker collects the problems a Check method finds and attaches to each
// the position, in the file, of the field it names. A Checker is rooted at
// the value being checked; the zero Checker is not usable, the loader makes
// them.
type Checker struct {
	// Config is the whole configuration (defaults applied), for checks
	// that refer to other sections. Do not modify it in Check.
	Config *Config
	// Scale is the number of metres per unit of the file (1 for m, 0.001
	// for mm). Lengths, points and speeds are already converted; Scale is
	// for fields the loader cannot convert itself (a plain float64 in file
	// units, such as a noise density).
	Scale float64

	base string
	st   *loadState
}

// Errorf reports a problem with a field. field is a path relative to the
// checked value, written as in the file: "scale", "rules[1].scale",
// "topics.prefix", "[2]"; "" names the value itself. The error carries the
// position of that field's value when the file gives it, otherwise the
// position of its nearest enclosing key (for a field left out and
// defaulted, say). Problems with a field whose decoding already failed are
// dropped (it has been reported).
func (c *Checker) Errorf(field, format string, args ...any) {
	path := joinPath(c.base, field)
	if c.st.related(path) {
		return
	}
	line, col := c.st.posOf(path)
	c.st.addErr(line, col, path, format, args...)
}

// Has reports whether field (relative to the checked value) was written in
// the file with a non-empty value, to tell a value left out from one
// written as zero.
func (c *Checker) Has(field string) bool {
	path := joinPath(c.base, field)
	_, ok := c.st.valPos[path]
	return ok && !c.st.nulls[path]
}

// At returns a Checker rooted at a field of the checked value, e.g.
// c.At("rules[1]").
func (c *Checker) At(field string) *Checker {
	return &Checker{Config: c.Config, Scale: c.Scale, base: joinPath(c.base, field), st: c.st}
}

// Path is the path of the checked value from the top of the file, e.g.
// "policy.rules[1]" ("" for the whole file).
func (c *Checker) Path() string { return c.base }

// visit calls fn on every addressable struct value under v, parents first.
// Maps are not visited (their values are not addressable).
func visit(v reflect.Value, path string, fn func(v reflect.Value, path string)) {
	switch v.Kind() {
	case reflect.Pointer:
		if !v.IsNil() {
			visit(v.Elem(), path, fn)
		}
	case reflect.Struct:
		fn(v, path)
		for _, f := range structFields(v.Type()) {
			visit(v.FieldByIndex(f.index), joinPath(path, f.name), fn)
		}
	case reflect.Slice, reflect.Array:
		if k := v.Type().Elem().Kind(); k != reflect.Struct && k != reflect.Pointer {
			return
		}
		for i := 0; i < v.Len(); i++ {
			visit(v.Index(i), joinPath(path, "["+strconv.Itoa(i)+"]"), fn)
		}
	}
}

func (st *loadState) applyDefaults(root reflect.Value) {
	visit(root, "", func(v reflect.Value, _ string) {
		if !v.CanAddr() {
			return
		}
		if u, ok := v.Addr().Interface().(UnitScaler); ok {
			u.ScaleUnits(st.scale)
		}
	})
	visit(root, "", func(v reflect.Value, _ string) {
		if !v.CanAddr() {
			return
		}
		if d, ok := v.Addr().Interface().(Defaulter); ok {
			d.Defaults()
		}
	})
}

func (st *loadState) runChecks(root reflect.Value, cfg *Config, own func(*Checker)) {
	top := &Checker{Config: cfg, Scale: st.scale, st: st}
	if own != nil {
		own(top)
	}
	visit(root, "", func(v reflect.Value, path string) {
		if !v.CanAddr() {
			return
		}
		if ck, ok := v.Addr().Interface().(Checkable); ok {
			ck.Check(top.At(path))
		}
	})
}

// checkCell runs the checks of the parts of the file this package owns:
// the cell name, zones (names, margins, shapes, frame and rule
// references) and stations.
func checkCell(c *Checker, cfg *Config) {
	switch {
	case !c.Has("cell"):
		c.Errorf("cell", "missing: name the cell, e.g. cell: pl3-palletiser")
	case strings.TrimSpace(cfg.Cell) == "":
		c.Errorf("cell", "must not be empty")
	case strings.ContainsAny(cfg.Cell, "/+#") || strings.ContainsFunc(cfg.Cell, isSpaceOrControl):
		c.Errorf("cell", "%q: the cell name goes into MQTT topics and must not contain '/', '+', '#', spaces or control characters", cfg.Cell)
	}

	if len(cfg.Zones) == 0 {
		c.Errorf("zones", "no zones: a cell configuration needs at least one zone")
	}
	frames := map[string]bool{}
	for _, f := range cfg.Robot.Frames {
		if f.Name != "" {
			frames[f.Name] = true
		}
	}
	rules := map[string]bool{}
	for _, r := range cfg.Policy.Rules {
		if r.Name != "" {
			rules[r.Name] = true
		}
	}
	firstZone := map[string]int{}
	for i := range cfg.Zones {
		z := &cfg.Zones[i]
		zc := c.At("zones[" + strconv.Itoa(i) + "]")
		switch {
		case !zc.Has("name"):
			zc.Errorf("name", "missing: every zone needs a name")
		case strings.TrimSpace(z.Name) == "":
			zc.Errorf("name", "must not be empty")
		case strings.ContainsFunc(z.Name, isControl):
			zc.Errorf("name", "must not contain control characters")
		default:
			if j, dup := firstZone[z.Name]; dup {
				line, _ := c.st.posOf("zones[" + strconv.Itoa(j) + "].name")
				zc.Errorf("name", "duplicate zone name (also zones[%d], line %d)", j, line)
			} else {
				firstZone[z.Name] = i
			}
		}
		if z.Margin < 0 {
			zc.Errorf("margin", "must be >= 0, got %g m", float64(z.Margin))
		}
		if z.Frame != "" && !frames[z.Frame] {
			if len(frames) == 0 {
				zc.Errorf("frame", "unknown frame %q (robot.frames defines none)", z.Frame)
			} else {
				zc.Errorf("frame", "unknown frame %q (robot.frames has %s)", z.Frame, quotedKeys(frames))
			}
		}
		seenRule := map[string]bool{}
		for k, r := range z.Rules {
			field := "rules[" + strconv.Itoa(k) + "]"
			switch {
			case r == "":
				zc.Errorf(field, "must not be empty")
			case seenRule[r]:
				zc.Errorf(field, "rule %q listed twice", r)
			case len(rules) == 0:
				zc.Errorf(field, "unknown rule %q (policy.rules defines no named rules)", r)
			case !rules[r]:
				zc.Errorf(field, "unknown rule %q (policy.rules has %s)", r, quotedKeys(rules))
			}
			seenRule[r] = true
		}
		checkZoneShape(zc, z)
	}

	firstStation := map[string]int{}
	for i, s := range cfg.Stations {
		sc := c.At("stations[" + strconv.Itoa(i) + "]")
		switch {
		case !sc.Has("name"):
			sc.Errorf("name", "missing: every station needs a name")
		case strings.TrimSpace(s.Name) == "":
			sc.Errorf("name", "must not be empty")
		default:
			if j, dup := firstStation[s.Name]; dup {
				line, _ := c.st.posOf("stations[" + strconv.Itoa(j) + "].name")
				sc.Errorf("name", "duplicate station name (also stations[%d], line %d)", j, line)
			} else {
				firstStation[s.Name] = i
			}
		}
		if !sc.Has("at") {
			sc.Errorf("at", "missing: give the station's position [x, y, z]")
		}
	}
}

func isControl(r rune) bool { return r < 0x20 || r == 0x7f }

func isSpaceOrControl(r rune) bool { return isControl(r) || r == ' ' }

// quotedKeys lists a set's keys, sorted and quoted, for messages.
func quotedKeys(set map[string]bool) string {
	keys := make([]string, 0, len(set))
	for k := range set {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for i, k := range keys {
		keys[i] = strconv.Quote(k)
	}
	return strings.Join(keys, ", ")
}
