package main

import (
	"os"
	"strings"
	"testing"
)

// The demo's closing hint runs as printed: its program part is how this
// process was started, and the rest is a command line that succeeds.
func TestDemoHintRunsAsPrinted(t *testing.T) {
	dir := t.TempDir()
	code, out, e := ingot(t, "demo", dir)
	if code != 0 {
		t.Fatalf("demo: exit %d: %s", code, e)
	}
	_, hint, ok := strings.Cut(out, "\nTry: ")
	if !ok {
		t.Fatalf("demo prints no hint:\n%s", out)
	}
	hint = strings.TrimSpace(hint)
	prog := invokedAs(os.Args[0])
	rest, ok := strings.CutPrefix(hint, prog+" ")
	if !ok {
		t.Fatalf("hint %q does not start with %q", hint, prog)
	}
	args := shellWords(t, rest)
	code, got, e := ingot(t, args...)
	if code != 0 || !strings.Contains(got, "next words after") {
		t.Errorf("hint %q: exit %d, stderr %q, output:\n%s", hint, code, e, got)
	}
}

func TestInvokedAs(t *testing.T) {
	for arg0, want := range map[string]string{
		"/tmp/go-build123/b001/exe/ingot": "go run ./cmd/ingot",
		"./ingot":                         "./ingot",
		"/usr/local/bin/ingot":            "/usr/local/bin/ingot",
		"ingot":                           "ingot",
	} {
		if got := invokedAs(arg0); got != want {
			t.Errorf("invokedAs(%q) = %q, want %q", arg0, got, want)
		}
	}
}

// shellWords splits a command line as a shell would, for the double quotes
// the demo prints.
func shellWords(t *testing.T, line string) []string {
	var words []string
	var cur strings.Builder
	inWord, quoted := false, false
	for _, r := range line {
		switch {
		case r == '"':
			quoted, inWord = !quoted, true
		case r == ' ' && !quoted:
			if inWord {
				words = append(words, cur.String())
				cur.Reset()
			}
			inWord = false
		default:
			cur.WriteRune(r)
			inWord = true
		}
	}
	if quoted {
		t.Fatalf("unbalanced quotes in %q", line)
	}
	if inWord {
		words = append(words, cur.String())
	}
	return words
}
