package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"sync"
	"syscall"

	"spotsift/activity"
	"spotsift/internal/worker"
)

// Exit codes of every subcommand.
const (
	exitOK     = 0 // success, whatever the verdict
	exitFailed = 1 // the analysis failed
	exitUsage  = 2 // bad usage or bad input
)

// release is the program's release.
const release = "0.1.0-dev"

// version returns the program version recorded in every output file and
// among the inputs a rerun checks before it reuses a verdict: the release
// and the first 12 hex digits of the SHA-256 of the running executable. A
// release is built many times as it evolves, and a verdict reused across
// builds would be an older build's verdict presented as this one's; Go's
// builds are reproducible, so the same code built again keeps its digest.
// The release alone when the executable cannot be read.
var version = sync.OnceValue(func() string {
	exe, err := os.Executable()
	if err != nil {
		return release
	}
	sum, err := activity.HashFile(exe)
	if err != nil {
		return release
	}
	return release + "+" + sum[:12]
})

// env is what a subcommand may touch: its output streams.
type env struct {
	stdout io.Writer
	stderr io.Writer
}

// command is one subcommand.
type command struct {
	name    string
	summary string
	run     func(args []string, e *env) int
}

// commands lists every subcommand, in the order help shows them.
var commands = []command{
	{"demo", "simulate a demo sample and run the whole job on it", runDemo},
	{"simulate", "write synthetic spectra and tables of spotted stars", runSimulate},
	{"measure", "turn spectra into a per-epoch indicator table", runMeasure},
	{"scan", "periodograms of RV and every indicator", runScan},
	{"model", "joint Keplerian + activity-noise fit", runModel},
	{"vet", "full diagnosis of each signal: verdict and report", runVet},
	{"survey", "a whole stellar sample, in parallel, resumable", runSurvey},
}

// run is the whole program; main only exits with its result. A panic
// (a bug) that reaches it, from the command's goroutine or passed on from
// a worker's, is a failed analysis with a one-line message; its stack is
// printed only with SPOTSIFT_DEBUG set.
func run(args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			code = fail(&env{stdout: stdout, stderr: stderr}, exitFailed, worker.Recovered(r))
		}
	}()
	e := &env{stdout: stdout, stderr: stderr}
	if len(args) == 0 {
		usage(stderr)
		return exitUsage
	}
	name := args[0]
	switch name {
	case "help", "-h", "-help", "--help":
		if len(args) > 1 {
			return run([]string{args[1], "-h"}, stdout, stderr)
		}
		usage(stderr)
		return exitOK
	case "version", "--version":
		fmt.Fprintf(stdout, "spotsift %s\n", version())
		return exitOK
	}
	for _, c := range commands {
		if c.name == name {
			return c.run(args[1:], e)
		}
	}
	fmt.Fprintf(stderr, "spotsift: unknown command %q\n\n", name)
	usage(stderr)
	return exitUsage
}

func usage(w io.Writer) {
	fmt.Fprint(w, `spotsift tells, for each periodic signal in a star's radial velocities,
whether it tracks the star's activity or looks planetary.

Usage: spotsift <command> [flags]

Commands:
`)
	for _, c := range commands {
		fmt.Fprintf(w, "  %-9s %s\n", c.name, c.summary)
	}
	fmt.Fprint(w, `
Run "spotsift <command> -h" for a command's flags.
Exit status: 0 success, 1 failed analysis, 2 bad usage or bad input.
`)
}

// newFlagSet returns a flag set for a subcommand whose usage text starts
// with synopsis and about.
func newFlagSet(e *env, name, synopsis, about string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(e.stderr)
	fs.Usage = func() {
		fmt.Fprintf(e.stderr, "Usage: spotsift %s %s\n\n%s\n\nFlags:\n", name, synopsis, strings.TrimSpace(about))
		fs.PrintDefaults()
	}
	return fs
}

// parseFlags parses args; it returns ok=false and the exit code when the
// command should stop (help asked for: 0; bad flags: 2).
func parseFlags(fs *flag.FlagSet, args []string) (code int, ok bool) {
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return exitOK, false
		}
		return exitUsage, false
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(fs.Output(), "spotsift %s: unexpected argument %q\n", fs.Name(), fs.Arg(0))
		return exitUsage, false
	}
	return 0, true
}

// fail prints err once, prefixed with the program name, and returns code.
func fail(e *env, code int, err error) int {
	fmt.Fprintf(e.stderr, "spotsift: %v\n", err)
	var pe *worker.PanicError
	if errors.As(err, &pe) {
		debugPanic(e, pe.Debug())
	}
	return code
}

// debugPanic prints a recovered panic's value and stack when the
// environment variable SPOTSIFT_DEBUG is set (to anything but "" or "0").
func debugPanic(e *env, debug string) {
	if v := os.Getenv("SPOTSIFT_DEBUG"); v != "" && v != "0" && debug != "" {
		fmt.Fprintf(e.stderr, "spotsift: debug output (SPOTSIFT_DEBUG):\n%s\n", debug)
	}
}

// errorf is fmt.Errorf, shortened for the commands.
func errorf(format string, a ...any) error { return fmt.Errorf(format, a...) }

// errInterrupted is the failure of a command stopped by Ctrl-C or SIGTERM.
var errInterrupted = errors.New("interrupted (Ctrl-C or SIGTERM)")

// interruptedErr turns the error of work stopped by ctx (cancelled by
// interruptible) into a clear message saying what was not done; other
// errors pass unchanged.
func interruptedErr(ctx context.Context, err error, what string) error {
	if err != nil && ctx.Err() != nil && errors.Is(err, ctx.Err()) {
		return fmt.Errorf("%w: %s", errInterrupted, what)
	}
	return err
}

// interruptible returns a context cancelled by Ctrl-C or SIGTERM (what a
// batch scheduler sends at the end of a job's time), and the function that
// stops listening for them.
func interruptible() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
}
