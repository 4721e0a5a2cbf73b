package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestCompileToBudget(t *testing.T) {
	dir := t.TempDir()
	demoModel(t, dir) // writes c.tsv
	c := filepath.Join(dir, "c.tsv")
	held := writeFile(t, dir, "held.txt", demoHeldout)
	out := filepath.Join(dir, "b.ingot")
	code, stdout, e := ingot(t, "compile", "--method", "kneser-ney", "--order", "3", "--max-size", "9KB", "--bits", "8",
		"--heldout", held, "--json", "-o", out, c)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var rep struct {
		Order      int     `json:"order"`
		FileBytes  int64   `json:"file_bytes"`
		RankedBy   string  `json:"ranked_by"`
		Perplexity float64 `json:"perplexity"`
		Compared   []struct {
			Order      int     `json:"order"`
			Form       string  `json:"form"`
			Perplexity float64 `json:"perplexity"`
		} `json:"orders_compared"`
	}
	if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
		t.Fatalf("%v: %s", err, stdout)
	}
	fi, err := os.Stat(out)
	if err != nil || fi.Size() != rep.FileBytes || rep.FileBytes > 9000 {
		t.Fatalf("file %v, report %d bytes, budget 9000", err, rep.FileBytes)
	}
	// Orders 3 and 2, Kneser-Ney's unigrams interpolated and backed off
	// (the order-2 model keeps every bigram: one form only).
	forms := map[string]bool{}
	for _, c := range rep.Compared {
		forms[fmt.Sprintf("%d %s", c.Order, c.Form)] = true
	}
	if rep.RankedBy != "katz" || len(rep.Compared) < 3 || !forms["3 interpolated"] || !forms["3 back-off"] || !(rep.Perplexity > 1) {
		t.Errorf("report %+v", rep)
	}
	if code, _, e := ingot(t, "verify", out); code != 0 {
		t.Errorf("verify: exit %d: %s", code, e)
	}
	// Too small a budget: exit 1, nothing written.
	os.Remove(out)
	code, _, e = ingot(t, "compile", "--method", "katz", "--order", "3", "--max-size", "100B", "-o", out, c)
	if code != 1 || !strings.Contains(e, "no pruning fits 100 bytes") {
		t.Errorf("exit %d: %s", code, e)
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("output written although the budget failed")
	}
	for _, bad := range [][]string{
		{"--bits", "8"},
		{"--max-size", "1MB", "--min-count", "3=2"},
		{"--max-size", "1MB", "--rank-with", "lidstone"},
		{"--max-size", "lots"},
	} {
		args := append([]string{"compile", "--method", "kneser-ney", "--order", "3", "-o", out, c}, bad...)
		if code, _, e := ingot(t, args...); code != 2 {
			t.Errorf("%v: exit %d: %s", bad, code, e)
		}
	}
}

func TestPruneWarnsOnKneserNey(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	out := filepath.Join(dir, "p.ingot")
	code, _, e := ingot(t, "prune", "--max-size", "12KB", "-o", out, m)
	if code != 0 || !strings.Contains(e, "warning: relative-entropy pruning of a finished kneser-ney model") ||
		!strings.Contains(e, "ingot compile --method kneser-ney --max-size") {
		t.Errorf("exit %d, stderr %q", code, e)
	}
	k := filepath.Join(dir, "k.ingot")
	if code, _, e := ingot(t, "compile", "--method", "katz", "--order", "3", "-o", k, filepath.Join(dir, "c.tsv")); code != 0 {
		t.Fatal(e)
	}
	if code, _, e := ingot(t, "prune", "--max-size", "12KB", "-o", out, k); code != 0 || strings.Contains(e, "warning") {
		t.Errorf("katz: exit %d, stderr %q", code, e)
	}
}
