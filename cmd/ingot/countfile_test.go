package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// count writes the binary form by default and the text form with --text;
// compile builds the same model from either, or from both at once split
// into shards; inspect shows a count file's header and dumps its entries
// as the text form.
func TestCountFileForms(t *testing.T) {
	dir := t.TempDir()
	text := writeFile(t, dir, "train.txt", demoTraining)
	bin, txt := filepath.Join(dir, "c.bin"), filepath.Join(dir, "c.txt")
	for _, args := range [][]string{
		{"count", "--order", "3", "-o", bin, text},
		{"count", "--order", "3", "--text", "-o", txt, text},
	} {
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, e)
		}
	}
	b, _ := os.ReadFile(bin)
	if !bytes.HasPrefix(b, []byte("\x89ICNT\r\n\x1a")) {
		t.Fatalf("count did not write the binary form: % x", b[:8])
	}
	tx, _ := os.ReadFile(txt)
	if !strings.HasPrefix(string(tx), "4000\t</s>\n") { // one </s> per line of the demo text
		t.Fatalf("text form starts %q", string(tx[:20]))
	}

	// Two text shards (the halves of the text form) and nothing else.
	lines := strings.SplitAfter(string(tx), "\n")
	half1 := writeFile(t, dir, "half1.txt", strings.Join(lines[:len(lines)/2], ""))
	half2 := writeFile(t, dir, "half2.txt", strings.Join(lines[len(lines)/2:], ""))
	models := map[string][]string{
		"bin": {bin}, "txt": {txt}, "mixed": {half2, bin, half1},
	}
	var want []byte
	for _, name := range []string{"bin", "txt", "mixed"} {
		m := filepath.Join(dir, name+".ingot")
		args := append([]string{"compile", "--method", "kneser-ney", "--order", "3", "-o", m}, models[name]...)
		if code, _, e := ingot(t, args...); code != 0 {
			t.Fatalf("compile %s: exit %d: %s", name, code, e)
		}
		got := withoutProvenance(t, m)
		if name == "mixed" {
			// Binary counts plus their own text form: every count doubled,
			// a different model; it must still build and verify.
			if code, out, e := ingot(t, "verify", m); code != 0 {
				t.Fatalf("verify mixed: %d %s %s", code, out, e)
			}
			continue
		}
		if want == nil {
			want = got
		} else if !bytes.Equal(want, got) {
			t.Errorf("model from %s counts differs from the one from binary counts", name)
		}
	}

	code, out, e := ingot(t, "inspect", "--json", bin)
	if code != 0 {
		t.Fatalf("inspect: %d %s", code, e)
	}
	var info struct {
		Counts         string
		Order          int
		NGramsPerOrder []uint64 `json:"ngrams"`
	}
	if err := json.Unmarshal([]byte(out), &info); err != nil {
		t.Fatal(err)
	}
	if info.Counts != bin || info.Order != 3 || len(info.NGramsPerOrder) != 3 {
		t.Fatalf("inspect --json: %s", out)
	}
	if n := strings.Count(string(tx), "\n"); uint64(n) != info.NGramsPerOrder[0]+info.NGramsPerOrder[1]+info.NGramsPerOrder[2] {
		t.Errorf("n-grams per order %v, text form has %d lines", info.NGramsPerOrder, n)
	}
	code, out, _ = ingot(t, "inspect", "--dump", bin)
	if code != 0 || out != string(tx) {
		t.Errorf("inspect --dump differs from the text form (exit %d)", code)
	}
	code, out, _ = ingot(t, "inspect", bin)
	if code != 0 || !strings.Contains(out, "binary counts, version 1") {
		t.Errorf("inspect: %d\n%s", code, out)
	}
}
