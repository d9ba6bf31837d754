package c3d

import (
	"fmt"
	"strings"
)

// Parameter types, the byte after the offset word of a parameter record.
const (
	TypeChar  = -1
	TypeByte  = 1
	TypeInt   = 2
	TypeFloat = 4
)

// Group is one group of the parameter section.
type Group struct {
	ID     int // 1..127
	Name   string
	Desc   string
	Locked bool
	Offset int64 // file offset of the group record
	Params []*Param
}

// Param is one parameter: its type, dimensions and raw data, decoded on
// demand by the typed getters (which use the file's processor format).
type Param struct {
	Group  string // name of the group it belongs to
	Name   string
	Desc   string
	Locked bool
	Type   int   // TypeChar, TypeByte, TypeInt or TypeFloat
	Dims   []int // empty for a scalar
	Data   []byte
	Offset int64 // file offset of the parameter record
	// DataOffset is the file offset of Data[0].
	DataOffset int64

	groupID int
	proc    Processor
}

// FullName is "GROUP:NAME".
func (p *Param) FullName() string { return p.Group + ":" + p.Name }

// Len is the number of elements (the product of the dimensions; for char
// parameters this counts characters).
func (p *Param) Len() int {
	if p.Type == 0 {
		return 0
	}
	return len(p.Data) / abs(p.Type)
}

func (p *Param) errf(format string, a ...any) error {
	return &Error{Section: fmt.Sprintf("parameter %q", p.FullName()), Offset: p.Offset, Msg: fmt.Sprintf(format, a...)}
}

// Ints returns the values of an integer or byte parameter (bytes are
// unsigned, 0..255; int16 values are signed). A real parameter is accepted
// when every value is a whole number.
func (p *Param) Ints() ([]int, error) {
	out := make([]int, p.Len())
	switch p.Type {
	case TypeByte:
		for i := range out {
			out[i] = int(p.Data[i])
		}
	case TypeInt:
		for i := range out {
			out[i] = int(p.proc.i16(p.Data[2*i:]))
		}
	case TypeFloat:
		for i := range out {
			v := p.proc.f32(p.Data[4*i:])
			if v != float64(int(v)) || v > 1<<31 || v < -(1<<31) {
				return nil, p.errf("value %d is %v, not a whole number", i, v)
			}
			out[i] = int(v)
		}
	default:
		return nil, p.errf("is of type %s, not a number", typeName(p.Type))
	}
	return out, nil
}

// Int returns the first value of Ints.
func (p *Param) Int() (int, error) {
	v, err := p.Ints()
	if err != nil {
		return 0, err
	}
	if len(v) == 0 {
		return 0, p.errf("has no values")
	}
	return v[0], nil
}

// Count returns the first value of an integer parameter read as an
// unsigned 16-bit number, as C3D counts and block numbers (POINT:USED,
// POINT:DATA_START, POINT:FRAMES) are when they pass 32767. Real
// parameters are accepted when whole and non-negative.
func (p *Param) Count() (int, error) {
	v, err := p.Int()
	if err != nil {
		return 0, err
	}
	if p.Type == TypeInt && v < 0 {
		v += 1 << 16
	}
	if v < 0 {
		return 0, p.errf("is %d, must not be negative", v)
	}
	return v, nil
}

// Floats returns the values of a real parameter; integer and byte
// parameters are converted.
func (p *Param) Floats() ([]float64, error) {
	if p.Type != TypeFloat {
		iv, err := p.Ints()
		if err != nil {
			return nil, err
		}
		out := make([]float64, len(iv))
		for i, v := range iv {
			out[i] = float64(v)
		}
		return out, nil
	}
	out := make([]float64, p.Len())
	for i := range out {
		out[i] = p.proc.f32(p.Data[4*i:])
	}
	return out, nil
}

// Float returns the first value of Floats.
func (p *Param) Float() (float64, error) {
	v, err := p.Floats()
	if err != nil {
		return 0, err
	}
	if len(v) == 0 {
		return 0, p.errf("has no values")
	}
	return v[0], nil
}

// Strings returns the strings of a char parameter: the first dimension is
// the length of each string, the others multiply to their number (no
// dimension: one character; one dimension: one string). Trailing spaces
// and NUL bytes are removed.
func (p *Param) Strings() ([]string, error) {
	if p.Type != TypeChar {
		return nil, p.errf("is of type %s, not char", typeName(p.Type))
	}
	w := 1
	if len(p.Dims) > 0 {
		w = p.Dims[0]
	}
	if w == 0 {
		return nil, nil
	}
	n := len(p.Data) / w
	out := make([]string, n)
	for i := range out {
		out[i] = strings.TrimRight(string(p.Data[i*w:(i+1)*w]), " \x00")
	}
	return out, nil
}

// String returns the first string of Strings ("" when there is none).
func (p *Param) String() (string, error) {
	s, err := p.Strings()
	if err != nil || len(s) == 0 {
		return "", err
	}
	return s[0], nil
}

func typeName(t int) string {
	switch t {
	case TypeChar:
		return "char"
	case TypeByte:
		return "byte"
	case TypeInt:
		return "int16"
	case TypeFloat:
		return "real"
	}
	return fmt.Sprintf("%d", t)
}

func abs(v int) int {
	if v < 0 {
		return -v
	}
	return v
}

// parseParams reads the records of the parameter section sec, which starts
// at file offset base (sec[0:4] is the section header, already checked).
func parseParams(sec []byte, base int64, proc Processor) ([]*Group, map[string]*Param, error) {
	var (
		groups  []*Group
		byID    = map[int]*Group{}
		params  []*Param
		pos     = 4
		records int
	)
	fail := func(section string, at int, format string, a ...any) error {
		return &Error{Section: section, Offset: base + int64(at), Msg: fmt.Sprintf(format, a...)}
	}
	for pos+2 <= len(sec) {
		records++
		nameLen := int(int8(sec[pos]))
		id := int(int8(sec[pos+1]))
		if nameLen == 0 || id == 0 {
			break // end of the parameter records
		}
		rec := pos
		where := fmt.Sprintf("parameter section record %d", records)
		locked := nameLen < 0
		n := abs(nameLen)
		if pos+2+n+2 > len(sec) {
			return nil, nil, fail(where, rec, "record runs past the end of the section (byte %d)", base+int64(len(sec)))
		}
		name := string(sec[pos+2 : pos+2+n])
		if !validName(name) {
			return nil, nil, fail(where, rec, "name %q holds a space, control or non-ASCII byte", name)
		}
		offPos := pos + 2 + n
		next := int(proc.i16(sec[offPos:]))
		if next < 0 {
			return nil, nil, fail(where, offPos, "%q: offset to the next record is negative (%d)", name, next)
		}
		body := offPos + 2
		if id < 0 {
			where = fmt.Sprintf("group %d %q", -id, name)
			if body+1 > len(sec) {
				return nil, nil, fail(where, body, "description length runs past the end of the section")
			}
			dl := int(sec[body])
			if body+1+dl > len(sec) {
				return nil, nil, fail(where, body, "description (%d bytes) runs past the end of the section", dl)
			}
			if g := byID[-id]; g != nil {
				return nil, nil, fail(where, rec, "group id %d already used by group %q", -id, g.Name)
			}
			g := &Group{ID: -id, Name: name, Desc: string(sec[body+1 : body+1+dl]), Locked: locked, Offset: base + int64(rec)}
			byID[-id] = g
			groups = append(groups, g)
		} else {
			where = fmt.Sprintf("parameter %q of group %d", name, id)
			if body+2 > len(sec) {
				return nil, nil, fail(where, body, "type and dimension count run past the end of the section")
			}
			typ := int(int8(sec[body]))
			if typ != TypeChar && typ != TypeByte && typ != TypeInt && typ != TypeFloat {
				return nil, nil, fail(where, body, "type %d unknown (want -1 char, 1 byte, 2 int16 or 4 real)", typ)
			}
			nd := int(sec[body+1])
			if nd > 7 {
				return nil, nil, fail(where, body+1, "%d dimensions (at most 7)", nd)
			}
			dpos := body + 2
			if dpos+nd > len(sec) {
				return nil, nil, fail(where, dpos, "dimensions run past the end of the section")
			}
			dims := make([]int, nd)
			size := abs(typ)
			for i := range dims {
				dims[i] = int(sec[dpos+i])
				size *= dims[i]
				if size > len(sec) { // also bounds the product: no overflow, no huge allocation
					return nil, nil, fail(where, dpos+i, "dimensions %v need more bytes than the whole section holds (%d)", sec[dpos:dpos+nd], len(sec))
				}
			}
			data := dpos + nd
			if data+size+1 > len(sec) {
				return nil, nil, fail(where, data, "data (%d bytes) and description length run past the end of the section (byte %d)", size, base+int64(len(sec)))
			}
			dl := int(sec[data+size])
			if data+size+1+dl > len(sec) {
				return nil, nil, fail(where, data+size, "description (%d bytes) runs past the end of the section", dl)
			}
			params = append(params, &Param{
				Name: name, Desc: string(sec[data+size+1 : data+size+1+dl]), Locked: locked,
				Type: typ, Dims: dims, Data: sec[data : data+size : data+size],
				Offset: base + int64(rec), DataOffset: base + int64(data),
				groupID: id, proc: proc,
			})
		}
		if next == 0 {
			break // last record
		}
		pos = offPos + next
	}
	byName := make(map[string]*Param, len(params))
	for _, p := range params {
		g := byID[p.groupID]
		if g == nil {
			// A parameter whose group is not defined: keep it under a
			// synthetic group so that nothing is lost.
			g = &Group{ID: p.groupID, Name: fmt.Sprintf("GROUP%d", p.groupID), Offset: -1}
			byID[p.groupID] = g
			groups = append(groups, g)
		}
		p.Group = g.Name
		g.Params = append(g.Params, p)
		key := strings.ToUpper(p.Group + ":" + p.Name)
		if _, dup := byName[key]; !dup { // the first definition wins
			byName[key] = p
		}
	}
	return groups, byName, nil
}

// validName accepts printable ASCII without spaces. The format asks for
// A-Z, 0-9 and '_'; writers are not all that strict, so only bytes that
// cannot belong to a name are refused.
func validName(s string) bool {
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c <= ' ' || c > '~' {
			return false
		}
	}
	return true
}
