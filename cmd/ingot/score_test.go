package main

import (
	"encoding/json"
	"strings"
	"testing"
)

// score --json gives, per token, the order explain reports for the same
// prediction (explain walks the back-off steps one by one, so the two paths
// check each other), and 0 for a word outside the vocabulary.
func TestScoreMatchedOrderAgreesWithExplain(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", "turn the beacon on\nturn the zebra off quickly\n")
	code, out, e := ingot(t, "score", "--json", model, held)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	lines := strings.Split(strings.TrimSpace(out), "\n")
	if len(lines) != 3 {
		t.Fatalf("%d lines, want 3:\n%s", len(lines), out)
	}
	sawUnknown, sawUnigram, sawTrigram := false, false, false
	for _, line := range lines[:2] {
		var s struct {
			Tokens       []string `json:"tokens"`
			MatchedOrder []int    `json:"matched_order"`
		}
		if err := json.Unmarshal([]byte(line), &s); err != nil {
			t.Fatal(err)
		}
		if len(s.MatchedOrder) != len(s.Tokens) {
			t.Fatalf("matched_order %v not aligned with tokens %v", s.MatchedOrder, s.Tokens)
		}
		history := []string{"<s>"}
		for i, tok := range s.Tokens {
			if tok == "<unk>" {
				sawUnknown = true
				if s.MatchedOrder[i] != 0 {
					t.Errorf("word outside the vocabulary has matched_order %d, want 0", s.MatchedOrder[i])
				}
				history = append(history, tok)
				continue
			}
			args := append([]string{"explain", "--json", model}, append(history, tok)...)
			_, ex, e := ingot(t, args...)
			var exv struct {
				MatchedOrder int `json:"matched_order"`
			}
			if err := json.Unmarshal([]byte(ex), &exv); err != nil {
				t.Fatalf("explain %v: %v (%s)", args, err, e)
			}
			if exv.MatchedOrder != s.MatchedOrder[i] {
				t.Errorf("%q after %v: score says order %d, explain %d", tok, history, s.MatchedOrder[i], exv.MatchedOrder)
			}
			sawUnigram = sawUnigram || s.MatchedOrder[i] == 1
			sawTrigram = sawTrigram || s.MatchedOrder[i] == 3
			history = append(history, tok)
		}
	}
	if !sawUnknown || !sawUnigram || !sawTrigram {
		t.Errorf("the text did not exercise orders 0, 1 and 3 (unknown %v, unigram %v, trigram %v)", sawUnknown, sawUnigram, sawTrigram)
	}
}

// --summary-only prints the summary alone; the text summary is a block of
// key and value rows.
func TestScoreSummaryOnly(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", "turn the beacon on\nturn the zebra off\n")
	_, full, _ := ingot(t, "score", "--json", model, held)
	code, out, e := ingot(t, "score", "--json", "--summary-only", model, held)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	fullLines := strings.Split(strings.TrimSpace(full), "\n")
	if strings.TrimSpace(out) != fullLines[len(fullLines)-1] {
		t.Errorf("--summary-only printed %q, want the last line of the full report %q", out, fullLines[len(fullLines)-1])
	}
	_, text, _ := ingot(t, "score", "--summary-only", model, held)
	want := []string{"model           " + model, "sentences       2", "predictions     10, of which 1 of <unk>", "perplexity      ", "  without <unk> "}
	for _, w := range want {
		if !strings.Contains(text, w) {
			t.Errorf("summary block lacks %q:\n%s", w, text)
		}
	}
	if strings.Count(text, "\n") != 6 {
		t.Errorf("summary block is not 6 lines:\n%s", text)
	}
}

// explain takes the words as separate arguments or as one, with the same
// answer.
func TestExplainUnquotedWords(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	_, quoted, _ := ingot(t, "explain", model, "<s> turn the beacon")
	code, unquoted, e := ingot(t, "explain", model, "<s>", "turn", "the", "beacon")
	if code != 0 || unquoted != quoted || !strings.Contains(quoted, "P(beacon | turn the)") {
		t.Errorf("exit %d (%s): unquoted\n%s\nquoted\n%s", code, e, unquoted, quoted)
	}
}
