// Command forereach forecasts tracked hands against a cell's hazard zones and
// publishes advisory slow-down requests. It is advisory only: see the safety
// notice in the README and in `forereach help`.
//
// This file only dispatches subcommands; each lives in cmd_<name>.go and
// registers itself in init.
package main

import (
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"forereach/safety"
)

// version is set at build time with -ldflags "-X main.version=...".
var version = "0.1.0-dev"

// command is one subcommand.
type command struct {
	Name    string
	Summary string // one line
	Usage   string // full help: synopsis, description, flags
	Live    bool   // a command that acts on a live cell or reports on one: help prints the safety notice
	Run     func(args []string, stdout, stderr io.Writer) int
}

var commands = map[string]*command{}

func register(c *command) {
	if _, dup := commands[c.Name]; dup {
		panic("duplicate command " + c.Name)
	}
	commands[c.Name] = c
}

func main() { os.Exit(run(os.Args[1:], os.Stdout, os.Stderr)) }

// run dispatches args and returns the exit code: 0 success, 1 failure,
// 2 usage error.
func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stderr)
		return 2
	}
	name := args[0]
	switch name {
	case "help", "-h", "-help", "--help":
		return help(args[1:], stdout, stderr)
	case "version", "--version":
		fmt.Fprintf(stdout, "forereach %s\n", version)
		return 0
	}
	c, ok := commands[name]
	if !ok {
		fmt.Fprintf(stderr, "forereach: unknown command %q\n\n", name)
		usage(stderr)
		return 2
	}
	return c.Run(args[1:], stdout, stderr)
}

func help(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		usage(stdout)
		return 0
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "forereach: no help for unknown command %q\n\n", args[0])
		usage(stderr)
		return 2
	}
	printCommandHelp(stdout, c)
	return 0
}

func printCommandHelp(w io.Writer, c *command) {
	fmt.Fprintln(w, strings.TrimRight(c.Usage, "\n"))
	if c.Live {
		fmt.Fprintf(w, "\n%s\n", safety.Notice)
	}
}

func usage(w io.Writer) {
	fmt.Fprintf(w, "forereach %s: forecast tracked hands against a cell's hazard zones and publish advisory slow-down requests.\n\n", version)
	fmt.Fprintln(w, "Usage: forereach <command> [arguments]")
	fmt.Fprintln(w, "\nCommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].Summary)
	}
	fmt.Fprintf(w, "  %-10s %s\n", "help", "show help for a command: forereach help <command>")
	fmt.Fprintf(w, "  %-10s %s\n", "version", "print the version")
	fmt.Fprintf(w, "\n%s\n", safety.Notice)
}
