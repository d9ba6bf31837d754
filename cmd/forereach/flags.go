package main

import (
	"flag"
	"fmt"
	"io"
	"strings"
)

// newFlagSet returns a flag set for command c whose usage prints c's help to
// stderr. Parse errors are reported by parseArgs.
func newFlagSet(c *command, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(c.Name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintln(stderr)
		printCommandHelp(stderr, c)
	}
	return fs
}

// parseArgs parses flags anywhere among the arguments (so that
// "zones draw CELL.yaml -o out.svg" works) and returns the positional
// arguments in order. "--" ends flag parsing. It returns a non-nil error for
// an unknown or malformed flag, after the flag set has printed usage; callers
// return exit code 2 for it.
func parseArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		rest := fs.Args()
		if len(rest) == 0 {
			return pos, nil
		}
		if rest[0] == "--" {
			return append(pos, rest[1:]...), nil
		}
		// fs.Parse stopped at a positional argument; keep it and go on.
		pos = append(pos, rest[0])
		args = rest[1:]
		if len(args) > 0 && args[0] == "--" && !strings.HasPrefix(rest[0], "-") {
			return append(pos, args[1:]...), nil
		}
	}
}
