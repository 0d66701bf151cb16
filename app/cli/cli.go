// Package cli holds Lodestone's headless commands: the same compute calls
// the window makes, run from a terminal or a script so that every number the
// window shows can be reproduced there.
package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"sort"
	"strings"

	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/compute/ingest"
	"lodestone/compute/integrate"
	"lodestone/compute/pipeline"
	"lodestone/compute/prep"
	"lodestone/internal/atomicfile"
	"lodestone/sampledata"
)

// Exit statuses, the same for every command (printed by "lodestone help").
const (
	ExitOK      = 0
	ExitFailed  = 1 // a failure of Lodestone's own, or of the machine: an internal error, a full disk, an interruption
	ExitUsage   = 2 // bad input or usage: flags, settings the data cannot meet, input files that cannot be read or are malformed, outputs that cannot be written
	exitHelpMsg = "run \"lodestone help\" for the commands"
)

// inputErrors are the kinds of error that are the caller's, whatever
// command meets them: they end the program with ExitUsage.
var inputErrors = []error{
	fs.ErrNotExist, fs.ErrPermission, atomicfile.ErrNotWritable,
	ingest.ErrEmpty, ingest.ErrFieldCount, ingest.ErrNotNumber, ingest.ErrNotFinite, ingest.ErrMagnitude, ingest.ErrNegative,
	ingest.ErrHeader, ingest.ErrSizeLine, ingest.ErrUnsupported, ingest.ErrIndexRange, ingest.ErrEntryCount,
	ingest.ErrDuplicateEntry, ingest.ErrLineTooLong, ingest.ErrQuote, ingest.ErrTruncated, ingest.ErrCorrupt,
	ingest.ErrTrailingData, ingest.ErrBlankLabel, ingest.ErrBadLabel, ingest.ErrDuplicateID, ingest.ErrLabelCount,
	ingest.ErrLabelRole, ingest.ErrNoMatch, ingest.ErrAmbiguous, ingest.ErrNothingToRead, ingest.ErrNotRegular,
	prep.ErrNotFinite, prep.ErrNegative, prep.ErrTooFewCells, prep.ErrTooFewGenes, prep.ErrOption,
	pipeline.ErrSetting, sampledata.ErrOption,
	integrate.ErrNoColumn, integrate.ErrRepeated, integrate.ErrNotCategorical, integrate.ErrMissing,
	integrate.ErrOneBatch, integrate.ErrSmallBatch, integrate.ErrParam,
	session.ErrNotSession, session.ErrVersion, session.ErrMissing, session.ErrCorrupt, restore.ErrNoInputs, restore.ErrInputs,
}

// exitStatus returns the exit status for a command's error: ExitUsage for
// usage errors and the kinds of inputErrors, ExitFailed for the rest.
func exitStatus(err error) int {
	var u usageError
	if errors.As(err, &u) {
		return ExitUsage
	}
	for _, e := range inputErrors {
		if errors.Is(err, e) {
			return ExitUsage
		}
	}
	return ExitFailed
}

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
		return exitStatus(err)
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
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "")
	fmt.Fprintln(w, "Exit status of every command:")
	fmt.Fprintln(w, "  0  done")
	fmt.Fprintln(w, "  1  a failure of Lodestone's own or of the machine (an internal error, a full disk, an interruption)")
	fmt.Fprintln(w, "  2  bad input or usage: a flag out of range, settings the data cannot meet, an input file that")
	fmt.Fprintln(w, "     cannot be read or is malformed, an output that cannot be written or is also an input")
}

// flags is a command's flag set, with the synopsis and stream its usage is
// printed to, and the flags that name files.
type flags struct {
	*flag.FlagSet
	synopsis string
	stderr   io.Writer
	paths    []pathFlag      // see inputPath, outputPath
	set      map[string]bool // the flags given on the command line
}

// Hooks for tests: flagsMade, when not nil, receives every flag set a
// command makes; afterParse, when not nil, is called when a command's flags
// are parsed and checked, and its error ends the command there.
var (
	flagsMade  func(*flags)
	afterParse func(*flags) error
)

// newFlags returns a flag set that reports errors as values instead of
// exiting or printing.
func newFlags(name, synopsis string, stderr io.Writer) *flags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	f := &flags{FlagSet: fs, synopsis: synopsis, stderr: stderr}
	if flagsMade != nil {
		flagsMade(f)
	}
	return f
}

// parse parses args. -h prints the usage and returns flag.ErrHelp; other
// flag errors and stray arguments become usage errors (one line, exit 2).
// Every numeric flag given is checked against its bound (see bounds), and
// the path flags against each other (see checkPaths), before the command
// does anything.
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
	f.set = map[string]bool{}
	f.Visit(func(fl *flag.Flag) { f.set[fl.Name] = true })
	if err := f.checkNumbers(func(s string) { fmt.Fprintf(f.stderr, "warning: %s\n", s) }); err != nil {
		return err
	}
	if err := f.checkPaths(); err != nil {
		return err
	}
	if afterParse != nil {
		return afterParse(f)
	}
	return nil
}

// isSet reports whether flag name was given on the command line.
func (f *flags) isSet(name string) bool {
	set := false
	f.Visit(func(fl *flag.Flag) { set = set || fl.Name == name })
	return set
}
