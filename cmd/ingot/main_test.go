package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/format"
)

// ingot runs one command line in-process and returns its exit code, stdout
// and stderr.
func ingot(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &out, &errb)
	return code, out.String(), errb.String()
}

func writeFile(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestCountCompileScoreExplain(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	counts := filepath.Join(dir, "c.tsv")
	model := filepath.Join(dir, "m.ingot")
	if code, _, e := ingot(t, "count", "--order", "3", "-o", counts, text); code != 0 {
		t.Fatalf("count: exit %d: %s", code, e)
	}
	for _, method := range []string{"katz", "absolute", "witten-bell", "kneser-ney"} {
		code, out, e := ingot(t, "compile", "--method", method, "--order", "3", "-o", model, counts)
		if code != 0 {
			t.Fatalf("compile %s: exit %d: %s", method, code, e)
		}
		if !strings.Contains(out, "order") {
			t.Errorf("compile report lacks the per-order table:\n%s", out)
		}
		held := writeFile(t, dir, "held.txt", "turn the beacon on\nturn the zebra off\n")
		code, out, e = ingot(t, "score", "--json", model, held)
		if code != 0 {
			t.Fatalf("score: exit %d: %s", code, e)
		}
		lines := strings.Split(strings.TrimSpace(out), "\n")
		if len(lines) != 3 {
			t.Fatalf("score --json printed %d lines, want 3:\n%s", len(lines), out)
		}
		var s2 struct {
			Tokens []string
			Log10  []float64
		}
		json.Unmarshal([]byte(lines[1]), &s2)
		if got := strings.Join(s2.Tokens, " "); got != "turn the <unk> off </s>" || len(s2.Log10) != 5 {
			t.Errorf("tokens %q with %d values", got, len(s2.Log10))
		}
		var sum struct{ Perplexity float64 }
		json.Unmarshal([]byte(lines[2]), &sum)
		if !(sum.Perplexity > 1) {
			t.Errorf("summary perplexity %v", sum.Perplexity)
		}
		// explain agrees with score on the same prediction.
		code, out, e = ingot(t, "explain", "--json", model, "<s> turn the beacon")
		if code != 0 {
			t.Fatalf("explain: exit %d: %s", code, e)
		}
		var ex struct{ Log10 float64 }
		json.Unmarshal([]byte(out), &ex)
		var s1 struct{ Log10 []float64 }
		json.Unmarshal([]byte(lines[0]), &s1)
		if math.Abs(ex.Log10-s1.Log10[2]) > 1e-9 {
			t.Errorf("%s: explain log10 %v, score log10 %v", method, ex.Log10, s1.Log10[2])
		}
	}
}

func TestSameInputGivesIdenticalFile(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	var files [2][]byte
	for i := range files {
		c := filepath.Join(dir, "c.tsv")
		m := filepath.Join(dir, "m.ingot")
		ingot(t, "count", "--order", "3", "-o", c, text)
		if code, _, e := ingot(t, "compile", "--method", "katz", "--order", "3", "-o", m, c); code != 0 {
			t.Fatal(e)
		}
		files[i], _ = os.ReadFile(m)
		os.Remove(m)
	}
	if !bytes.Equal(files[0], files[1]) {
		t.Error("two builds from the same input differ")
	}
}

// Bad input: one line naming what and where, exit 2, no output file.
func TestBadInputExitsTwoAndWritesNothing(t *testing.T) {
	dir := t.TempDir()
	bad := writeFile(t, dir, "bad.txt", "fine line\nthe </s> here\n")
	badCounts := writeFile(t, dir, "bad.tsv", "1\ta\n-2\tb\n")
	out := filepath.Join(dir, "out")
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"count", "--order", "2", "-o", out, bad}, "bad.txt:2: marker </s> inside raw text"},
		{[]string{"count", "--order", "0", "-o", out, bad}, "order 0 outside 1..10"},
		{[]string{"count", "-o", out, bad}, "--order is required"},
		{[]string{"count", "--order", "2", "-o", out, filepath.Join(dir, "missing.txt")}, "missing.txt: no such file"},
		{[]string{"compile", "--method", "katz", "--order", "2", "-o", out, badCounts}, `bad.tsv:2: count "-2" is not a positive integer`},
		{[]string{"compile", "--method", "nonsense", "--order", "2", "-o", out, badCounts}, `unknown method "nonsense"`},
		{[]string{"compile", "--method", "absolute", "--discount", "1.5", "--order", "2", "-o", out, badCounts}, `--discount "1.5" must be a number in (0, 1)`},
		{[]string{"score", filepath.Join(dir, "bad.txt")}, "bad.txt"},
		{[]string{"explain", bad}, "1 argument(s) given"},
	} {
		code, _, e := ingot(t, tc.args...)
		if code != 2 || !strings.Contains(e, tc.want) || strings.Count(e, "\n") != 1 {
			t.Errorf("%v: exit %d, stderr %q; want exit 2 and %q", tc.args, code, e, tc.want)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%v left %s behind", tc.args, out)
		}
		entries, _ := os.ReadDir(dir)
		for _, en := range entries {
			if strings.Contains(en.Name(), ".tmp-") {
				t.Errorf("%v left temporary %s behind", tc.args, en.Name())
			}
		}
	}
}

func TestDemoRuns(t *testing.T) {
	dir := t.TempDir()
	code, out, e := ingot(t, "demo", dir)
	if code != 0 {
		t.Fatalf("demo: exit %d: %s", code, e)
	}
	for _, want := range []string{"perplexity", "back-off weight", "wrote", "device.ingot: ok", "signature       pass", "codebooks", "weights fitted by EM", "--vocabulary"} {
		if !strings.Contains(out, want) {
			t.Errorf("demo output lacks %q", want)
		}
	}
	// A second run in the same directory works too.
	if code, _, e := ingot(t, "demo", dir); code != 0 {
		t.Fatalf("second demo run: exit %d: %s", code, e)
	}
}

// withoutProvenance returns the model file's bytes as written again with
// its provenance (the commands that wrote it: their command lines and input
// digests) left out, so that models built from different files that hold
// the same counts compare equal.
func withoutProvenance(t *testing.T, path string) []byte {
	t.Helper()
	tb, err := readTables(path)
	if err != nil {
		t.Fatal(err)
	}
	tb.Info.Commands = nil
	var b bytes.Buffer
	if err := format.Write(&b, tb); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}
