package main

import (
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
)

func TestQuantizeAndPruneToQuantizedBudget(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", demoHeldout)
	q := filepath.Join(dir, "q.ingot")
	code, out, e := ingot(t, "quantize", "--bits", "8", "--heldout", held, "--json", "-o", q, m)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var rep struct {
		Orders []struct {
			ProbLevels int `json:"prob_levels"`
		} `json:"orders"`
	}
	json.Unmarshal([]byte(out), &rep)
	if len(rep.Orders) != 3 || rep.Orders[1].ProbLevels < 2 || rep.Orders[1].ProbLevels > 256 {
		t.Errorf("report %s", out)
	}
	// Quantizing a quantized model is refused.
	code, _, e = ingot(t, "quantize", "--bits", "4", "-o", filepath.Join(dir, "qq"), q)
	if code != 2 || !strings.Contains(e, "quantized already") {
		t.Errorf("exit %d: %s", code, e)
	}
	code, _, e = ingot(t, "quantize", "--bits", "17", "-o", filepath.Join(dir, "qq"), m)
	if code != 2 || !strings.Contains(e, "--bits 17 outside 2..16") {
		t.Errorf("exit %d: %s", code, e)
	}
	p := filepath.Join(dir, "p.ingot")
	code, out, e = ingot(t, "prune", "--max-size", "9KB", "--bits", "6", "--json", "-o", p, m)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var pr struct {
		FileBytes int64 `json:"file_bytes"`
	}
	json.Unmarshal([]byte(out), &pr)
	if pr.FileBytes > 9000 || pr.FileBytes < 5000 {
		t.Errorf("pruned and quantized file is %d bytes for a 9000-byte budget", pr.FileBytes)
	}
}
