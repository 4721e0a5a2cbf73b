package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// hardeningCases join the bad-input table: inputs that once crashed, hung,
// grew without bound, destroyed a file or were silently misread.
var hardeningCases = []badInputCase{
	{"line over the cap", []string{"count", "--order", "2", "--max-line", "8B", "-o", "$D/out", "$D/long.txt"}, "long.txt:1: line longer than 8 bytes"},
	{"count-file line over the cap", []string{"compile", "--method", "katz", "--order", "1", "--max-line", "8B", "-o", "$D/out", "$D/long.tsv"}, "long.tsv:1: line longer than 8 bytes"},
	{"line cap below one byte", []string{"count", "--order", "2", "--max-line", "0.5B", "-o", "$D/out", "$D/train.txt"}, `size "0.5B" is less than one byte`},
	{"prune budget below one byte", []string{"prune", "--max-size", "0.5B", "-o", "$D/out", "$M"}, `size "0.5B" is less than one byte`},
	{"byte-order mark inside text", []string{"count", "--order", "2", "-o", "$D/out", "$D/bom.txt"}, "bom.txt:2: byte-order mark"},
	{"CR-only line endings", []string{"count", "--order", "2", "-o", "$D/out", "$D/cr.txt"}, "cr.txt:1: carriage return inside a line: lines must end with LF or CR LF; CR-only line endings are not read"},
	{"a .gz name without gzip data", []string{"count", "--order", "2", "-o", "$D/out", "$D/fake.gz"}, "fake.gz: not a gzip stream"},
	{"output is the text it counts", []string{"count", "--order", "2", "-o", "$D/train.txt", "$D/train.txt"}, "output $D/train.txt is also an input"},
	{"output is a link to the counts", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/link.tsv", "$D/unigrams.tsv"}, "output $D/link.tsv is the same file as the input $D/unigrams.tsv"},
	{"output directory missing", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/nodir/m.ingot", "$D/zero.tsv"}, "directory $D/nodir: no such file or directory"},
	{"same count file twice", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D/unigrams.tsv", "$D/./unigrams.tsv"}, "are the same file: its counts would be added twice"},
	{"count files in a directory", []string{"compile", "--method", "katz", "--order", "1", "-o", "$D/out", "$D"}, "is a directory"},
	{"katz threshold 0", []string{"compile", "--method", "katz", "--katz-threshold", "0", "--order", "1", "-o", "$D/out", "$D/unigrams.tsv"}, "--katz-threshold 0 outside 1..10000"},
	{"katz threshold huge", []string{"compile", "--method", "katz", "--katz-threshold", "9223372036854775807", "--order", "1", "-o", "$D/out", "$D/unigrams.tsv"}, "--katz-threshold 9223372036854775807 outside 1..10000"},
	{"katz threshold with another method", []string{"compile", "--method", "absolute", "--katz-threshold", "3", "--order", "1", "-o", "$D/out", "$D/unigrams.tsv"}, "--katz-threshold applies to --method katz only, not absolute"},
	{"discount with another method", []string{"compile", "--method", "katz", "--discount", "0.3", "--order", "1", "-o", "$D/out", "$D/unigrams.tsv"}, "--discount applies to --method absolute only, not katz"},
	{"back-off bits without bits", []string{"prune", "--drop-below", "1e-6", "--backoff-bits", "8", "-o", "$D/out", "$M"}, "--backoff-bits applies only with --bits"},
	{"model is a device", []string{"score", "/dev/zero"}, "/dev/zero: is a device, not a regular file"},
	{"model is a directory", []string{"inspect", "$D"}, "is a directory, not a regular file"},
	{"key is a device", []string{"sign", "--key", "/dev/urandom", "$M"}, "/dev/urandom: is a device, not a regular file"},
	{"key file too large", []string{"verify", "--public-key", "$D/big.pub", "$M"}, "at most 65536 are read"},
	{"marker in held-out text", []string{"score", "$M", "$D/train.txt", "$D/marker.txt"}, "marker.txt:2: marker <unk> inside raw text"},
	{"start marker in held-out text", []string{"score", "$M", "$D/start.txt"}, "start.txt:2: marker <s> inside raw text"},
	{"empty held-out text (score)", []string{"score", "$M", "$D/empty.txt"}, "no sentences in $D/empty.txt"},
	{"empty held-out text (prune)", []string{"prune", "--drop-below", "1e-6", "--heldout", "$D/empty.txt", "-o", "$D/out", "$M"}, "no sentences in $D/empty.txt"},
	{"empty held-out text (quantize)", []string{"quantize", "--bits", "8", "--heldout", "$D/empty.txt", "-o", "$D/out", "$M"}, "no sentences in $D/empty.txt"},
	{"empty held-out text (verify)", []string{"verify", "--baseline", "$M", "--heldout", "$D/empty.txt", "$M"}, "no sentences in $D/empty.txt"},
	{"empty held-out text (tradeoff)", []string{"tradeoff", "--heldout", "$D/empty.txt", "-o", "$D/out", "$M"}, "no sentences in $D/empty.txt"},
	{"start marker inside a context", []string{"inspect", "--next", "<unk> <s>", "$M"}, "context word 2 is <s>, which only begins a sentence"},
}

func init() { badInputTable = append(badInputTable, hardeningCases...) }

// hardeningFiles writes the files the hardening cases read.
func hardeningFiles(t *testing.T, dir string) {
	for name, text := range map[string]string{
		"long.txt":  "turn the beacon on\n",
		"long.tsv":  "beacon\t12345678\n",
		"bom.txt":   "\ufeffturn on\nturn \ufeffoff\n",
		"cr.txt":    "turn on\rturn off\r",
		"fake.gz":   "turn on\n",
		"start.txt": "turn on\nturn <s> on\n",
		"big.pub":   strings.Repeat("x", 70000),
	} {
		writeFile(t, dir, name, text)
	}
	if err := os.Symlink(filepath.Join(dir, "unigrams.tsv"), filepath.Join(dir, "link.tsv")); err != nil {
		t.Fatal(err)
	}
}
