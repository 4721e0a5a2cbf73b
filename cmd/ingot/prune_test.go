package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func demoModel(t *testing.T, dir string, extra ...string) string {
	t.Helper()
	text := writeFile(t, dir, "train.txt", demoTraining)
	c := filepath.Join(dir, "c.tsv")
	m := filepath.Join(dir, "m.ingot")
	if code, _, e := ingot(t, "count", "--order", "3", "-o", c, text); code != 0 {
		t.Fatal(e)
	}
	args := append([]string{"compile", "--method", "kneser-ney", "--order", "3", "-o", m, c}, extra...)
	if code, _, e := ingot(t, args...); code != 0 {
		t.Fatal(e)
	}
	return m
}

func TestPruneToBudget(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", demoHeldout)
	out := filepath.Join(dir, "p.ingot")
	code, stdout, e := ingot(t, "prune", "--max-size", "12KB", "--heldout", held, "--json", "-o", out, m)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var rep struct {
		FileBytes  int64   `json:"file_bytes"`
		Ngrams     []int   `json:"ngrams"`
		Perplexity float64 `json:"perplexity"`
	}
	if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
		t.Fatal(err)
	}
	fi, _ := os.Stat(out)
	if fi.Size() != rep.FileBytes || rep.FileBytes > 12000 {
		t.Errorf("file %d bytes, report %d, budget 12000", fi.Size(), rep.FileBytes)
	}
	if !(rep.Perplexity > 1) {
		t.Errorf("perplexity %v", rep.Perplexity)
	}
	// A budget below the unigrams cannot be met: exit 1, nothing written.
	os.Remove(out)
	code, _, e = ingot(t, "prune", "--max-size", "100B", "-o", out, m)
	if code != 1 || !strings.Contains(e, "no pruning fits 100 bytes") {
		t.Errorf("exit %d: %s", code, e)
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("output written although the budget failed")
	}
	code, _, e = ingot(t, "prune", "--max-size", "1MB", "--drop-below", "1e-6", "-o", out, m)
	if code != 2 || !strings.Contains(e, "exactly one of") {
		t.Errorf("exit %d: %s", code, e)
	}
}

func TestCompileWithCutoffs(t *testing.T) {
	dir := t.TempDir()
	demoModel(t, dir, "--min-count", "3=3", "--json")
	code, _, e := ingot(t, "compile", "--method", "katz", "--order", "3", "--min-count", "1=2", "-o", filepath.Join(dir, "x"), filepath.Join(dir, "c.tsv"))
	if code != 2 || !strings.Contains(e, "order 1 cannot be cut") {
		t.Errorf("exit %d: %s", code, e)
	}
}
