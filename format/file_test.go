//go:build unix

package format

import (
	"errors"
	"ingot/compile/fixture"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"ingot/format/files"
)

// Open refuses anything but a regular file, quickly: a named pipe with no
// writer does not hang it, and a device such as /dev/zero is not read.
func TestOpenRefusesFilesThatAreNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "model.fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Fatal(err)
	}
	cases := map[string]string{
		fifo:        "is a named pipe",
		dir:         "is a directory",
		"/dev/zero": "is a device",
	}
	for path, want := range cases {
		for name, open := range map[string]func(string) (*Model, error){"Open": Open, "Load": Load} {
			done := make(chan error, 1)
			go func() {
				_, err := open(path)
				done <- err
			}()
			select {
			case err := <-done:
				if err == nil || !strings.Contains(err.Error(), want) || !errors.Is(err, files.ErrNotRegular) {
					t.Errorf("%s(%s): %v, want an error saying %q", name, path, err, want)
				}
			case <-time.After(10 * time.Second):
				t.Fatalf("%s(%s) blocked", name, path)
			}
		}
	}
}

// A model file truncated while it is mapped: a query inside Guard gets a
// *FaultError instead of a SIGBUS that kills the process, and a model read
// with Load does not notice at all.
func TestTruncatedWhileOpen(t *testing.T) {
	tb := fixture.RandomTables(3, 2000, []int{30000, 40000})
	data := mustMarshal(t, tb)
	path := filepath.Join(t.TempDir(), "m.ingot")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	mapped, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer mapped.Close()
	if !mapped.Mapped() {
		t.Fatal("Open did not map the file")
	}
	loaded, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if loaded.Mapped() {
		t.Error("Load returned a mapped model")
	}
	want := sumEveryEntry(loaded)
	if err := os.Truncate(path, 0); err != nil {
		t.Fatal(err)
	}
	err = Guard(func() error {
		sumEveryEntry(mapped)
		return nil
	})
	var fault *FaultError
	if !errors.As(err, &fault) {
		t.Fatalf("Guard returned %v, want a *FaultError", err)
	}
	if !strings.Contains(err.Error(), "changed while in use") {
		t.Errorf("message %q", err)
	}
	// Guard restores the goroutine's setting and passes other panics on.
	func() {
		defer func() {
			if r := recover(); r != "not a fault" {
				t.Errorf("recovered %v, want the panic passed on", r)
			}
		}()
		Guard(func() error { panic("not a fault") })
	}()
	if got := sumEveryEntry(loaded); got != want {
		t.Errorf("loaded model changed: %v, want %v", got, want)
	}
	// Opening the truncated file again is refused as too short.
	if _, err := Open(path); err == nil || !strings.Contains(err.Error(), "shorter than the") {
		t.Errorf("reopening: %v", err)
	}
}

// sumEveryEntry reads every probability and back-off weight.
func sumEveryEntry(m *Model) float64 {
	sum := 0.0
	for k := 1; k <= m.Order(); k++ {
		for i := 0; i < m.Count(k); i++ {
			sum += float64(m.LogProbAt(k, i))
			if k < m.Order() {
				sum += float64(m.LogBackoffAt(k, i))
			}
		}
	}
	return sum
}
