package main

import (
	"encoding/binary"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// badInputCase is one row of the bad-input table (also in the README):
// every command refuses bad usage and bad input with one line naming what
// and where, exit 2, and writes nothing.
type badInputCase struct {
	name string
	args []string // "$D" is replaced by the test directory, "$M" by a good model
	want string   // a piece of the one-line message
}

var badInputTable = []badInputCase{
	{"unknown command", []string{"frobnicate"}, `unknown command "frobnicate"`},
	{"unknown flag", []string{"count", "--order", "2", "--colour"}, "unknown flag: --colour"},
	{"missing required flag", []string{"count", "$D/train.txt"}, "--order is required"},
	{"order 0", []string{"count", "--order", "0", "-o", "$D/out", "$D/train.txt"}, "order 0 outside 1..10"},
	{"order above the maximum", []string{"count", "--order", "11", "-o", "$D/out", "$D/train.txt"}, "order 11 outside 1..10"},
	{"missing text file", []string{"count", "--order", "2", "-o", "$D/out", "$D/absent.txt"}, "absent.txt: no such file or directory"},
	{"unreadable text (a directory)", []string{"count", "--order", "2", "-o", "$D/out", "$D"}, "is a directory"},
	{"empty corpus", []string{"count", "--order", "2", "-o", "$D/out", "$D/empty.txt"}, "no sentences in $D/empty.txt"},
	{"marker in text", []string{"count", "--order", "2", "-o", "$D/out", "$D/marker.txt"}, "marker.txt:2: marker <unk> inside raw text"},
	{"invalid UTF-8", []string{"count", "--order", "2", "-o", "$D/out", "$D/latin1.txt"}, "latin1.txt:1: invalid UTF-8"},
	{"count zero", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D/zero.tsv"}, `zero.tsv:2: count "0" is not a positive integer`},
	{"count negative", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D/negative.tsv"}, `negative.tsv:1: count "-4" is not a positive integer`},
	{"count fractional", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D/fraction.tsv"}, `fraction.tsv:1: count "2.5" is not a positive integer`},
	{"count NaN", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D/nan.tsv"}, `nan.tsv:1: count "NaN" is not a positive integer`},
	{"empty count file", []string{"compile", "--method", "katz", "--order", "2", "-o", "$D/out", "$D/empty.txt"}, "no n-grams in $D/empty.txt"},
	{"missing prefix", []string{"compile", "--method", "katz", "--order", "2", "-o", "$D/out", "$D/noprefix.tsv"}, `noprefix.tsv:2: "x a" has no count for its prefix "x"`},
	{"order above the counts", []string{"compile", "--method", "katz", "--order", "3", "-o", "$D/out", "$D/unigrams.tsv"}, "counts hold orders up to 1, order 3 asked"},
	{"unknown method", []string{"compile", "--method", "magic", "--order", "2", "-o", "$D/out", "$D/zero.tsv"}, `unknown method "magic"`},
	{"discount out of range", []string{"compile", "--method", "absolute", "--discount", "1", "--order", "2", "-o", "$D/out", "$D/zero.tsv"}, `--discount "1" must be a number in (0, 1)`},
	{"bad cutoff", []string{"compile", "--method", "katz", "--order", "2", "--min-count", "2:3", "-o", "$D/out", "$D/zero.tsv"}, "want K=M pairs"},
	{"word list missing", []string{"compile", "--method", "katz", "--order", "1", "--vocabulary", "$D/absent.txt", "-o", "$D/out", "$D/unigrams.tsv"}, "--vocabulary: open $D/absent.txt: no such file or directory"},
	{"word listed twice", []string{"compile", "--method", "katz", "--order", "1", "--vocabulary", "$D/twice.txt", "-o", "$D/out", "$D/unigrams.tsv"}, `twice.txt:3: "a" listed twice (first on line 1)`},
	{"empty line in a word list", []string{"count", "--order", "2", "--vocabulary", "$D/gap.txt", "-o", "$D/out", "$D/train.txt"}, "gap.txt:2: empty line (one word per line)"},
	{"two words on a word-list line", []string{"count", "--order", "2", "--vocabulary", "$D/pair.txt", "-o", "$D/out", "$D/train.txt"}, "pair.txt:1: 2 words on one line"},
	{"word list with a rare-word cutoff", []string{"count", "--order", "2", "--vocabulary", "$D/twice.txt", "--min-word-count", "2", "-o", "$D/out", "$D/train.txt"}, "--min-word-count and --vocabulary exclude each other"},
	{"model missing", []string{"score", "$D/absent.ingot"}, "absent.ingot: no such file or directory"},
	{"not a model", []string{"score", "$D/train.txt"}, "not an ingot model file"},
	{"model of an unknown version", []string{"score", "$D/future.ingot"}, "file is format version 9; this reader reads versions 1 to 3"},
	{"truncated model", []string{"explain", "$D/truncated.ingot", "a b"}, "truncated"},
	{"explain without words", []string{"explain", "$M", " "}, "no words given"},
	{"a flag's value of the wrong kind", []string{"count", "--order", "two", "-o", "$D/out", "$D/train.txt"}, `--order "two": want a whole number`},
	{"help on an unknown command", []string{"help", "frobnicate"}, `unknown command "frobnicate"`},
	{"a measured model to standard output", []string{"prune", "--drop-below", "1e-7", "-o", "-", "$M"}, "-o -: the report measures the written file"},
	{"prune without a rule", []string{"prune", "-o", "$D/out", "$M"}, "exactly one of --drop-below and --max-size"},
	{"prune budget unreadable", []string{"prune", "--max-size", "lots", "-o", "$D/out", "$M"}, `size "lots" is not a positive number`},
	{"quantize bits out of range", []string{"quantize", "--bits", "1", "-o", "$D/out", "$M"}, "--bits 1 outside 2..16"},
	{"quantize unknown trainer", []string{"quantize", "--bits", "8", "--trainer", "guess", "-o", "$D/out", "$M"}, `unknown trainer "guess"`},
	{"tradeoff bad grid", []string{"tradeoff", "--heldout", "$D/train.txt", "--bits", "8,x", "-o", "$D/out", "$M"}, `"x" is not a whole number`},
	{"interpolate one model", []string{"interpolate", "-o", "$D/out", "$M"}, "1 argument(s) given; usage: ingot interpolate"},
	{"interpolate weights and fit together", []string{"interpolate", "--weights", "0.5,0.5", "--fit", "$D/train.txt", "-o", "$D/out", "$M", "$M"}, "give --weights or --fit, not both"},
	{"interpolate weights of the wrong number", []string{"interpolate", "--weights", "1", "-o", "$D/out", "$M", "$M"}, "--weights: 1 weights for 2 models"},
	{"interpolate weights not summing to one", []string{"interpolate", "--weights", "0.5,0.6", "-o", "$D/out", "$M", "$M"}, "--weights: weights sum to 1.1, not 1"},
	{"interpolate weight zero", []string{"interpolate", "--weights", "0,1", "-o", "$D/out", "$M", "$M"}, "--weights: weight 1 is 0"},
	{"interpolate fitting text missing", []string{"interpolate", "--fit", "$D/absent.txt", "-o", "$D/out", "$M", "$M"}, "--fit: open $D/absent.txt: no such file or directory"},
	{"interpolate fitting text empty", []string{"interpolate", "--fit", "$D/empty.txt", "-o", "$D/out", "$M", "$M"}, "no sentences"},
	{"interpolate a model that is not one", []string{"interpolate", "-o", "$D/out", "$M", "$D/train.txt"}, "not an ingot model file"},
	{"sign with a missing key", []string{"sign", "--key", "$D/absent.key", "$M"}, "absent.key: no such file or directory"},
	{"old spelling of --drop-below", []string{"prune", "--threshold", "1e-7", "-o", "$D/out", "$M"}, "--threshold is now called --drop-below"},
	{"old spelling of --backoff-bits", []string{"quantize", "--bits", "8", "--bow-bits", "8", "-o", "$D/out", "$M"}, "--bow-bits is now called --backoff-bits"},
	{"old trainer name", []string{"quantize", "--bits", "8", "--trainer", "optimal", "-o", "$D/out", "$M"}, `trainer "optimal" is now called "least-squares"`},
	{"sign with a public key", []string{"sign", "--key", "$D/k.pub", "$M"}, "not a PEM PRIVATE KEY"},
}

func TestBadInputEverywhere(t *testing.T) {
	dir := t.TempDir()
	model := demoModel(t, dir)
	files := map[string]string{
		"train.txt":       "turn the beacon on\n",
		"empty.txt":       "",
		"marker.txt":      "ok\nthe <unk> here\n",
		"latin1.txt":      "caf\xe9\n",
		"zero.tsv":        "3\ta\n0\tb\n",
		"unigrams.tsv":    "3\ta\n3\t</s>\n",
		"negative.tsv":    "-4\ta\n",
		"fraction.tsv":    "2.5\ta\n",
		"nan.tsv":         "NaN\ta\n",
		"noprefix.tsv":    "1\ta\n1\tx a\n",
		"k.pub":           "-----BEGIN PUBLIC KEY-----\nMCowBQYDK2VwAyEAGb9ECWmEzf6FQbrBZ9w7lshQhqowtrbLDFw4rXAxZuE=\n-----END PUBLIC KEY-----\n",
		"truncated.ingot": "",
		"twice.txt":       "a\nb\na\n",
		"gap.txt":         "a\n\nb\n",
		"pair.txt":        "turn on\n",
	}
	for name, text := range files {
		writeFile(t, dir, name, text)
	}
	hardeningFiles(t, dir)
	good, _ := os.ReadFile(model)
	os.WriteFile(filepath.Join(dir, "truncated.ingot"), good[:len(good)/2], 0o644)
	future := append([]byte(nil), good...)
	binary.LittleEndian.PutUint32(future[8:], 9)
	os.WriteFile(filepath.Join(dir, "future.ingot"), future, 0o644)

	for _, tc := range badInputTable {
		t.Run(tc.name, func(t *testing.T) {
			args := make([]string, len(tc.args))
			for i, a := range tc.args {
				args[i] = strings.ReplaceAll(strings.ReplaceAll(a, "$D", dir), "$M", model)
			}
			want := strings.ReplaceAll(tc.want, "$D", dir)
			code, stdout, stderr := ingot(t, args...)
			if code != 2 {
				t.Errorf("exit %d, want 2 (stderr %q)", code, stderr)
			}
			if !strings.Contains(stderr, want) {
				t.Errorf("stderr %q lacks %q", stderr, want)
			}
			if strings.Count(stderr, "\n") != 1 || !strings.HasPrefix(stderr, "ingot: ") {
				t.Errorf("stderr is not one line starting with \"ingot: \": %q", stderr)
			}
			if stdout != "" {
				t.Errorf("stdout %q, want nothing", stdout)
			}
			if _, err := os.Stat(filepath.Join(dir, "out")); err == nil {
				t.Error("an output was written")
				os.RemoveAll(filepath.Join(dir, "out"))
			}
		})
	}
}

// The README documents the same table: every case is listed there.
func TestReadmeListsEveryBadInputCase(t *testing.T) {
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range badInputTable {
		if !strings.Contains(string(readme), "| "+tc.name+" |") {
			t.Errorf("README lacks the bad-input case %q", tc.name)
		}
	}
}
