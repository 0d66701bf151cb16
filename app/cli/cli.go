// Package cli holds Lodestone's headless commands: the same compute calls
// the window makes, run from a terminal or a script so that every number the
// window shows can be reproduced there.
package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"sort"
	"strings"
)

// Exit statuses.
const (
	ExitOK      = 0
	ExitFailed  = 1 // the computation failed
	ExitUsage   = 2 // bad flags, or an input that cannot be read
	exitHelpMsg = "run \"lodestone help\" for the commands"
)

// usageError marks errors that are the caller's: bad flags, missing or
// unreadable inputs. They end the program with ExitUsage.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

func usagef(format string, args ...any) error {
	return usageError{fmt.Errorf(format, args...)}
}

// command is one headless command.
type command struct {
	summary string
	run     func(args []string, stdout, stderr io.Writer) error
}

var commands = map[string]command{}

func register(name, summary string, run func(args []string, stdout, stderr io.Writer) error) {
	commands[name] = command{summary: summary, run: run}
}

// IsCommand reports whether name is a headless command.
func IsCommand(name string) bool {
	_, ok := commands[name]
	return ok || name == "help"
}

// Run runs the headless command args[0] with the remaining arguments and
// returns the exit status. Errors are printed to stderr on one line.
func Run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		printHelp(stdout)
		return ExitOK
	}
	cmd, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "lodestone: unknown command %q; %s\n", args[0], exitHelpMsg)
		return ExitUsage
	}
	err := cmd.run(args[1:], stdout, stderr)
	switch {
	case err == nil:
		return ExitOK
	case errors.Is(err, flag.ErrHelp):
		return ExitOK
	default:
		fmt.Fprintf(stderr, "lodestone %s: %s\n", args[0], oneLine(err.Error()))
		var u usageError
		if errors.As(err, &u) {
			return ExitUsage
		}
		return ExitFailed
	}
}

func oneLine(s string) string { return strings.ReplaceAll(strings.TrimSpace(s), "\n", "; ") }

func printHelp(w io.Writer) {
	fmt.Fprintln(w, "lodestone — explore single-cell atlases")
	fmt.Fprintln(w, "")
	fmt.Fprintln(w, "  lodestone                 open the window")
	fmt.Fprintln(w, "  lodestone --example       open the window on the bundled (invented) example atlas")
	fmt.Fprintln(w, "  lodestone PATH            open the window on a file, folder or session")
	fmt.Fprintln(w, "")
	fmt.Fprintln(w, "Headless commands (\"lodestone COMMAND -h\" for flags):")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-9s %s\n", n, commands[n].summary)
	}
}

// flags is a command's flag set, with the synopsis and stream its usage is
// printed to.
type flags struct {
	*flag.FlagSet
	synopsis string
	stderr   io.Writer
}

// newFlags returns a flag set that reports errors as values instead of
// exiting or printing.
func newFlags(name, synopsis string, stderr io.Writer) *flags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return &flags{FlagSet: fs, synopsis: synopsis, stderr: stderr}
}

// parse parses args. -h prints the usage and returns flag.ErrHelp; other
// flag errors and stray arguments become usage errors (one line, exit 2).
func (f *flags) parse(args []string) error {
	err := f.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		fmt.Fprintf(f.stderr, "usage: lodestone %s %s\n", f.Name(), f.synopsis)
		f.SetOutput(f.stderr)
		f.PrintDefaults()
		return err
	}
	if err != nil {
		return usageError{err}
	}
	if f.NArg() > 0 {
		return usagef("unexpected argument %q", f.Arg(0))
	}
	return nil
}
