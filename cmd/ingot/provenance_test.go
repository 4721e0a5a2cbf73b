package main

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// inspect shows, in text and JSON, each command that wrote the model: its
// command line, its budget and the SHA-256 of every file it read.
func TestInspectShowsProvenance(t *testing.T) {
	dir := t.TempDir()
	p := func(n string) string { return filepath.Join(dir, n) }
	text := writeFile(t, dir, "train.txt", demoTraining)
	for _, args := range [][]string{
		{"count", "--order", "3", "-o", p("c.tsv"), text},
		{"compile", "--method", "katz", "--order", "3", "-o", p("m.ingot"), p("c.tsv")},
		{"prune", "--drop-below", "1e-6", "-o", p("small model.ingot"), p("m.ingot")},
	} {
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, e)
		}
	}
	digest := func(path string) string {
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		s := sha256.Sum256(b)
		return hex.EncodeToString(s[:])
	}
	_, out, _ := ingot(t, "inspect", "--json", p("small model.ingot"))
	var got struct {
		Commands []struct {
			Line    string `json:"line"`
			MaxSize string `json:"max_size"`
			Inputs  []struct {
				Name   string `json:"name"`
				Bytes  int64  `json:"bytes"`
				SHA256 string `json:"sha256"`
			} `json:"inputs"`
		} `json:"commands"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Commands) != 2 {
		t.Fatalf("commands %+v", got.Commands)
	}
	c, pr := got.Commands[0], got.Commands[1]
	if c.Line != "ingot compile --method katz --order 3 -o "+p("m.ingot")+" "+p("c.tsv") ||
		len(c.Inputs) != 1 || c.Inputs[0].Name != p("c.tsv") || c.Inputs[0].SHA256 != digest(p("c.tsv")) {
		t.Errorf("compile recorded as %+v", c)
	}
	if pr.Line != "ingot prune --drop-below 1e-6 -o '"+p("small model.ingot")+"' "+p("m.ingot") ||
		len(pr.Inputs) != 1 || pr.Inputs[0].SHA256 != digest(p("m.ingot")) {
		t.Errorf("prune recorded as %+v", pr)
	}

	if code, _, e := ingot(t, "prune", "--max-size", "20KB", "-o", p("b.ingot"), p("m.ingot")); code != 0 {
		t.Fatalf("prune --max-size: %s", e)
	}
	_, out, _ = ingot(t, "inspect", p("b.ingot"))
	for _, want := range []string{"commands ", "ingot prune --max-size 20KB", "budget 20KB", "read " + p("m.ingot") + ": ", "sha256 " + digest(p("m.ingot"))} {
		if !strings.Contains(out, want) {
			t.Errorf("inspect lacks %q:\n%s", want, out)
		}
	}
}
