package zones

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"reflect"
	"regexp"
	"strconv"
	"strings"
	"sync"
	"time"
	"unicode/utf8"

	"gopkg.in/yaml.v3"
)

// Load reads and checks the cell configuration file at path. It is Parse on
// the file's bytes. Errors about the contents are a *ConfigErrors.
func Load(path string) (*Config, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("cell configuration: %w", err)
	}
	return Parse(data, path)
}

// Parse decodes and checks a cell configuration held in data; name is the
// file name used in messages and stored in Config.Source. When the
// configuration is not valid it returns a nil Config and a *ConfigErrors
// listing every problem with its position.
//
// Loading goes in four steps, and every problem found in any step is
// collected, so that one run reports all of them:
//
//  1. YAML syntax. A file that is not well-formed YAML stops here (there is
//     no tree to look at); the parser's message and line are reported.
//  2. Decoding. The YAML tree is walked against the Config structs by their
//     yaml tags. Unknown keys, keys given twice, values of the wrong type,
//     NaN or infinite numbers, negative or malformed durations and bad
//     units are reported with the position of the key or value. Lengths,
//     points and speeds are converted to metres (per second) here, so
//     everything after this step sees SI units. Anchors, aliases and merge
//     keys (<<) are supported.
//  3. Units and defaults. Every struct value of the configuration whose
//     pointer implements UnitScaler gets ScaleUnits called, for fields in
//     file units the loader cannot convert. Then every one whose pointer
//     implements Defaulter gets Defaults called, parents before children
//     (so list elements a parent adds get their own defaults). Both see
//     values already converted to metres; defaults are written in metres.
//  4. Checks. The cell's own checks (cell name, zones, shapes, stations,
//     frame and rule references) run, then every struct value whose
//     pointer implements Checkable gets Check called with a Checker rooted
//     at that value. Checks see defaults applied.
//
// Checks about a field whose decoding already failed are dropped, so one
// mistake gives one message.
func Parse(data []byte, name string) (*Config, error) {
	sum := sha256.Sum256(data)
	cfg := &Config{Source: name, Digest: hex.EncodeToString(sum[:])}
	st := newLoadState(name)
	st.load(data, cfg, cfg, func(c *Checker) { checkCell(c, cfg) })
	if cfg.Units == "" {
		cfg.Units = "m"
	}
	if len(st.errs) > 0 {
		return nil, st.configErrors()
	}
	return cfg, nil
}

func newLoadState(name string) *loadState {
	return &loadState{
		file:   name,
		scale:  1,
		valPos: map[string]yaml.Node{},
		keyPos: map[string]yaml.Node{},
		nulls:  map[string]bool{},
		labels: map[string]string{},
	}
}

// load runs the four steps on data into the struct v points to. cfg is
// what Checkers show as Config; own runs the checks of the file's owner
// before the types' Check methods.
func (st *loadState) load(data []byte, v any, cfg *Config, own func(*Checker)) {
	root := st.parseYAML(data)
	if root == nil {
		return
	}
	rv := reflect.ValueOf(v).Elem()
	st.decodeRoot(root, rv)
	if st.bad[""] {
		return
	}
	st.applyDefaults(rv)
	st.runChecks(rv, cfg, own)
}

// maxValues bounds the number of YAML values the decoder visits, so that a
// small file cannot make it work for long through nested aliases.
const maxValues = 1 << 20

type rawError struct {
	line, col int
	path      string
	field     bool // path is a field path (rendered with labels)
	msg       string
}

type loadState struct {
	file  string
	scale float64 // metres per file unit

	// Positions of the values (and keys) written in the file, by field
	// path ("zones[2].sphere.radius"). Only Line and Column are used.
	valPos map[string]yaml.Node
	keyPos map[string]yaml.Node
	nulls  map[string]bool   // keys written with an empty (null) value
	labels map[string]string // list element path -> its name, for messages

	errs      []rawError
	bad       map[string]bool // paths with a decoding error
	badWithin map[string]bool // those paths and all their ancestors
	expanding map[*yaml.Node]bool
	visited   int
	budgetHit bool
}

func (st *loadState) addErr(line, col int, path, format string, args ...any) {
	if line < 1 {
		line = 1
	}
	st.errs = append(st.errs, rawError{line: line, col: col, path: path, field: true, msg: fmt.Sprintf(format, args...)})
}

// decodeErr reports a problem with the value n at path and marks the path
// as bad so that later checks stay quiet about it.
func (st *loadState) decodeErr(n *yaml.Node, path, format string, args ...any) {
	if st.bad == nil {
		st.bad = map[string]bool{}
		st.badWithin = map[string]bool{}
	}
	st.bad[path] = true
	for p := path; ; p = parentPath(p) {
		st.badWithin[p] = true
		if p == "" {
			break
		}
	}
	st.addErr(n.Line, n.Column, path, format, args...)
}

// related reports whether a decoding error was found at path, at one of its
// ancestors or inside it.
func (st *loadState) related(path string) bool {
	if st.badWithin[path] {
		return true
	}
	for p := path; ; p = parentPath(p) {
		if st.bad[p] {
			return true
		}
		if p == "" {
			return false
		}
	}
}

// isPrefixPath reports whether p is q or an ancestor of q.
func isPrefixPath(p, q string) bool {
	if p == "" {
		return true
	}
	if !strings.HasPrefix(q, p) {
		return false
	}
	return len(q) == len(p) || q[len(p)] == '.' || q[len(p)] == '['
}

// joinPath appends a field name or an index ("[3]") to a path.
func joinPath(base, field string) string {
	switch {
	case field == "":
		return base
	case base == "":
		return field
	case field[0] == '[':
		return base + field
	default:
		return base + "." + field
	}
}

// parentPath drops the last segment of a path ("a.b[2]" -> "a.b",
// "a.b" -> "a"). The result is always shorter, whatever the keys hold.
func parentPath(p string) string {
	if strings.HasSuffix(p, "]") {
		if i := strings.LastIndexByte(p, '['); i >= 0 && isDigits(p[i+1:len(p)-1]) {
			return p[:i]
		}
	}
	if i := strings.LastIndexByte(p, '.'); i >= 0 {
		return p[:i]
	}
	return ""
}

func isDigits(s string) bool {
	for _, r := range s {
		if r < '0' || r > '9' {
			return false
		}
	}
	return s != ""
}

// posOf is the position of the value at path or, when the file does not
// give it, of the key (or, for a list element, the value) of its nearest
// written ancestor.
func (st *loadState) posOf(path string) (line, col int) {
	if n, ok := st.valPos[path]; ok {
		return n.Line, n.Column
	}
	for path != "" {
		path = parentPath(path)
		if n, ok := st.keyPos[path]; ok {
			return n.Line, n.Column
		}
		if n, ok := st.valPos[path]; ok {
			return n.Line, n.Column
		}
	}
	return 1, 1
}

// render turns a field path into the form shown to people: the deepest list
// element that has a name is shown with it, e.g.
// `zones[2] "press": sphere.radius`.
func (st *loadState) render(path string) string {
	for i := len(path) - 1; i >= 0; i-- {
		if path[i] != ']' {
			continue
		}
		label, ok := st.labels[path[:i+1]]
		if !ok {
			continue
		}
		head := path[:i+1] + " " + strconv.Quote(label)
		rest := strings.TrimPrefix(path[i+1:], ".")
		if rest == "" {
			return head
		}
		return head + ": " + rest
	}
	return path
}

func (st *loadState) configErrors() *ConfigErrors {
	out := make([]ConfigError, len(st.errs))
	for i, e := range st.errs {
		field := e.path
		if e.field {
			field = st.render(e.path)
		}
		out[i] = ConfigError{File: st.file, Line: e.line, Col: e.col, Field: field, Msg: e.msg}
	}
	es := ConfigErrors(sortErrors(out))
	return &es
}

// ---- step 1: YAML syntax ----

var yamlLineRE = regexp.MustCompile(`^yaml: line (\d+): (.*)$`)

// parseYAML returns the root node of the single document in data, or nil
// after reporting why there is none.
func (st *loadState) parseYAML(data []byte) (root *yaml.Node) {
	defer func() {
		// yaml.v3 reports its own errors by panicking internally and
		// recovering; anything else escaping it is a parser bug, which
		// must not take the caller down with it.
		if r := recover(); r != nil {
			line, col := badByte(data)
			st.addErr(line, col, "", "the YAML parser failed on this file (%v)", r)
			root = nil
		}
	}()
	dec := yaml.NewDecoder(bytes.NewReader(data))
	var doc yaml.Node
	err := dec.Decode(&doc)
	if errors.Is(err, io.EOF) {
		st.addErr(1, 1, "", "the file is empty (a cell configuration needs at least cell and zones)")
		return nil
	}
	if err != nil {
		st.syntaxErr(err, data)
		return nil
	}
	var next yaml.Node
	switch err := dec.Decode(&next); {
	case errors.Is(err, io.EOF):
	case err != nil:
		st.syntaxErr(err, data)
		return nil
	default:
		line, col := next.Line, next.Column
		if len(next.Content) > 0 {
			line, col = next.Content[0].Line, next.Content[0].Column
		}
		st.addErr(line, col, "", "a second YAML document starts here; a cell configuration is one document")
		return nil
	}
	root = &doc
	if root.Kind == yaml.DocumentNode {
		if len(root.Content) == 0 {
			st.addErr(1, 1, "", "the file is empty (a cell configuration needs at least cell and zones)")
			return nil
		}
		root = root.Content[0]
	}
	return root
}

func (st *loadState) syntaxErr(err error, data []byte) {
	msg := err.Error()
	if m := yamlLineRE.FindStringSubmatch(msg); m != nil {
		line, _ := strconv.Atoi(m[1])
		if at := problemLine(data, msg, line); at > line {
			st.addErr(at, 0, "", "YAML syntax: %s (in the block that starts at line %d)", m[2], line)
			return
		}
		st.addErr(line, 0, "", "YAML syntax: %s", m[2])
		return
	}
	line, col := badByte(data)
	st.addErr(line, col, "", "YAML syntax: %s", strings.TrimPrefix(msg, "yaml: "))
}

// problemLine refines the line of a YAML syntax error. The parser names the
// line where the enclosing block starts (from) rather than the offending
// line, so this finds the shortest run of leading lines, ending at or after
// from, that fails with the same message: its last line is where the file
// stops making sense. It returns 0 when that is not found, or when finding
// it would mean parsing more than a few megabytes of prefixes.
func problemLine(data []byte, msg string, from int) int {
	const budget = 4 << 20
	spent := 0
	end, line := 0, 1
	for ; line < from; line++ { // skip to the end of line from-1
		nl := bytes.IndexByte(data[end:], '\n')
		if nl < 0 {
			return 0
		}
		end += nl + 1
	}
	for ; end < len(data); line++ {
		nl := bytes.IndexByte(data[end:], '\n')
		if nl < 0 {
			return 0 // the whole file is what failed
		}
		end += nl + 1
		if spent += end; spent > budget {
			return 0
		}
		var n yaml.Node
		if err := parsePrefix(data[:end], &n); err != nil && err.Error() == msg {
			return line
		}
	}
	return 0
}

func parsePrefix(data []byte, n *yaml.Node) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("%v", r)
		}
	}()
	return yaml.Unmarshal(data, n)
}

// badByte locates the first byte YAML does not accept in a file (invalid
// UTF-8 or a control character other than tab, line feed and carriage
// return), for parser errors that carry no line. It returns 1, 0 when there
// is none.
func badByte(data []byte) (line, col int) {
	line, col = 1, 1
	for i := 0; i < len(data); {
		r, size := utf8.DecodeRune(data[i:])
		bad := r == utf8.RuneError && size <= 1
		if r < 0x20 && r != '\t' && r != '\n' && r != '\r' || r == 0x7f || (r >= 0x80 && r < 0xa0 && r != 0x85) || r == 0xfffe || r == 0xffff {
			bad = true
		}
		if bad {
			return line, col
		}
		if r == '\n' {
			line, col = line+1, 1
		} else {
			col++
		}
		i += size
	}
	return 1, 0
}

// ---- step 2: decoding ----

var (
	lengthType      = reflect.TypeOf(Length(0))
	speedType       = reflect.TypeOf(Speed(0))
	durationType    = reflect.TypeOf(Duration(0))
	stdDurationType = reflect.TypeOf(time.Duration(0))
	pointType       = reflect.TypeOf(Point{})
	point2Type      = reflect.TypeOf([2]Length{})
)

func (st *loadState) decodeRoot(root *yaml.Node, v reflect.Value) {
	r := resolveAlias(root)
	if r == nil || r.Kind != yaml.MappingNode {
		st.decodeErr(root, "", "the file must be a mapping of keys (cell, units, zones, ...), got %s", describeNode(root))
		return
	}
	// The unit must be known before any length is decoded.
	for _, p := range st.mappingPairs(r, "") {
		u := resolveAlias(p.val)
		if p.key.Value != "units" || u == nil || u.Kind != yaml.ScalarNode || u.ShortTag() == "!!null" {
			continue
		}
		switch u.Value {
		case "m":
		case "mm":
			st.scale = 0.001
		default:
			st.decodeErr(u, "units", "unknown unit %q (want m or mm)", u.Value)
		}
		break
	}
	st.decode(root, v, "")
}

// resolveAlias follows aliases (at most a few levels) without recursion.
func resolveAlias(n *yaml.Node) *yaml.Node {
	for i := 0; n != nil && n.Kind == yaml.AliasNode && i < 64; i++ {
		n = n.Alias
	}
	if n != nil && n.Kind == yaml.AliasNode {
		return nil
	}
	return n
}

func (st *loadState) decode(n *yaml.Node, v reflect.Value, path string) {
	if st.budgetHit {
		return
	}
	st.visited++
	if st.visited > maxValues {
		st.budgetHit = true
		st.decodeErr(n, path, "the file expands to more than %d values through aliases", maxValues)
		return
	}
	if _, ok := st.valPos[path]; !ok {
		st.valPos[path] = yaml.Node{Line: n.Line, Column: n.Column}
	}
	if n.Kind == yaml.AliasNode {
		target := n.Alias
		if target == nil {
			st.decodeErr(n, path, "alias *%s refers to no anchor", n.Value)
			return
		}
		if st.expanding[target] {
			st.decodeErr(n, path, "alias *%s refers to a value that contains it", n.Value)
			return
		}
		if st.expanding == nil {
			st.expanding = map[*yaml.Node]bool{}
		}
		st.expanding[target] = true
		st.decode(target, v, path)
		delete(st.expanding, target)
		return
	}
	if n.Kind == yaml.ScalarNode && n.ShortTag() == "!!null" {
		st.nulls[path] = true
		return
	}

	t := v.Type()
	switch t {
	case lengthType, speedType:
		f, ok := st.scalarFloat(n, path, t)
		if ok {
			v.SetFloat(f * st.scale)
		}
		return
	case durationType, stdDurationType:
		st.decodeDuration(n, v, path)
		return
	}

	switch t.Kind() {
	case reflect.Pointer:
		if v.IsNil() {
			v.Set(reflect.New(t.Elem()))
		}
		st.decode(n, v.Elem(), path)
	case reflect.Struct:
		st.decodeStruct(n, v, path)
	case reflect.Slice:
		if n.Kind != yaml.SequenceNode {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		s := reflect.MakeSlice(t, len(n.Content), len(n.Content))
		for i, item := range n.Content {
			ip := joinPath(path, "["+strconv.Itoa(i)+"]")
			st.decode(item, s.Index(i), ip)
			st.label(s.Index(i), ip)
		}
		v.Set(s)
	case reflect.Array:
		if n.Kind != yaml.SequenceNode || len(n.Content) != t.Len() {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		for i, item := range n.Content {
			st.decode(item, v.Index(i), joinPath(path, "["+strconv.Itoa(i)+"]"))
		}
	case reflect.Map:
		if t.Key().Kind() != reflect.String {
			st.decodeErr(n, path, "cannot decode into %s (a loader limitation)", t)
			return
		}
		if n.Kind != yaml.MappingNode {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		m := reflect.MakeMap(t)
		for _, p := range st.mappingPairs(n, path) {
			kp := joinPath(path, p.key.Value)
			if m.MapIndex(reflect.ValueOf(p.key.Value).Convert(t.Key())).IsValid() {
				if !p.merged {
					st.decodeErr(p.key, kp, "key %q given twice", p.key.Value)
				}
				continue
			}
			st.keyPos[kp] = yaml.Node{Line: p.key.Line, Column: p.key.Column}
			ev := reflect.New(t.Elem()).Elem()
			st.decode(p.val, ev, kp)
			m.SetMapIndex(reflect.ValueOf(p.key.Value).Convert(t.Key()), ev)
		}
		v.Set(m)
	case reflect.String:
		if n.Kind != yaml.ScalarNode {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		v.SetString(n.Value)
	case reflect.Bool, reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		if n.Kind != yaml.ScalarNode {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		p := reflect.New(t)
		if err := n.Decode(p.Interface()); err != nil {
			st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
			return
		}
		v.Set(p.Elem())
	case reflect.Float32, reflect.Float64:
		f, ok := st.scalarFloat(n, path, t)
		if ok {
			v.SetFloat(f)
		}
	default:
		st.decodeErr(n, path, "cannot decode into %s (a loader limitation)", t)
	}
}

// label remembers the name of a list element, for messages.
func (st *loadState) label(v reflect.Value, path string) {
	for v.Kind() == reflect.Pointer {
		if v.IsNil() {
			return
		}
		v = v.Elem()
	}
	if v.Kind() != reflect.Struct {
		return
	}
	for _, f := range structFields(v.Type()) {
		if f.name == "name" {
			if fv := v.FieldByIndex(f.index); fv.Kind() == reflect.String && fv.String() != "" {
				st.labels[path] = fv.String()
			}
			return
		}
	}
}

func (st *loadState) scalarFloat(n *yaml.Node, path string, t reflect.Type) (float64, bool) {
	if n.Kind != yaml.ScalarNode {
		st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
		return 0, false
	}
	var f float64
	if tag := n.ShortTag(); tag != "!!int" && tag != "!!float" || n.Decode(&f) != nil {
		st.decodeErr(n, path, "want %s, got %s", describeType(t), describeNode(n))
		return 0, false
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		st.decodeErr(n, path, "must be a finite number, got %s", n.Value)
		return 0, false
	}
	if math.Abs(f) > 1e12 {
		st.decodeErr(n, path, "%s is out of range (magnitude at most 1e12)", n.Value)
		return 0, false
	}
	return f, true
}

func (st *loadState) decodeDuration(n *yaml.Node, v reflect.Value, path string) {
	if n.Kind != yaml.ScalarNode {
		st.decodeErr(n, path, "want %s, got %s", describeType(durationType), describeNode(n))
		return
	}
	d, err := time.ParseDuration(n.Value)
	if err != nil {
		if _, nerr := strconv.ParseFloat(n.Value, 64); nerr == nil {
			st.decodeErr(n, path, "duration %q has no unit (write e.g. \"350ms\" or \"1.5s\")", n.Value)
		} else {
			st.decodeErr(n, path, "bad duration %q (write e.g. \"350ms\" or \"1.5s\")", n.Value)
		}
		return
	}
	if d < 0 {
		st.decodeErr(n, path, "duration must not be negative, got %s", n.Value)
		return
	}
	v.SetInt(int64(d))
}

type keyVal struct {
	key, val *yaml.Node
	merged   bool // from a merge key (<<): explicit keys take precedence
}

// mappingPairs lists the key/value pairs of a mapping: its own pairs first,
// then those brought in by merge keys. Keys that are not plain scalars are
// reported and skipped.
func (st *loadState) mappingPairs(n *yaml.Node, path string) []keyVal {
	var own, merged []keyVal
	for i := 0; i+1 < len(n.Content); i += 2 {
		k, val := resolveAlias(n.Content[i]), n.Content[i+1]
		if k == nil || k.Kind != yaml.ScalarNode {
			at := n.Content[i]
			st.decodeErr(at, path, "keys must be plain names, got %s", describeNode(at))
			continue
		}
		if k.Tag == "!!merge" || (k.Value == "<<" && k.ShortTag() == "!!merge") {
			merged = append(merged, st.mergePairs(val, path, 0)...)
			continue
		}
		own = append(own, keyVal{key: k, val: val})
	}
	return append(own, merged...)
}

func (st *loadState) mergePairs(val *yaml.Node, path string, depth int) []keyVal {
	src := resolveAlias(val)
	switch {
	case src == nil || depth > 8:
		st.decodeErr(val, path, "merge (<<) nests too deep")
		return nil
	case st.expanding[src]:
		st.decodeErr(val, path, "merge (<<) refers to the mapping that contains it")
		return nil
	}
	var out []keyVal
	switch src.Kind {
	case yaml.MappingNode:
		if st.expanding == nil {
			st.expanding = map[*yaml.Node]bool{}
		}
		st.expanding[src] = true
		for _, p := range st.mappingPairs(src, path) {
			p.merged = true
			out = append(out, p)
		}
		delete(st.expanding, src)
	case yaml.SequenceNode:
		if depth > 0 {
			st.decodeErr(val, path, "merge (<<) wants a mapping or a list of mappings")
			return nil
		}
		for _, item := range src.Content {
			out = append(out, st.mergePairs(item, path, depth+1)...)
		}
	default:
		st.decodeErr(val, path, "merge (<<) wants a mapping or a list of mappings, got %s", describeNode(src))
	}
	return out
}

func (st *loadState) decodeStruct(n *yaml.Node, v reflect.Value, path string) {
	if n.Kind != yaml.MappingNode {
		st.decodeErr(n, path, "want %s, got %s", describeType(v.Type()), describeNode(n))
		return
	}
	fields := structFields(v.Type())
	seen := map[string]*yaml.Node{}
	for _, p := range st.mappingPairs(n, path) {
		name := p.key.Value
		kp := joinPath(path, name)
		if first, dup := seen[name]; dup {
			if !p.merged {
				st.decodeErr(p.key, kp, "key given twice (first at %d:%d)", first.Line, first.Column)
			}
			continue
		}
		seen[name] = p.key
		f, ok := findField(fields, name)
		if !ok {
			st.decodeErr(p.key, kp, "unknown key%s", suggest(name, fields))
			continue
		}
		st.keyPos[kp] = yaml.Node{Line: p.key.Line, Column: p.key.Column}
		st.decode(p.val, v.FieldByIndex(f.index), kp)
	}
}

type fieldInfo struct {
	name  string
	index []int
}

var fieldCache sync.Map // reflect.Type -> []fieldInfo

// structFields lists the keys of a struct type by their yaml tags (the
// lower-cased field name when there is none, as yaml.v3 does), skipping
// unexported fields and `yaml:"-"`, and flattening `yaml:",inline"`.
func structFields(t reflect.Type) []fieldInfo {
	if fs, ok := fieldCache.Load(t); ok {
		return fs.([]fieldInfo)
	}
	var out []fieldInfo
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		if !f.IsExported() {
			continue
		}
		tag := f.Tag.Get("yaml")
		if tag == "-" {
			continue
		}
		name, opts, _ := strings.Cut(tag, ",")
		if strings.Contains(","+opts+",", ",inline,") && f.Type.Kind() == reflect.Struct {
			for _, sub := range structFields(f.Type) {
				out = append(out, fieldInfo{name: sub.name, index: append([]int{i}, sub.index...)})
			}
			continue
		}
		if name == "" {
			name = strings.ToLower(f.Name)
		}
		out = append(out, fieldInfo{name: name, index: []int{i}})
	}
	fieldCache.Store(t, out)
	return out
}

func findField(fs []fieldInfo, name string) (fieldInfo, bool) {
	for _, f := range fs {
		if f.name == name {
			return f, true
		}
	}
	return fieldInfo{}, false
}

// suggest proposes the closest known key for a misspelt one.
func suggest(name string, fs []fieldInfo) string {
	best, bestD := "", 3
	for _, f := range fs {
		if d := editDistance(strings.ToLower(name), f.name); d < bestD {
			best, bestD = f.name, d
		}
	}
	if best != "" {
		return fmt.Sprintf(" (did you mean %q?)", best)
	}
	names := make([]string, len(fs))
	for i, f := range fs {
		names[i] = f.name
	}
	return " (known keys: " + strings.Join(names, ", ") + ")"
}

// editDistance is the Levenshtein distance between two short strings.
func editDistance(a, b string) int {
	if len(a) > 64 || len(b) > 64 {
		return 64
	}
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			c := prev[j-1]
			if a[i-1] != b[j-1] {
				c++
			}
			cur[j] = min(c, prev[j]+1, cur[j-1]+1)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// describeType says what a value of type t looks like in the file.
func describeType(t reflect.Type) string {
	switch t {
	case lengthType:
		return "a length (number)"
	case speedType:
		return "a speed (number)"
	case durationType, stdDurationType:
		return `a duration such as "350ms"`
	case pointType:
		return "a point [x, y, z]"
	case point2Type:
		return "a point [x, y]"
	}
	switch t.Kind() {
	case reflect.Pointer:
		return describeType(t.Elem())
	case reflect.Struct, reflect.Map:
		return "a mapping of keys"
	case reflect.Slice:
		return "a list"
	case reflect.Array:
		return fmt.Sprintf("a list of %d numbers", t.Len())
	case reflect.String:
		return "a text"
	case reflect.Bool:
		return "true or false"
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
		return "a whole number"
	case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return "a whole number >= 0"
	case reflect.Float32, reflect.Float64:
		return "a number"
	}
	return t.String()
}

// describeNode says what was found in the file.
func describeNode(n *yaml.Node) string {
	switch n.Kind {
	case yaml.MappingNode:
		return "a mapping"
	case yaml.SequenceNode:
		return fmt.Sprintf("a list of %d", len(n.Content))
	case yaml.AliasNode:
		return "an alias"
	case yaml.ScalarNode:
		v := n.Value
		if len(v) > 40 {
			v = v[:40] + "..."
		}
		if n.ShortTag() == "!!str" {
			return "text " + strconv.Quote(v)
		}
		return strconv.Quote(v)
	}
	return "nothing"
}
