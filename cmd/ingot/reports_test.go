package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/pipeline"
)

// Reports measure the input before anything replaces it: prune and
// quantize with -o naming their input report the input's size and
// perplexity as they were (measured here on a copy), in text and JSON.
func TestReportsMeasureBeforeReplacing(t *testing.T) {
	dir := t.TempDir()
	m := demoModel(t, dir)
	held := writeFile(t, dir, "held.txt", demoHeldout)
	orig, err := os.ReadFile(m)
	if err != nil {
		t.Fatal(err)
	}
	copyPath := filepath.Join(dir, "copy.ingot")
	if err := os.WriteFile(copyPath, orig, 0o644); err != nil {
		t.Fatal(err)
	}
	measured, err := pipeline.Measure(copyPath, held)
	if err != nil {
		t.Fatal(err)
	}
	want := measured.Perplexity
	for _, args := range [][]string{
		{"quantize", "--bits", "8"},
		{"prune", "--drop-below", "1e-3"},
	} {
		if err := os.WriteFile(m, orig, 0o644); err != nil {
			t.Fatal(err)
		}
		line := append(append([]string{}, args...), "--json", "--heldout", held, "-o", m, m)
		code, stdout, e := ingot(t, line...)
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", args[0], code, e)
		}
		var rep struct {
			InputBytes       int64   `json:"baseline_file_bytes"`
			FileBytes        int64   `json:"file_bytes"`
			PerplexityBefore float64 `json:"baseline_perplexity"`
			Perplexity       float64 `json:"perplexity"`
		}
		if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
			t.Fatal(err)
		}
		fi, _ := os.Stat(m)
		if rep.InputBytes != int64(len(orig)) || rep.FileBytes != fi.Size() || rep.PerplexityBefore != want {
			t.Errorf("%s -o input: baseline_file_bytes %d (was %d), file_bytes %d (is %d), baseline_perplexity %v (was %v)",
				args[0], rep.InputBytes, len(orig), rep.FileBytes, fi.Size(), rep.PerplexityBefore, want)
		}
		// The text report says the same.
		if err := os.WriteFile(m, orig, 0o644); err != nil {
			t.Fatal(err)
		}
		line = append(append([]string{}, args...), "--heldout", held, "-o", m, m)
		code, stdout, e = ingot(t, line...)
		if code != 0 {
			t.Fatalf("%s: exit %d: %s", args[0], code, e)
		}
		if w := "(was " + humanSize(int64(len(orig))) + ")"; !strings.Contains(stdout, w) {
			t.Errorf("%s -o input: report lacks %q:\n%s", args[0], w, stdout)
		}
	}
}

// compile --min-count that removes every n-gram of an order reports that
// order as cut, kept 0, in text and JSON.
func TestCutOrderReportedAsCut(t *testing.T) {
	dir := t.TempDir()
	demoModel(t, dir)
	c := filepath.Join(dir, "c.tsv")
	out := filepath.Join(dir, "cut.ingot")
	code, stdout, e := ingot(t, "compile", "--method", "katz", "--order", "3", "--min-count", "3=1000000", "--json", "-o", out, c)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, e)
	}
	var rep struct {
		Orders []struct {
			Order  int  `json:"order"`
			NGrams int  `json:"ngrams"`
			Kept   *int `json:"kept"`
		} `json:"orders"`
	}
	if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
		t.Fatal(err)
	}
	if len(rep.Orders) != 3 || rep.Orders[2].Kept == nil || *rep.Orders[2].Kept != 0 || rep.Orders[2].NGrams == 0 {
		t.Errorf("orders %+v: want order 3 reported with kept 0", rep.Orders)
	}
	code, stdout, e = ingot(t, "compile", "--method", "katz", "--order", "3", "--min-count", "3=1000000", "-o", out, c)
	if code != 0 || !strings.Contains(stdout, "(kept 0)") {
		t.Errorf("exit %d, text report lacks \"(kept 0)\":\n%s%s", code, stdout, e)
	}
}
