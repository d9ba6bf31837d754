package zones

import (
	"errors"
	"sort"
	"strings"

	"gopkg.in/yaml.v3"
)

// shapeKeys are the shape sections of a zone, in the order of ZoneConfig.
var shapeKeys = []string{"box", "obox", "sphere", "cylinder", "capsule", "prism"}

// requiredShapeKeys are the keys each shape section must give.
var requiredShapeKeys = map[string][]string{
	"box":      {"min", "max"},
	"obox":     {"center", "size"},
	"sphere":   {"center", "radius"},
	"cylinder": {"a", "b", "radius"},
	"capsule":  {"a", "b", "radius"},
	"prism":    {"footprint", "zmin", "zmax"},
}

// shapeSection returns the key of the zone's single shape section, or ""
// when it has none or several.
func (z *ZoneConfig) shapeSection() string {
	set := z.shapeSections()
	if len(set) != 1 {
		return ""
	}
	return set[0]
}

func (z *ZoneConfig) shapeSections() []string {
	var set []string
	if z.Box != nil {
		set = append(set, "box")
	}
	if z.OBox != nil {
		set = append(set, "obox")
	}
	if z.Sphere != nil {
		set = append(set, "sphere")
	}
	if z.Cylinder != nil {
		set = append(set, "cylinder")
	}
	if z.Capsule != nil {
		set = append(set, "capsule")
	}
	if z.Prism != nil {
		set = append(set, "prism")
	}
	return set
}

// checkZoneShape checks that a zone has exactly one complete shape section
// and that the shape can be built (the geometry constructors' own checks:
// positive sizes, a simple footprint, a unit quaternion, ...).
func checkZoneShape(zc *Checker, z *ZoneConfig) {
	set := z.shapeSections()
	switch len(set) {
	case 0:
		zc.Errorf("", "no shape: give exactly one of %s", strings.Join(shapeKeys, ", "))
		return
	case 1:
	default:
		// Report at every shape key after the first one in the file. This
		// is not a consequence of a bad value inside a section, so it is
		// reported even when one of them also has decoding errors.
		st := zc.st
		key := func(k string) yaml.Node { return st.keyPos[joinPath(zc.base, k)] }
		sort.SliceStable(set, func(i, j int) bool {
			a, b := key(set[i]), key(set[j])
			return a.Line < b.Line || a.Line == b.Line && a.Column < b.Column
		})
		first := key(set[0])
		for _, k := range set[1:] {
			at := key(k)
			st.addErr(at.Line, at.Column, joinPath(zc.base, k),
				"a zone has exactly one shape, this one also has %s (line %d)", set[0], first.Line)
		}
		return
	}
	kind := set[0]
	sc := zc.At(kind)
	if zc.st.related(sc.base) {
		return // a key or value in the section is already reported
	}
	missing := false
	for _, k := range requiredShapeKeys[kind] {
		if !sc.Has(k) {
			sc.Errorf(k, "missing (%s needs %s)", kind, strings.Join(requiredShapeKeys[kind], ", "))
			missing = true
		}
	}
	if z.OBox != nil && z.OBox.RPY != nil && z.OBox.Quat != nil {
		sc.Errorf("quat", "give the rotation as rpy or as quat, not both")
		missing = true
	}
	if missing {
		return
	}
	if _, err := z.shape(); err != nil {
		var se *ShapeError
		if errors.As(err, &se) {
			sc.Errorf(se.Field, "%s", se.Msg)
		} else {
			sc.Errorf("", "%v", err)
		}
	}
}
