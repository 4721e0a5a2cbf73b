package main

import (
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"ingot/compile/corpus"
)

// buildIngot compiles the command once for tests that run it as a process.
func buildIngot(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "ingot")
	out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput()
	if err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// An interrupted run leaves nothing behind: neither the output nor its
// temporary file. Interrupted while reading (count from a pipe that never
// ends) and while writing (compile, signalled the moment its temporary file
// appears).
func TestInterruptedRunsLeaveNoOutput(t *testing.T) {
	bin := buildIngot(t)
	dir := t.TempDir()

	// While reading.
	out := filepath.Join(dir, "counts.tsv")
	cmd := exec.Command(bin, "count", "--order", "3", "-o", out)
	stdin, _ := cmd.StdinPipe()
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	stdin.Write([]byte("a b c\nd e f\n"))
	time.Sleep(time.Second) // time to set up its signal handling, even on a loaded machine
	cmd.Process.Signal(syscall.SIGINT)
	err := cmd.Wait()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != 130 {
		t.Errorf("count after SIGINT: %v, want exit 130", err)
	}
	assertNothingWritten(t, dir, "counts.tsv")

	// While writing: a model of some size, so the write takes a moment.
	text := filepath.Join(dir, "train.txt")
	f, _ := os.Create(text)
	corpus.Generate(f, 1, 30000, 20000)
	f.Close()
	counts := filepath.Join(dir, "c.tsv")
	if b, err := exec.Command(bin, "count", "--order", "3", "-o", counts, text).CombinedOutput(); err != nil {
		t.Fatalf("count: %v %s", err, b)
	}
	caught := false
	for attempt := 0; attempt < 5 && !caught; attempt++ {
		model := filepath.Join(dir, "m.ingot")
		cmd := exec.Command(bin, "compile", "--method", "kneser-ney", "--order", "3", "-o", model, counts)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		deadline := time.Now().Add(60 * time.Second)
		for time.Now().Before(deadline) {
			if tmpFiles(dir, "m.ingot") > 0 {
				cmd.Process.Signal(syscall.SIGTERM)
				caught = true
				break
			}
			if cmd.ProcessState != nil {
				break
			}
			time.Sleep(200 * time.Microsecond)
		}
		err := cmd.Wait()
		if caught {
			if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != 143 {
				// The write may have finished between the poll and the
				// signal; then the output is complete, which is fine.
				if err == nil {
					caught = false
					os.Remove(model)
					continue
				}
				t.Errorf("compile after SIGTERM: %v, want exit 143", err)
			}
			assertNothingWritten(t, dir, "m.ingot")
		} else {
			os.Remove(model)
		}
	}
	if !caught {
		t.Error("never caught the compile while it was writing its output")
	}
}

func tmpFiles(dir, base string) int {
	n := 0
	entries, _ := os.ReadDir(dir)
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), "."+base+".tmp-") {
			n++
		}
	}
	return n
}

func assertNothingWritten(t *testing.T, dir, base string) {
	t.Helper()
	if _, err := os.Stat(filepath.Join(dir, base)); err == nil {
		t.Errorf("%s exists after an interrupted run", base)
	}
	if n := tmpFiles(dir, base); n > 0 {
		t.Errorf("%d temporary files of %s left behind", n, base)
	}
}

// count with a small budget spills sorted runs into a private directory
// under --tmp; the directory is gone after success, after a failure (a bad
// line near the end) and after SIGINT, and the counts equal those counted
// in memory.
func TestCountSpillDirectoryIsRemoved(t *testing.T) {
	bin := buildIngot(t)
	dir, tmp := t.TempDir(), t.TempDir()
	text := filepath.Join(dir, "train.txt")
	f, _ := os.Create(text)
	corpus.Generate(f, 5, 25000, 50000)
	f.Close()
	spillDirs := func() []string {
		entries, _ := os.ReadDir(tmp)
		var names []string
		for _, e := range entries {
			names = append(names, e.Name())
		}
		return names
	}

	// Success, compared with the unbounded run.
	small, big := filepath.Join(dir, "small.bin"), filepath.Join(dir, "big.bin")
	if out, err := exec.Command(bin, "count", "--order", "4", "--memory", "16MiB", "--tmp", tmp, "--log-level", "info", "-o", small, text).CombinedOutput(); err != nil {
		t.Fatalf("count --memory 16MiB: %v\n%s", err, out)
	} else if !strings.Contains(string(out), "runs=") || strings.Contains(string(out), "runs=0 ") {
		t.Errorf("the 16 MiB run did not spill:\n%s", out)
	}
	if out, err := exec.Command(bin, "count", "--order", "4", "-o", big, text).CombinedOutput(); err != nil {
		t.Fatalf("count: %v\n%s", err, out)
	}
	a, _ := os.ReadFile(small)
	b, _ := os.ReadFile(big)
	if len(a) == 0 || string(a) != string(b) {
		t.Errorf("counts with --memory 16MiB differ from the unbounded run (%d vs %d bytes)", len(a), len(b))
	}
	if left := spillDirs(); len(left) > 0 {
		t.Errorf("after success: %v left in --tmp", left)
	}

	// Failure: a marker on the last line, found after the spills.
	bad := filepath.Join(dir, "bad.txt")
	data, _ := os.ReadFile(text)
	os.WriteFile(bad, append(data, "a <unk> here\n"...), 0o644)
	out, err := exec.Command(bin, "count", "--order", "4", "--memory", "16MiB", "--tmp", tmp, "-o", filepath.Join(dir, "x.bin"), bad).CombinedOutput()
	if err == nil || !strings.Contains(string(out), "bad.txt:25001: marker <unk> inside raw text") {
		t.Errorf("bad line: %v\n%s", err, out)
	}
	if left := spillDirs(); len(left) > 0 {
		t.Errorf("after failure: %v left in --tmp", left)
	}

	// SIGINT while the runs are on disk.
	cmd := exec.Command(bin, "count", "--order", "4", "--memory", "16MiB", "--tmp", tmp, "-o", filepath.Join(dir, "y.bin"), text)
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if names := spillDirs(); len(names) > 0 {
			runs, _ := os.ReadDir(filepath.Join(tmp, names[0]))
			if len(runs) > 0 {
				break
			}
		}
		time.Sleep(time.Millisecond)
	}
	cmd.Process.Signal(syscall.SIGINT)
	err = cmd.Wait()
	if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != 130 {
		t.Errorf("count after SIGINT: %v, want exit 130", err)
	}
	if left := spillDirs(); len(left) > 0 {
		t.Errorf("after SIGINT: %v left in --tmp", left)
	}
}
