package ctest

import (
	"bufio"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// Published check values. CRC-32C: the check value of "123456789" is given
// in spec/FORMAT.md section 1 and in RFC 3720 (iSCSI) appendix B.4, which
// also lists the four 32-byte patterns (all zero, all 0xFF, ascending,
// descending). SHA-256: FIPS 180-2 appendix B gives "abc", the 448-bit
// message and one million 'a'; the digest of the empty string is the
// NIST example value (recalled from memory, and equal to Go's
// crypto/sha256 of "").
var wantVectors = []string{
	"e3069283", // CRC-32C("123456789")
	"8a9136aa", // 32 bytes of 0x00
	"62a8ab43", // 32 bytes of 0xFF
	"46dd794e", // bytes 0x00..0x1F
	"113fdb5c", // bytes 0x1F..0x00
	"e3069283", // "1234" then "56789", continued
	"ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad", // SHA-256("abc")
	"e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855", // SHA-256("")
	"248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1", // "abcdbcdecdefdefg...nopq"
	"cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0", // one million 'a'
	"cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0", // the same in uneven pieces
}

func TestChecksumVectors(t *testing.T) {
	p := tools(t)
	for _, sanitizer := range []bool{false, true} {
		prog := p.driver
		if sanitizer {
			prog = p.driverASan
		}
		r := run(t, "", sanitizer, prog, "vectors")
		got := strings.Fields(r.stdout)
		if r.code != 0 || len(got) != len(wantVectors) {
			t.Fatalf("vectors: exit %d, %d values:\n%s%s", r.code, len(got), r.stdout, r.stderr)
		}
		for i, w := range wantVectors {
			if got[i] != w {
				t.Errorf("vector %d: got %s, want %s", i, got[i], w)
			}
		}
	}
}

// goldenQuery is one line of spec/golden/tiny.expected.jsonl.
type goldenQuery struct {
	Context []string `json:"context"`
	Word    string   `json:"word"`
	Log10   *float64 `json:"log10"`
}

// goldenModels lists the golden model files of spec/golden and the
// expected answers of each: NAME.ingot and NAME.vK.ingot are answered by
// NAME.expected.jsonl (spec/FORMAT.md section 9).
func goldenModels(t *testing.T) map[string]string {
	t.Helper()
	root := tools(t).root
	files, err := filepath.Glob(filepath.Join(root, "spec/golden/*.ingot"))
	if err != nil || len(files) == 0 {
		t.Fatalf("no golden models (%v)", err)
	}
	out := map[string]string{}
	for _, f := range files {
		name := strings.TrimSuffix(filepath.Base(f), ".ingot")
		if i := strings.LastIndex(name, ".v"); i > 0 {
			name = name[:i]
		}
		out[f] = filepath.Join(root, "spec/golden", name+".expected.jsonl")
	}
	return out
}

// The golden vectors of spec/FORMAT.md section 9, for every golden model
// (versions 1 and, where present, 3): a reader that follows section 7
// reproduces every value exactly (the spec says so: same additions in the
// same order, in double precision), from a mapped file and from a buffer,
// with and without the sanitizers.
func TestGoldenVectors(t *testing.T) {
	p := tools(t)
	for model, expected := range goldenModels(t) {
		t.Run(filepath.Base(model), func(t *testing.T) { goldenVectors(t, p, model, expected) })
	}
}

func goldenVectors(t *testing.T, p programs, model, expected string) {
	f, err := os.Open(expected)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var queries []goldenQuery
	var in strings.Builder
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		var q goldenQuery
		if err := json.Unmarshal(sc.Bytes(), &q); err != nil {
			t.Fatal(err)
		}
		queries = append(queries, q)
		fmt.Fprintf(&in, "%s\t%s\n", strings.Join(q.Context, " "), q.Word)
	}
	if len(queries) < 100 {
		t.Fatalf("only %d golden queries", len(queries))
	}
	for _, c := range []struct {
		name      string
		prog      string
		sanitizer bool
		args      []string
	}{
		{"mapped", p.driver, false, []string{"query", model}},
		{"buffer", p.driver, false, []string{"query", "--buffer", model}},
		{"mapped, sanitized", p.driverASan, true, []string{"query", model}},
		{"buffer, sanitized", p.driverASan, true, []string{"query", "--buffer", model}},
	} {
		t.Run(c.name, func(t *testing.T) {
			r := run(t, in.String(), c.sanitizer, c.prog, c.args...)
			got := strings.Fields(r.stdout)
			if r.code != 0 || len(got) != len(queries) {
				t.Fatalf("exit %d, %d answers for %d queries\n%s", r.code, len(got), len(queries), r.stderr)
			}
			for i, q := range queries {
				v := parseC(t, got[i])
				want := math.Inf(-1)
				if q.Log10 != nil {
					want = *q.Log10
				}
				if v != want {
					t.Errorf("log10 P(%s | %v) = %v, want %v exactly", q.Word, q.Context, v, want)
				}
			}
		})
	}
}

// parseC reads a number the C library printed ("-inf", "nan" included).
func parseC(t testing.TB, s string) float64 {
	t.Helper()
	switch s {
	case "-inf":
		return math.Inf(-1)
	case "inf":
		return math.Inf(1)
	case "nan", "-nan":
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		t.Fatalf("not a number: %q", s)
	}
	return v
}

// The embedding example of spec/c/README.md compiles as it stands (with
// the warnings of the build command as errors) and gives the sentence's
// sum of log10 probabilities that the Go reader gives.
func TestEmbeddingExample(t *testing.T) {
	p := tools(t)
	doc, err := os.ReadFile(filepath.Join(p.root, "spec/c/README.md"))
	if err != nil {
		t.Fatal(err)
	}
	_, after, ok := strings.Cut(string(doc), "## Embedding")
	if !ok {
		t.Fatal("spec/c/README.md has no Embedding section")
	}
	_, code, ok := strings.Cut(after, "```c\n")
	if !ok {
		t.Fatal("no C block in the Embedding section")
	}
	code, _, _ = strings.Cut(code, "```")
	if n := strings.Count(code, "\n"); n > 25 {
		t.Errorf("the embedding example is %d lines", n)
	}
	model := filepath.Join(p.root, "spec/golden/tiny.ingot")
	src := code + fmt.Sprintf(`
int main(void)
{
	const char *words[] = {"the", "keeper", "lit", "the", "lamp"};
	printf("%%.17g\n", sentence_log10(%q, words, 5));
	return 0;
}
`, model)
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "example.c"), []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "example")
	if err := compile(p.root, []string{"cc", "-std=c99", "-O2", "-Wall", "-Wextra", "-Werror", "-Ispec/c", "-o", bin, filepath.Join(dir, "example.c"), "spec/c/ingot.c", "-lm"}); err != nil {
		t.Fatal(err)
	}
	r := run(t, "", false, bin)
	data, err := os.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	want := 0.0
	for _, v := range goScores(t, data, "the keeper lit the lamp\n")[0] {
		want += v
	}
	if got := parseC(t, strings.TrimSpace(r.stdout)); r.code != 0 || math.Abs(got-want) > 1e-12 {
		t.Fatalf("example printed %q (exit %d), want %v", r.stdout, r.code, want)
	}
}
