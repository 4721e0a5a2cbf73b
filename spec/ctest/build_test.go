package ctest

import (
	"bytes"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"ingot/compile/corpus"
)

// buildCommand is the command spec/c/README.md gives for the example
// program, run from the module root; the tests build exactly this.
var buildCommand = []string{"cc", "-std=c99", "-O2", "-Wall", "-Wextra", "-Werror", "-o", "OUT", "spec/c/*.c", "-lm"}

// sanitizerFlags replace -O2 for the sanitized builds: any out-of-bounds
// read, use of freed memory or undefined behaviour ends the program with a
// report.
var sanitizerFlags = []string{"-O1", "-g", "-fno-omit-frame-pointer", "-fsanitize=address,undefined", "-fno-sanitize-recover=all"}

// programs are the C programs the tests run.
type programs struct {
	root       string
	score      string // spec/c built with buildCommand
	scoreASan  string // the same with the sanitizers
	driver     string // spec/ctest/testdata/driver.c with the reader
	driverASan string
}

var (
	built    programs
	buildErr error
	once     sync.Once
)

// sanitizerEnv keeps the sanitizers' reports on stderr and stops at the
// first (leak detection is off: it needs ptrace, which sandboxes refuse,
// and the reader allocates nothing).
var sanitizerEnv = append(os.Environ(), "ASAN_OPTIONS=detect_leaks=0:abort_on_error=0:halt_on_error=1", "UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1")

func compile(root string, args []string) error {
	var expanded []string
	for _, a := range args {
		if strings.Contains(a, "*") {
			m, err := filepath.Glob(filepath.Join(root, a))
			if err != nil || len(m) == 0 {
				return fmt.Errorf("no files match %s", a)
			}
			for _, f := range m {
				rel, _ := filepath.Rel(root, f)
				expanded = append(expanded, rel)
			}
			continue
		}
		expanded = append(expanded, a)
	}
	cmd := exec.Command(expanded[0], expanded[1:]...)
	cmd.Dir = root
	out, err := cmd.CombinedOutput()
	if err != nil {
		return fmt.Errorf("%s: %v\n%s\n(the C reader's tests need a C compiler named cc on the PATH)", strings.Join(expanded, " "), err, out)
	}
	return nil
}

func withOut(args []string, out string) []string {
	r := append([]string(nil), args...)
	for i, a := range r {
		if a == "OUT" {
			r[i] = out
		}
	}
	return r
}

// sanitized turns buildCommand into the sanitized build.
func sanitized(args []string) []string {
	var r []string
	for _, a := range args {
		if a == "-O2" {
			r = append(r, sanitizerFlags...)
			continue
		}
		r = append(r, a)
	}
	return r
}

// tools builds the programs once per test binary.
func tools(t testing.TB) programs {
	t.Helper()
	once.Do(func() {
		root, err := corpus.Root()
		if err != nil {
			buildErr = err
			return
		}
		dir, err := os.MkdirTemp("", "ingot-ctest-")
		if err != nil {
			buildErr = err
			return
		}
		built = programs{
			root:       root,
			score:      filepath.Join(dir, "score"),
			scoreASan:  filepath.Join(dir, "score-asan"),
			driver:     filepath.Join(dir, "driver"),
			driverASan: filepath.Join(dir, "driver-asan"),
		}
		driverCmd := []string{"cc", "-std=c99", "-O2", "-Wall", "-Wextra", "-Werror", "-Ispec/c", "-o", "OUT", "spec/ctest/testdata/driver.c", "spec/c/ingot.c", "-lm"}
		jobs := [][]string{
			withOut(buildCommand, built.score),
			withOut(sanitized(buildCommand), built.scoreASan),
			withOut(driverCmd, built.driver),
			withOut(sanitized(driverCmd), built.driverASan),
		}
		errs := make([]error, len(jobs))
		var wg sync.WaitGroup
		for i, j := range jobs {
			wg.Add(1)
			go func() {
				defer wg.Done()
				errs[i] = compile(root, j)
			}()
		}
		wg.Wait()
		for _, e := range errs {
			if e != nil && buildErr == nil {
				buildErr = e
			}
		}
	})
	if buildErr != nil {
		t.Fatal(buildErr)
	}
	return built
}

func TestMain(m *testing.M) {
	code := m.Run()
	if built.score != "" {
		os.RemoveAll(filepath.Dir(built.score))
	}
	os.Exit(code)
}

// result is what a run of a C program gave.
type result struct {
	stdout, stderr string
	code           int
}

// run runs a program with stdin and returns its output and exit code; a
// program that could not start fails the test.
func run(t testing.TB, stdin string, sanitizer bool, prog string, args ...string) result {
	t.Helper()
	cmd := exec.Command(prog, args...)
	cmd.Stdin = strings.NewReader(stdin)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if sanitizer {
		cmd.Env = sanitizerEnv
	}
	err := cmd.Run()
	code := 0
	if err != nil {
		ee, ok := err.(*exec.ExitError)
		if !ok {
			t.Fatalf("%s: %v", prog, err)
		}
		code = ee.ExitCode()
	}
	r := result{out.String(), errb.String(), code}
	if sanitizer && sanitizerReport(r.stderr) {
		t.Fatalf("%s %s: sanitizer report:\n%s", filepath.Base(prog), strings.Join(args, " "), r.stderr)
	}
	return r
}

// sanitizerReport tells whether stderr holds a report of the address or
// undefined-behaviour sanitizer.
func sanitizerReport(stderr string) bool {
	return strings.Contains(stderr, "Sanitizer") || strings.Contains(stderr, "runtime error:")
}

// TestSanitizerCatches proves the sanitized build reports what it should:
// a deliberate read past a heap block, compiled the same way, is caught
// (were the sanitizer silent, the damage tests below could not fail).
func TestSanitizerCatches(t *testing.T) {
	p := tools(t)
	dir := t.TempDir()
	src := filepath.Join(dir, "overread.c")
	if err := os.WriteFile(src, []byte("#include <stdlib.h>\n#include <stdio.h>\nint main(int c, char **v) { (void)v; unsigned char *p = malloc(8); p[0] = 1; printf(\"%d\\n\", p[8 + c]); free(p); return 0; }\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "overread")
	args := append([]string{"cc", "-std=c99"}, sanitizerFlags...)
	if err := compile(p.root, append(args, "-o", bin, src)); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(bin)
	cmd.Env = sanitizerEnv
	out, err := cmd.CombinedOutput()
	if err == nil || !sanitizerReport(string(out)) {
		t.Fatalf("a read past a heap block went unreported (err %v):\n%s", err, out)
	}
}
