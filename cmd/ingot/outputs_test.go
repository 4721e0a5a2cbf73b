//go:build unix

package main

import (
	"bytes"
	"crypto/ed25519"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"

	"ingot/format"
	"ingot/format/keys"

	"github.com/klauspost/compress/gzip"
)

// An output that is an input is refused before anything is read, and the
// input is left as it was: the same path, a hard link, or a symbolic link.
func TestOutputThatIsAnInputIsLeftIntact(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "corpus.txt", demoTraining)
	counts := filepath.Join(dir, "counts.tsv")
	if code, _, e := ingot(t, "count", "--order", "2", "-o", counts, text); code != 0 {
		t.Fatal(e)
	}
	hard := filepath.Join(dir, "hard.tsv")
	soft := filepath.Join(dir, "soft.tsv")
	os.Link(counts, hard)
	os.Symlink(counts, soft)
	before, _ := os.ReadFile(counts)
	beforeText, _ := os.ReadFile(text)
	for _, args := range [][]string{
		{"count", "--order", "2", "-o", text, text},
		{"compile", "--method", "katz", "--order", "2", "-o", counts, counts},
		{"compile", "--method", "katz", "--order", "2", "-o", hard, counts},
		{"compile", "--method", "katz", "--order", "2", "-o", soft, counts},
	} {
		code, _, stderr := ingot(t, args...)
		if code != exitBadInput || !strings.Contains(stderr, "would destroy the input") {
			t.Errorf("ingot %s: exit %d, %q", strings.Join(args, " "), code, stderr)
		}
	}
	after, _ := os.ReadFile(counts)
	afterText, _ := os.ReadFile(text)
	if !bytes.Equal(before, after) || !bytes.Equal(beforeText, afterText) {
		t.Error("an input was changed")
	}
}

// New outputs honour the umask; a replaced output keeps its mode, and so
// does a model that sign rewrites. sign on a symbolic link signs the file
// it points to and leaves the link a link.
func TestOutputModesAndLinks(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	old := syscall.Umask(0o077)
	defer syscall.Umask(old)
	fresh := filepath.Join(dir, "fresh.ingot")
	if code, _, e := ingot(t, "quantize", "--bits", "8", "-o", fresh, model); code != 0 {
		t.Fatal(e)
	}
	if m := mode(t, fresh); m != 0o600 {
		t.Errorf("new output under umask 077: mode %o, want 600", m)
	}
	syscall.Umask(0o022)
	os.Chmod(fresh, 0o640)
	if code, _, e := ingot(t, "quantize", "--bits", "6", "-o", fresh, model); code != 0 {
		t.Fatal(e)
	}
	if m := mode(t, fresh); m != 0o640 {
		t.Errorf("replaced output: mode %o, want the 640 it had", m)
	}
	if code, _, e := ingot(t, "keygen", "-o", filepath.Join(dir, "k")); code != 0 {
		t.Fatal(e)
	}
	if m := mode(t, filepath.Join(dir, "k.key")); m != 0o600 {
		t.Errorf("private key: mode %o, want 600", m)
	}
	if m := mode(t, filepath.Join(dir, "k.pub")); m != 0o644 {
		t.Errorf("public key under umask 022: mode %o, want 644", m)
	}
	os.Chmod(model, 0o600)
	link := filepath.Join(dir, "current.ingot")
	if err := os.Symlink(model, link); err != nil {
		t.Fatal(err)
	}
	if code, _, e := ingot(t, "sign", "--key", filepath.Join(dir, "k.key"), link); code != 0 {
		t.Fatal(e)
	}
	if st, err := os.Lstat(link); err != nil || st.Mode()&os.ModeSymlink == 0 {
		t.Errorf("sign replaced the link: %v", err)
	}
	if m := mode(t, model); m != 0o600 {
		t.Errorf("signed model: mode %o, want the 600 it had", m)
	}
	if code, _, e := ingot(t, "verify", "--public-key", filepath.Join(dir, "k.pub"), model); code != 0 {
		t.Errorf("the link's target is not signed: %s", e)
	}
}

func mode(t *testing.T, path string) os.FileMode {
	t.Helper()
	st, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	return st.Mode().Perm()
}

// Several keygens racing for one name: exactly one succeeds, and the two
// files always hold the two halves of one key pair.
func TestKeygenRace(t *testing.T) {
	dir := t.TempDir()
	for round := range 20 {
		name := filepath.Join(dir, fmt.Sprint("r", round))
		var wg sync.WaitGroup
		codes := make([]int, 3)
		for i := range codes {
			wg.Go(func() { codes[i], _, _ = ingot(t, "keygen", "-o", name) })
		}
		wg.Wait()
		wins := 0
		for _, c := range codes {
			if c == exitOK {
				wins++
			}
		}
		if wins != 1 {
			t.Fatalf("round %d: %d keygens reported success (exit codes %v)", round, wins, codes)
		}
		priv, err := keys.ReadPrivate(name + ".key")
		if err != nil {
			t.Fatal(err)
		}
		pub, err := keys.ReadPublic(name + ".pub")
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(priv.Public().(ed25519.PublicKey), pub) {
			t.Fatalf("round %d: %s.key and %s.pub do not match", round, name, name)
		}
	}
	if n := tmpFiles(dir, "r0.key") + tmpFiles(dir, "r0.pub"); n > 0 {
		t.Errorf("%d temporary files left", n)
	}
}

// Counts of order 10 from sentences too short for 10-grams build the
// highest order they hold, and compile says so: binary counts record the
// order they were counted at, and in text counts every n-gram of the
// highest order present is a whole sentence. Counts cut off at a lower
// order are still refused (see "order above the counts" in the bad-input
// table).
func TestCompileBuildsTheOrderTheCountsAllow(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "short.txt", "turn on\nturn off\nturn the beacon on\n")
	for _, form := range []string{"--text", "--text=false"} {
		counts := filepath.Join(dir, "c"+form)
		if code, _, e := ingot(t, "count", "--order", "10", form, "-o", counts, text); code != 0 {
			t.Fatal(e)
		}
		compileShortCounts(t, dir, counts)
	}
	// Text counts of order 3 from the same sentences are cut short: their
	// 3-grams are not whole sentences.
	cut := filepath.Join(dir, "cut.txt")
	if code, _, e := ingot(t, "count", "--order", "3", "--text", "-o", cut, text); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "compile", "--method", "witten-bell", "--order", "10", "-o", filepath.Join(dir, "x.ingot"), cut); code != exitBadInput || !strings.Contains(e, "counts hold orders up to 3, order 10 asked") {
		t.Errorf("counts cut at order 3: exit %d, %q", code, e)
	}
}

func compileShortCounts(t *testing.T, dir, counts string) {
	t.Helper()
	model := filepath.Join(dir, "m.ingot")
	code, _, stderr := ingot(t, "compile", "--method", "witten-bell", "--order", "10", "-o", model, counts)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "built a model of order 6") {
		t.Errorf("compile did not say what it built: %q", stderr)
	}
	code, out, _ := ingot(t, "inspect", "--json", model)
	var summary struct{ Order int }
	if err := json.Unmarshal([]byte(out), &summary); code != 0 || err != nil || summary.Order != 6 {
		t.Errorf("inspect: exit %d, %v, order %d, want 6", code, err, summary.Order)
	}
	if code, _, e := ingot(t, "verify", model); code != 0 {
		t.Errorf("verify: %s", e)
	}
}

// A model pruned to --max-size still fits once signed.
func TestPruneMaxSizeLeavesRoomForASignature(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	st, _ := os.Stat(model)
	budget := st.Size() * 2 / 3
	small := filepath.Join(dir, "small.ingot")
	if code, _, e := ingot(t, "prune", "--max-size", fmt.Sprint(budget), "-o", small, model); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "keygen", "-o", filepath.Join(dir, "k")); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "sign", "--key", filepath.Join(dir, "k.key"), small); code != 0 {
		t.Fatal(e)
	}
	signed, _ := os.Stat(small)
	if signed.Size() > budget {
		t.Errorf("signed pruned model is %d bytes, over the %d-byte budget", signed.Size(), budget)
	}
}

// Compressed text on standard input is recognised by its magic bytes.
func TestGzipOnStandardInput(t *testing.T) {
	dir := t.TempDir()
	var gz bytes.Buffer
	w := gzip.NewWriter(&gz)
	w.Write([]byte("turn the beacon on\nturn it off\n"))
	w.Close()
	r, wr, _ := os.Pipe()
	go func() { wr.Write(gz.Bytes()); wr.Close() }()
	saved := os.Stdin
	os.Stdin = r
	defer func() { os.Stdin = saved }()
	out := filepath.Join(dir, "c.tsv")
	if code, _, e := ingot(t, "count", "--order", "2", "--text", "-o", out); code != 0 {
		t.Fatalf("count from gzip on stdin: %s", e)
	}
	b, _ := os.ReadFile(out)
	if !strings.Contains(string(b), "1\tturn the\n") {
		t.Errorf("counts:\n%s", b)
	}
}

// The tradeoff chart prints its progress only to a terminal: a log file or
// a pipe gets no carriage returns.
func TestTradeoffProgressOnlyOnATerminal(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", "turn the beacon on\n")
	code, _, stderr := ingot(t, "tradeoff", "--heldout", held, "--drop-below", "0,1e-6", "--bits", "0", "-o", filepath.Join(dir, "chart"), model)
	if code != 0 {
		t.Fatal(stderr)
	}
	if stderr != "" {
		t.Errorf("stderr is not a terminal but got %q", stderr)
	}
}

// compile -o - writes the model alone to standard output (it opens as a
// model and holds what -o FILE writes, but for the command line its
// history records) and its report to standard error; prune -o - is refused
// before any work (the bad-input table), never a crash.
func TestCompileToStandardOutput(t *testing.T) {
	dir := t.TempDir()
	counts := filepath.Join(dir, "c.tsv")
	if code, _, e := ingot(t, "count", "--order", "3", "--text", "-o", counts, writeFile(t, dir, "t.txt", demoTraining)); code != 0 {
		t.Fatal(e)
	}
	file := filepath.Join(dir, "f.ingot")
	if code, _, e := ingot(t, "compile", "--method", "katz", "--order", "3", "-o", file, counts); code != 0 {
		t.Fatal(e)
	}
	code, stdout, stderr := ingot(t, "compile", "--method", "katz", "--order", "3", "-o", "-", counts)
	if code != 0 || !strings.Contains(stderr, "wrote -") {
		t.Fatalf("exit %d, stderr %q", code, stderr)
	}
	m, err := format.FromBytes([]byte(stdout))
	if err != nil {
		t.Fatalf("standard output is not a model: %v", err)
	}
	f, err := format.Open(file)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if m.Order() != 3 || m.VocabSize() != f.VocabSize() || m.Count(3) != f.Count(3) {
		t.Errorf("standard output: order %d, %d words, %d trigrams; the file: %d words, %d trigrams", m.Order(), m.VocabSize(), m.Count(3), f.VocabSize(), f.Count(3))
	}
}
