// Command gaptrace measures what a sheared sample really did from a side-view
// video of tracer particles in a rheometer gap: the velocity profile, wall
// slip, shear banding and motion after cessation. See README.md.
//
// Each sub-command lives in its own file and registers itself in commands.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/debug"
	"sort"
	"strings"
	"syscall"

	"gaptrace/track/frames"
)

// command is one sub-command. run stops early, returning the context's
// error, when ctx is cancelled.
type command struct {
	summary string
	run     func(ctx context.Context, args []string, stderr io.Writer) error
}

var commands = map[string]command{}

// stdout receives help and results meant for the user (the verdicts and
// the report's path at the end of run); tests replace it.
var stdout io.Writer = os.Stdout

// argv0 is the program as invoked, for the command line in the report.
var argv0 = "gaptrace"

// usageError is bad usage or bad input: exit status 2.
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

// badInput marks err as bad usage or bad input (exit status 2).
func badInput(err error) error {
	if err == nil {
		return nil
	}
	return usageError{err}
}

// badInputf formats a bad-input error.
func badInputf(format string, a ...any) error { return usageError{fmt.Errorf(format, a...)} }

// init silences OpenCV's own logging and the C libraries' writes to
// standard error (claimStderr), so that stderr carries gaptrace's one-line
// messages alone. A user who wants OpenCV's messages sets
// OPENCV_LOG_LEVEL.
func init() {
	if _, set := os.LookupEnv("OPENCV_LOG_LEVEL"); !set {
		frames.SilenceOpenCV()
		claimStderr()
	}
}

func main() {
	ctx, cancel := context.WithCancelCause(context.Background())
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, os.Interrupt, syscall.SIGTERM)
	go func() {
		s := <-sigs
		cancel(interruption{s.(syscall.Signal)})
		// A second signal does not wait for the work to stop.
		s = <-sigs
		os.Exit(128 + int(s.(syscall.Signal)))
	}()
	argv0 = os.Args[0]
	os.Exit(mainContext(ctx, os.Args[1:], os.Stderr))
}

// interruption is the cause of a cancellation by a signal.
type interruption struct{ sig syscall.Signal }

func (i interruption) Error() string { return "interrupted by " + i.sig.String() }

// mainArgs runs gaptrace with args and returns the exit status.
func mainArgs(args []string, stderr io.Writer) int {
	return mainContext(context.Background(), args, stderr)
}

// mainContext runs gaptrace with args until ctx is cancelled and returns
// the exit status. An internal panic is reported in one line, with the
// place it happened, as an error of the tool (exit status 1).
func mainContext(ctx context.Context, args []string, stderr io.Writer) (status int) {
	defer func() {
		if p := recover(); p != nil {
			fmt.Fprintf(stderr, "gaptrace: internal error: %v (at %s); please report it with the command line and input\n", p, panicSite(debug.Stack()))
			status = 1
		}
	}()
	if len(args) == 0 {
		usage(stderr) // bad usage: the list goes with the error, to stderr
		return 2
	}
	if args[0] == "-h" || args[0] == "--help" || args[0] == "help" {
		if len(args) > 1 && args[0] == "help" {
			return helpVerb(ctx, args[1], stderr)
		}
		usage(stdout)
		return 0
	}
	if args[0] == "version" || args[0] == "--version" {
		fmt.Fprintln(stdout, "gaptrace", version)
		return 0
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "gaptrace: unknown command %q (try gaptrace help)\n", args[0])
		return 2
	}
	err := c.run(ctx, args[1:], stderr)
	if err != nil {
		endProgressLine(stderr)
	}
	var in interruption
	if err != nil && ctx.Err() != nil && errors.As(context.Cause(ctx), &in) {
		fmt.Fprintln(stderr, "gaptrace: interrupted")
		return 128 + int(in.sig)
	}
	return exitStatus(err, stderr)
}

// panicSite returns the function and file:line where a panic was raised,
// read from its goroutine's stack: the frame after the runtime's panic.
func panicSite(stack []byte) string {
	lines := strings.Split(string(stack), "\n")
	for i := 0; i+3 < len(lines); i++ {
		if strings.HasPrefix(lines[i], "panic(") {
			for j := i + 2; j+1 < len(lines); j += 2 {
				fn := strings.TrimSpace(lines[j])
				if strings.HasPrefix(fn, "runtime.") { // e.g. runtime.goPanicIndex
					continue
				}
				if f := strings.Fields(strings.TrimSpace(lines[j+1])); len(f) > 0 {
					return fn + " " + f[0]
				}
			}
		}
	}
	return "unknown place"
}

func exitStatus(err error, stderr io.Writer) int {
	if err == nil {
		return 0
	}
	if errors.Is(err, flag.ErrHelp) {
		return 0
	}
	msg := strings.ReplaceAll(strings.TrimSpace(err.Error()), "\n", "; ")
	fmt.Fprintf(stderr, "gaptrace: %s\n", msg)
	var u usageError
	if errors.As(err, &u) {
		return 2
	}
	return 1
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "gaptrace: velocity profiles, wall slip, shear banding and motion after cessation from rheometer gap videos")
	fmt.Fprintln(w, "\nUsage: gaptrace COMMAND [flags] [INPUT]\n\nCommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-8s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun gaptrace help COMMAND (or gaptrace COMMAND -h) for what one command does and its flags.")
}

// helpVerb prints what the command verb does and its flags, on stdout.
func helpVerb(ctx context.Context, verb string, stderr io.Writer) int {
	c, ok := commands[verb]
	if !ok {
		fmt.Fprintf(stderr, "gaptrace: unknown command %q (try gaptrace help)\n", verb)
		return 2
	}
	return exitStatus(c.run(ctx, []string{"-h"}, stderr), stderr)
}

// newFlags returns a flag set whose errors are reported in one line as bad
// usage; -h prints what the command does and its flags to stdout (the
// writer, once stderr, is no longer used).
func newFlags(name, args string, _ io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard) // parse errors come back as one-line errors
	fs.Usage = func() {}     // and without the usage text
	usages[fs] = func() {
		fmt.Fprintf(stdout, "gaptrace %s: %s\n\nUsage: gaptrace %s [flags] %s\n\nFlags:\n", name, commands[name].summary, name, args)
		fs.SetOutput(stdout)
		fs.PrintDefaults()
		fs.SetOutput(io.Discard)
	}
	return fs
}

// usages prints the usage of each flag set made by newFlags, for -h.
var usages = map[*flag.FlagSet]func(){}

// parseFlags parses args, allowing flags after the positional arguments as
// in "run in.avi -o out", and wraps a flag error as bad usage.
func parseFlags(fs *flag.FlagSet, args []string) error {
	var pos []string
	for len(args) > 0 {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				if u := usages[fs]; u != nil {
					u()
				}
				return err
			}
			return badInputf("%s: %v", fs.Name(), err)
		}
		args = fs.Args()
		if len(args) == 0 {
			break
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
	return fs.Parse(append([]string{"--"}, pos...))
}
