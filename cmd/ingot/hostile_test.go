//go:build unix

package main

import (
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// ingotWithin is ingot with a deadline: a command that hangs fails the test
// instead of stalling the suite.
func ingotWithin(t *testing.T, d time.Duration, args ...string) (int, string, string) {
	t.Helper()
	type result struct {
		code           int
		stdout, stderr string
	}
	done := make(chan result, 1)
	go func() {
		code, o, e := ingot(t, args...)
		done <- result{code, o, e}
	}()
	select {
	case r := <-done:
		return r.code, r.stdout, r.stderr
	case <-time.After(d):
		t.Fatalf("ingot %s did not finish within %v", strings.Join(args, " "), d)
	}
	return 0, "", ""
}

// Models and keys must be regular files: an endless device or a named pipe
// with no writer is refused at once, with exit 2, instead of being read
// without end or hanging the command.
func TestModelsAndKeysMustBeRegularFiles(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	fifo := filepath.Join(dir, "pipe")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	if code, _, e := ingot(t, "keygen", "-o", filepath.Join(dir, "k")); code != 0 {
		t.Fatal(e)
	}
	for _, bad := range []struct{ path, says string }{
		{"/dev/zero", "is a device"},
		{"/dev/urandom", "is a device"},
		{fifo, "is a named pipe"},
		{dir, "is a directory"},
	} {
		for _, args := range [][]string{
			{"score", bad.path},
			{"explain", bad.path, "a b"},
			{"inspect", bad.path},
			{"verify", bad.path},
			{"sign", "--key", filepath.Join(dir, "k.key"), bad.path},
			{"sign", "--key", bad.path, model},
			{"verify", "--public-key", bad.path, model},
			{"prune", "--drop-below", "1e-6", "-o", filepath.Join(dir, "out"), bad.path},
		} {
			code, stdout, stderr := ingotWithin(t, 10*time.Second, args...)
			if code != exitBadInput || !strings.Contains(stderr, bad.says) || stdout != "" {
				t.Errorf("ingot %s: exit %d, stdout %q, stderr %q; want exit 2 saying %q", strings.Join(args, " "), code, stdout, stderr, bad.says)
			}
		}
	}
}

// A model truncated while `score` has it mapped (as `cp new.ingot
// model.ingot` does to a model in use) is reported as unreadable input,
// exit 2, never a SIGBUS that kills the process. The text comes through a
// named pipe so that the truncation falls between opening the model and
// scoring.
func TestModelTruncatedWhileScoring(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	fifo := filepath.Join(dir, "text")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	go func() {
		w, err := os.OpenFile(fifo, os.O_WRONLY, 0) // waits for score to open the text
		if err != nil {
			return
		}
		os.Truncate(model, 0) // score has mapped the model by now
		w.Write([]byte("turn the beacon on\n"))
		w.Close()
	}()
	code, _, stderr := ingotWithin(t, 20*time.Second, "score", model, fifo)
	if code != exitBadInput || !strings.Contains(stderr, "changed while in use") {
		t.Errorf("exit %d, stderr %q; want exit 2 saying the file changed while in use", code, stderr)
	}
}
