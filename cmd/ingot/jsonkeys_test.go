package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
)

// opaqueKeys hold objects keyed by data (a discount's name, a build
// option's flag), not by a documented key: their insides are not checked.
var opaqueKeys = map[string]bool{"discounts": true, "build_options": true}

// collectKeys adds every object key in v, at any depth, to keys.
func collectKeys(v any, keys map[string]bool) {
	switch x := v.(type) {
	case map[string]any:
		for k, sub := range x {
			keys[k] = true
			if !opaqueKeys[k] {
				collectKeys(sub, keys)
			}
		}
	case []any:
		for _, sub := range x {
			collectKeys(sub, keys)
		}
	}
}

// readmeJSONKeys reads the README's table of JSON keys: command to keys.
// A key followed by "(only ...)" is printed only in some cases; the test
// need not see it.
func readmeJSONKeys(t *testing.T) (keys map[string][]string, conditional map[string]bool) {
	t.Helper()
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	_, section, ok := strings.Cut(string(readme), "\n### JSON keys\n")
	if !ok {
		t.Error("README has no section \"### JSON keys\"")
	}
	if end := strings.Index(section, "\n## "); end >= 0 {
		section = section[:end]
	}
	row := regexp.MustCompile("(?m)^\\| `([a-zA-Z -]+)` \\| (.*) \\|$")
	key := regexp.MustCompile("`([a-z0-9_]+)`( \\(only)?")
	keys, conditional = map[string][]string{}, map[string]bool{}
	for _, m := range row.FindAllStringSubmatch(section, -1) {
		for _, k := range key.FindAllStringSubmatch(m[2], -1) {
			keys[m[1]] = append(keys[m[1]], k[1])
			if k[2] != "" {
				conditional[m[1]+" "+k[1]] = true
			}
		}
	}
	return keys, conditional
}

// Every command that reports runs with --json (in each of its modes); each
// line it prints is one JSON object, and every key in it, at any depth, is
// listed for that command in the README; every key the README lists for a
// command appears in some run.
func TestEveryJSONKeyIsDocumented(t *testing.T) {
	dir := t.TempDir()
	p := func(n string) string { return filepath.Join(dir, n) }
	text := writeFile(t, dir, "train.txt", demoTraining)
	held := writeFile(t, dir, "held.txt", demoHeldout+"turn the zebra off\n")
	type run struct {
		report string // the README row
		args   []string
	}
	runs := []run{
		{"count", []string{"count", "--json", "--order", "3", "-o", p("c.tsv"), text}},
		{"count", []string{"count", "--json", "--order", "3", "-o", p("c.bin"), text}},
		{"inspect COUNTS", []string{"inspect", "--json", p("c.bin")}},
		{"verify COUNTS", []string{"verify", "--json", p("c.bin")}},
		{"verify COUNTS", []string{"verify", "--json", p("damaged.bin")}}, // fails: a byte changed (made below)
		{"compile", []string{"compile", "--json", "--method", "kneser-ney", "--order", "3", "-o", p("m.ingot"), p("c.tsv")}},
		{"compile", []string{"compile", "--json", "--method", "katz", "--order", "3", "--min-count", "3=2", "-o", p("k.ingot"), p("c.tsv")}},
		{"compile --max-size", []string{"compile", "--json", "--method", "kneser-ney", "--order", "3", "--max-size", "16KB", "--heldout", held, "-o", p("b.ingot"), p("c.tsv")}},
		{"quantize", []string{"quantize", "--json", "--bits", "6", "--heldout", held, "-o", p("q.ingot"), p("m.ingot")}},
		{"prune", []string{"prune", "--json", "--drop-below", "1e-6", "--heldout", held, "-o", p("p.ingot"), p("m.ingot")}},
		{"prune", []string{"prune", "--json", "--max-size", "12KB", "--bits", "8", "-o", p("p8.ingot"), p("m.ingot")}},
		{"keygen", []string{"keygen", "--json", "-o", p("release")}},
		{"sign", []string{"sign", "--json", "--key", p("release.key"), p("q.ingot")}},
		{"score", []string{"score", "--json", p("m.ingot"), held}},
		{"score", []string{"score", "--json", "--summary-only", p("q.ingot"), held}},
		{"explain", []string{"explain", "--json", p("q.ingot"), "turn", "the", "zebra", "beacon"}},
		{"explain", []string{"explain", "--json", p("m.ingot"), "<s>", "turn", "the"}},
		{"inspect", []string{"inspect", "--json", p("q.ingot")}},
		{"inspect --stats", []string{"inspect", "--json", "--stats", p("q.ingot")}},
		{"inspect --next", []string{"inspect", "--json", "--next", "turn zebra", "--top", "3", p("m.ingot")}},
		{"inspect --dump", []string{"inspect", "--json", "--dump", "--order", "2", p("q.ingot")}},
		{"inspect --dump", []string{"inspect", "--json", "--dump", p("m.ingot")}},
		{"verify", []string{"verify", "--json", "--public-key", p("release.pub"), "--baseline", p("m.ingot"), "--heldout", held, p("q.ingot")}},
		{"keygen", []string{"keygen", "--json", "-o", p("other")}},
		{"verify", []string{"verify", "--json", "--public-key", p("other.pub"), p("q.ingot")}}, // fails: signed by another key
		{"interpolate", []string{"interpolate", "--json", "--fit", held, "--heldout", held, "-o", p("i.ingot"), p("m.ingot"), p("k.ingot")}},
		{"interpolate", []string{"interpolate", "--json", "--weights", "0.5,0.5", "-o", p("e.ingot"), p("m.ingot"), p("k.ingot")}},
		{"tradeoff", []string{"tradeoff", "--json", "--heldout", held, "--drop-below", "0,1e-6", "--bits", "0,8", "--budget", "12KB", "-o", p("chart"), p("m.ingot"), p("k.ingot")}},
	}
	// Every command that reports has --json and is run here with it: all
	// but the walk-through and the framework's help and completion.
	ran := map[string]bool{}
	for _, r := range runs {
		ran[r.args[0]] = true
	}
	for _, c := range newRoot(nil, nil).Commands() {
		switch c.Name() {
		case "demo", "completion", "help":
			continue
		}
		if c.Flags().Lookup("json") == nil {
			t.Errorf("ingot %s has no --json", c.Name())
		}
		if !ran[c.Name()] {
			t.Errorf("ingot %s --json is not run by this test", c.Name())
		}
	}
	seen := map[string]map[string]bool{}
	if os.Getenv("LIST_KEYS") != "" {
		defer func() {
			for r, keys := range seen {
				var ks []string
				for k := range keys {
					ks = append(ks, k)
				}
				slices.Sort(ks)
				t.Logf("| `%s` | `%s` |", r, strings.Join(ks, "`, `"))
			}
		}()
	}
	documented, conditional := readmeJSONKeys(t)
	for _, r := range runs {
		if r.args[len(r.args)-1] == p("damaged.bin") {
			b, err := os.ReadFile(p("c.bin"))
			if err != nil {
				t.Fatal(err)
			}
			b[len(b)/2] ^= 1
			writeFile(t, dir, "damaged.bin", string(b))
		}
		code, out, e := ingot(t, r.args...)
		if code != 0 && !(strings.HasPrefix(r.report, "verify") && code == exitCheckFailed) {
			t.Fatalf("ingot %s: exit %d: %s", strings.Join(r.args, " "), code, e)
		}
		if seen[r.report] == nil {
			seen[r.report] = map[string]bool{}
		}
		for _, line := range strings.Split(strings.TrimSuffix(out, "\n"), "\n") {
			var v map[string]any
			if err := json.Unmarshal([]byte(line), &v); err != nil {
				t.Fatalf("%s: a line is not one JSON object (%v): %q", strings.Join(r.args, " "), err, line)
			}
			collectKeys(v, seen[r.report])
		}
	}
	for report, keys := range seen {
		doc, ok := documented[report]
		if !ok {
			t.Errorf("README lists no JSON keys for `%s`", report)
			continue
		}
		for k := range keys {
			if !slices.Contains(doc, k) {
				t.Errorf("%s --json prints key %q, which the README does not list", report, k)
			}
		}
		for _, k := range doc {
			if !keys[k] && !conditional[report+" "+k] {
				t.Errorf("README lists key %q for %s, which no run printed", k, report)
			}
		}
	}
	for report := range documented {
		if seen[report] == nil {
			t.Errorf("README lists JSON keys for %q, which the test never runs", report)
		}
	}
}
