// Package app starts Lodestone: the window, or one of the headless commands
// of package cli.
package app

import (
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"lodestone/app/cli"
	"lodestone/app/window"
	"lodestone/compute/pipeline"
)

// Main runs Lodestone with the given command-line arguments (without the
// program name) and returns the process exit status.
func Main(args []string) int {
	if len(args) > 0 && cli.IsCommand(args[0]) {
		// The toolkit's driver locks the main goroutine to the main thread
		// when it is initialised. A command runs on a goroutine of its own,
		// so the scheduler may move it between threads: the hot loops hand
		// work to their helper goroutines and wait for them many times a
		// second, and each wake of a locked goroutine costs a thread switch.
		status := make(chan int)
		go func() { status <- cli.Run(args, os.Stdout, os.Stderr) }()
		return <-status
	}
	opts, err := windowOptions(args, os.Stderr)
	if err == flag.ErrHelp {
		return cli.Run([]string{"help"}, os.Stdout, os.Stderr)
	}
	if err != nil {
		fmt.Fprintf(os.Stderr, "lodestone: %v; run \"lodestone help\" for the commands\n", err)
		return cli.ExitUsage
	}
	if err := window.CheckDisplay(os.Getenv); err != nil {
		fmt.Fprintf(os.Stderr, "lodestone: %v\n", err)
		return 1
	}
	return window.Run(opts)
}

// windowOptions parses the window's own flags: --example, --selftest
// [DIR], --selftest-dial X, --threads N, and an optional path.
func windowOptions(args []string, stderr io.Writer) (window.Options, error) {
	var o window.Options
	fs := flag.NewFlagSet("lodestone", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.BoolVar(&o.Example, "example", false, "open the bundled, invented example atlas")
	selfTest := fs.Bool("selftest", false, "run the self-test on the example atlas (or the atlas given) and exit (0 when it passes)")
	fs.StringVar(&o.SelfTest, "selftest-out", "", "folder for the self-test's screenshots (default: a new temporary folder)")
	fs.Float64Var(&o.SelfTestDial, "selftest-dial", 10, "the attraction the self-test turns the dial to")
	fs.BoolVar(&o.SelfTestTour, "selftest-tour", false, "the self-test also finds markers and runs a sweep, saving screenshots")
	fs.IntVar(&o.Threads, "threads", 0, "goroutines for computing (0: all processors)")
	if err := fs.Parse(args); err != nil {
		return o, err
	}
	switch {
	case o.Threads < 0:
		return o, fmt.Errorf("--threads %d: want 0 (all processors) or a number from 1 to %d", o.Threads, pipeline.MaxThreads)
	case o.Threads > pipeline.MaxThreads:
		fmt.Fprintf(stderr, "warning: --threads %d lowered to %d, the most Lodestone uses\n", o.Threads, pipeline.MaxThreads)
		o.Threads = pipeline.MaxThreads
	case !(o.SelfTestDial >= 0.5): // NaN too
		return o, fmt.Errorf("--selftest-dial %v: want a number from 0.5, or inf", o.SelfTestDial)
	}
	switch fs.NArg() {
	case 0:
	case 1:
		o.Path = fs.Arg(0)
	default:
		return o, fmt.Errorf("give at most one file, folder or session to open, not %s", strings.Join(fs.Args(), " "))
	}
	if *selfTest || o.SelfTest != "" {
		if o.SelfTest == "" {
			dir, err := os.MkdirTemp("", "lodestone-selftest-")
			if err != nil {
				return o, err
			}
			o.SelfTest = dir
		}
	}
	return o, nil
}
