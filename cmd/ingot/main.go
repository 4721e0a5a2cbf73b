// Command ingot compiles n-gram counts into a compact, verifiable binary
// back-off language model and answers questions about it.
//
// Exit codes: 0 success, 1 a check failed, 2 bad usage or bad input, 70 an
// internal error (a panic), 134 (SIGABRT) a fatal runtime error.
package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"

	"github.com/spf13/cobra"

	"ingot/compile/input"
	"ingot/format"
)

// version is the tool version recorded in every model it writes.
const version = "0.1.0"

// Exit codes. A fatal runtime error the process cannot recover from (out
// of memory, a fault outside the guarded query paths) ends it with SIGABRT
// (exit status 134 in a shell), never 2: see crashOnFatalErrors.
const (
	exitOK          = 0
	exitCheckFailed = 1
	exitBadInput    = 2
	exitInternal    = 70 // a panic: a bug in ingot (the sysexits.h EX_SOFTWARE)
)

// checkFailed marks an error that means "a check did not hold" (exit 1)
// rather than bad usage or input (exit 2).
type checkFailed struct{ err error }

func (e checkFailed) Error() string { return e.err.Error() }
func (e checkFailed) Unwrap() error { return e.err }

func main() {
	crashOnFatalErrors()
	ctx, stop := withInterruptCleanup(os.Stderr)
	code := runContext(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// run executes one command line and returns the exit code.
func run(args []string, stdout, stderr io.Writer) int {
	return runContext(context.Background(), args, stdout, stderr)
}

// runContext is run with a context that commands pass on (it carries the
// temporary outputs to remove when the run is interrupted).
//
// A model file that shrinks while a command reads it is reported as bad
// input (the commands run inside format.Guard), and a panic as an internal
// error, exit 70, with its stack on stderr; the temporary outputs are
// removed on the way out either way.
func runContext(ctx context.Context, args []string, stdout, stderr io.Writer) (code int) {
	defer func() {
		if r := recover(); r != nil {
			fmt.Fprintf(stderr, "ingot: internal error (a bug in ingot; please report it with the command line): %v\n%s", r, debug.Stack())
			code = exitInternal
		}
	}()
	root := newRoot(stdout, stderr)
	root.SetArgs(args)
	ctx = context.WithValue(ctx, commandLineKey{}, append([]string{"ingot"}, args...))
	var cmd *cobra.Command
	err := format.Guard(func() (err error) {
		cmd, err = root.ExecuteContextC(ctx)
		return err
	})
	if err == nil {
		return exitOK
	}
	if cmd == nil { // the command was stopped by a fault in a mapped file
		cmd, _, _ = root.Find(args)
	}
	fmt.Fprintln(stderr, errorLine(root, cmd, err))
	var cf checkFailed
	if errors.As(err, &cf) {
		return exitCheckFailed
	}
	return exitBadInput
}

func newRoot(stdout, stderr io.Writer) *cobra.Command {
	root := &cobra.Command{
		Use:   "ingot",
		Short: "Compile n-gram counts into a compact, verifiable back-off language model",
		Long: `ingot turns text or n-gram counts into a smoothed back-off language model
(Katz, absolute discounting, Witten-Bell, modified Kneser-Ney), writes it as a
self-describing binary file, and scores and explains with it.

Exit codes: 0 success, 1 a check failed, 2 bad usage or bad input, 70 an
internal error (a bug), 134 (SIGABRT) a fatal runtime error.`,
		Version:       version,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetOut(stdout)
	root.SetErr(stderr)
	root.SetFlagErrorFunc(func(c *cobra.Command, err error) error {
		if msg, ok := renamedFlag(c, err); ok {
			return errors.New(msg)
		}
		return fmt.Errorf("%s (see '%s --help')", flagProblem(err), c.CommandPath())
	})
	root.AddCommand(
		newCountCmd(),
		newCompileCmd(),
		newScoreCmd(),
		newExplainCmd(),
		newInspectCmd(),
		newVerifyCmd(),
		newPruneCmd(),
		newQuantizeCmd(),
		newInterpolateCmd(),
		newTradeoffCmd(),
		newKeygenCmd(),
		newSignCmd(),
		newDemoCmd(),
	)
	root.AddCommand(testCommands...)
	for _, c := range root.Commands() {
		if readsLines[c.Name()] {
			addMaxLineFlag(c)
		}
	}
	inOurVoice(root)
	return root
}

// readsLines names the commands that read text or count files, which take
// --max-line.
var readsLines = map[string]bool{"count": true, "compile": true, "score": true, "prune": true, "verify": true, "tradeoff": true, "interpolate": true}

// addMaxLineFlag gives cmd the --max-line option, the line-length cap of
// package input, applied before the command runs.
func addMaxLineFlag(cmd *cobra.Command) {
	limit := cmd.Flags().String("max-line", "16MiB", "longest line read from text, count and word-list files (a size: 16MiB, 100KB, ...)")
	run := cmd.RunE
	cmd.RunE = func(c *cobra.Command, args []string) error {
		n, err := parseSize(*limit)
		if err != nil {
			return fmt.Errorf("%s: --max-line: %w", c.Name(), err)
		}
		input.SetMaxLine(n)
		return run(c, args)
	}
}

// testCommands are added to the root by tests (a command that panics, to
// check the exit code of a bug); empty in the program.
var testCommands []*cobra.Command

// commandLineKey carries the command line in a command's context, for the
// provenance recorded in the models it writes.
type commandLineKey struct{}

// commandWords returns the command line that runs cmd, "ingot" first.
func commandWords(cmd *cobra.Command) []string {
	if w, ok := cmd.Context().Value(commandLineKey{}).([]string); ok {
		return w
	}
	return []string{"ingot", cmd.Name()}
}

// newEncoder returns a JSON encoder that leaves <, > and & as they are
// (the markers <s>, </s> and <unk> read better unescaped).
func newEncoder(w io.Writer) *json.Encoder {
	enc := json.NewEncoder(w)
	enc.SetEscapeHTML(false)
	return enc
}

// writeJSON writes v as one JSON object on one line: every --json report
// has this one style, so a report and a stream of them (score, inspect
// --dump) read the same way, as JSON Lines.
func writeJSON(w io.Writer, v any) error {
	return newEncoder(w).Encode(v)
}

// crashOnFatalErrors makes a fatal runtime error, or a panic on a goroutine
// that runContext does not cover, end the process with SIGABRT (status 134)
// rather than the runtime's default exit status 2, which ingot keeps for bad
// input. The traceback then lists every goroutine; a core file is written
// only where the resource limits allow one (ulimit -c).
func crashOnFatalErrors() { debug.SetTraceback("crash") }
