package main

import (
	"errors"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"github.com/spf13/cobra"
)

// A panic is an internal error, exit 70 with the stack on stderr, never 2
// (the bad-input code), and the temporary output it was writing is removed.
func TestPanicExitsWithItsOwnCode(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "out.tsv")
	testCommands = []*cobra.Command{{
		Use: "crash-for-test",
		RunE: func(cmd *cobra.Command, args []string) error {
			return writeOutput(cmd.Context(), out, nil, func(w io.Writer) error {
				w.Write([]byte("half"))
				var m map[string]int
				m["boom"]++ // a nil map: a runtime panic
				return nil
			})
		},
	}}
	defer func() { testCommands = nil }()
	code, stdout, stderr := ingot(t, "crash-for-test")
	if code != exitInternal || exitInternal == exitBadInput {
		t.Errorf("exit %d, want %d", code, exitInternal)
	}
	if !strings.Contains(stderr, "internal error") || !strings.Contains(stderr, "assignment to entry in nil map") || !strings.Contains(stderr, "goroutine") {
		t.Errorf("stderr lacks the panic and its stack: %q", stderr)
	}
	if stdout != "" {
		t.Errorf("stdout %q", stdout)
	}
	assertNothingWritten(t, dir, "out.tsv")
}

// A fatal error the process cannot recover from (here a panic on a
// goroutine of its own, which no recover covers) ends it with SIGABRT, not
// the runtime's default exit status 2. The test runs itself as a child
// process that sets the program's crash mode and then panics.
func TestFatalErrorEndsWithSIGABRT(t *testing.T) {
	if os.Getenv("INGOT_TEST_FATAL") == "1" {
		// No core file from the test, whatever the machine's limits.
		syscall.Setrlimit(syscall.RLIMIT_CORE, &syscall.Rlimit{})
		crashOnFatalErrors()
		done := make(chan bool)
		go func() { panic("fatal for the test") }()
		<-done
	}
	cmd := exec.Command(os.Args[0], "-test.run=^TestFatalErrorEndsWithSIGABRT$")
	cmd.Env = append(os.Environ(), "INGOT_TEST_FATAL=1")
	out, err := cmd.CombinedOutput()
	var ee *exec.ExitError
	if !errors.As(err, &ee) {
		t.Fatalf("child: %v", err)
	}
	ws, ok := ee.Sys().(syscall.WaitStatus)
	if !ok || !ws.Signaled() || ws.Signal() != syscall.SIGABRT {
		t.Errorf("child ended with %v (exit code %d), want SIGABRT", err, ee.ExitCode())
	}
	if !strings.Contains(string(out), "fatal for the test") {
		t.Errorf("child output lacks the panic:\n%.500s", out)
	}
}
