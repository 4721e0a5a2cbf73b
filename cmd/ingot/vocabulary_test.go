package main

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"
)

// count --vocabulary then compile --vocabulary writes the same model bytes
// as count then compile --vocabulary, for every method; and when every
// listed word occurs in the text, count --vocabulary then a plain compile
// does too.
func TestVocabularyWhileCountingOrCompilingGivesOneModel(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	seen := writeFile(t, dir, "seen.txt", "turn\nthe\nbeacon\non\noff\nradio\nmark\nwaypoint\nat\n")
	withUnseen := writeFile(t, dir, "unseen.txt", "turn\nthe\nbeacon\non\noff\nradio\nmark\nwaypoint\nat\nsandpiper\nlantern\n")
	run := func(args ...string) {
		t.Helper()
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("ingot %s: exit %d: %s", strings.Join(args, " "), code, e)
		}
	}
	p := func(n string) string { return filepath.Join(dir, n) }
	run("count", "--order", "3", "-o", p("plain.tsv"), text)
	for _, list := range []string{seen, withUnseen} {
		run("count", "--order", "3", "--vocabulary", list, "-o", p("mapped.tsv"), text)
		for _, method := range []string{"katz", "absolute", "witten-bell", "kneser-ney"} {
			run("compile", "--method", method, "--order", "3", "--vocabulary", list, "-o", p("a.ingot"), p("plain.tsv"))
			run("compile", "--method", method, "--order", "3", "--vocabulary", list, "-o", p("b.ingot"), p("mapped.tsv"))
			if !bytes.Equal(withoutProvenance(t, p("a.ingot")), withoutProvenance(t, p("b.ingot"))) {
				t.Errorf("%s, %s: count then compile --vocabulary differs from count --vocabulary then compile --vocabulary", filepath.Base(list), method)
			}
			if list == seen {
				run("compile", "--method", method, "--order", "3", "-o", p("c.ingot"), p("mapped.tsv"))
				code, out, _ := ingot(t, "score", "--json", p("a.ingot"), text)
				_, out2, _ := ingot(t, "score", "--json", p("c.ingot"), text)
				if code != 0 || strings.ReplaceAll(out, p("a.ingot"), p("c.ingot")) != out2 {
					t.Errorf("%s: count --vocabulary then compile scores differently from count then compile --vocabulary", method)
				}
			}
		}
	}
	// A listed word never seen is predictable, through the lower orders.
	code, out, e := ingot(t, "explain", "--json", p("a.ingot"), "turn the sandpiper")
	if code != 0 || !strings.Contains(out, `"matched_ngram":"sandpiper"`) {
		t.Fatalf("explain: exit %d: %s %s", code, out, e)
	}
}
