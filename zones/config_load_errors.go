package zones

import (
	"sort"
	"strconv"
	"strings"
)

// ConfigError is one problem found in a cell configuration file.
type ConfigError struct {
	File string // file name as given to Load or Parse
	Line int    // 1-based line
	// Col is the 1-based column, 0 when the YAML parser could not say
	// (some syntax errors).
	Col int
	// Field is the path of the offending key, e.g. `zones[2] "press": sphere.radius`
	// (list indices count from 0; a list element that has a name is shown
	// with it). Empty for errors about the file as a whole.
	Field string
	Msg   string
}

func (e ConfigError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	b.WriteByte(':')
	b.WriteString(strconv.Itoa(e.Line))
	if e.Col > 0 {
		b.WriteByte(':')
		b.WriteString(strconv.Itoa(e.Col))
	}
	b.WriteString(": ")
	if e.Field != "" {
		b.WriteString(e.Field)
		b.WriteString(": ")
	}
	b.WriteString(e.Msg)
	return b.String()
}

// ConfigErrors is every problem found in one configuration file, sorted by
// position. Load and Parse return it (never an empty one) when a file is
// not valid.
type ConfigErrors []ConfigError

// Error lists the problems one per line.
func (es *ConfigErrors) Error() string {
	lines := make([]string, len(*es))
	for i, e := range *es {
		lines[i] = e.Error()
	}
	return strings.Join(lines, "\n")
}

// sortErrors orders errors by line and column, keeping the order in which
// they were found for equal positions, and drops exact duplicates.
func sortErrors(es []ConfigError) []ConfigError {
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
	return out
}
