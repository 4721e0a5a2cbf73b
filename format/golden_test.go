package format

import (
	"bufio"
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"ingot/compile/tables"
)

var update = flag.Bool("update", false, "rewrite the golden vectors in ../spec/golden from the hand-built model")

var (
	goldenModel    = filepath.Join("..", "spec", "golden", "tiny.ingot")
	goldenExpected = filepath.Join("..", "spec", "golden", "tiny.expected.jsonl")
	// Version 3: the same model, and a variant that is not suffix-closed
	// and is quantized (so order 3 keys are word ids, some entries are not
	// contexts, and back-offs are packed indexes over the contexts).
	goldenModel3      = filepath.Join("..", "spec", "golden", "tiny.v3.ingot")
	goldenCutModel3   = filepath.Join("..", "spec", "golden", "tiny-cut.v3.ingot")
	goldenCutExpected = filepath.Join("..", "spec", "golden", "tiny-cut.expected.jsonl")
)

// cutTiny returns the tiny model without the bigrams that are the suffix of
// a stored trigram but the context of none (so it is no longer
// suffix-closed), with lossless codebooks for every column of orders 2 and
// up.
func cutTiny(t testing.TB) *tables.Tables {
	tb := tinyModel(t)
	contexts := map[string]bool{}
	suffixes := map[string]bool{}
	for e := 0; e < tb.Len(3); e++ {
		g := tb.Gram(3, e)
		contexts[fmt.Sprint(g[:2])] = true
		suffixes[fmt.Sprint(g[1:])] = true
	}
	old := tb.Levels[1]
	lv := tables.Level{}
	for i := 0; i < tb.Len(2); i++ {
		g := tb.Gram(2, i)
		if key := fmt.Sprint(g); suffixes[key] && !contexts[key] {
			continue
		}
		lv.Words = append(lv.Words, g...)
		lv.LogProb = append(lv.LogProb, old.LogProb[i])
		lv.LogBackoff = append(lv.LogBackoff, old.LogBackoff[i])
	}
	tb.Levels[1] = lv
	for k := 2; k <= tb.Order(); k++ {
		lv := &tb.Levels[k-1]
		lv.ProbCodebook = distinctValues(lv.LogProb)
		if lv.LogBackoff != nil {
			lv.BackoffCodebook = distinctValues(lv.LogBackoff)
		}
	}
	tb.Info.History = append(tb.Info.History, "golden vector: bigrams that are only suffixes removed; lossless codebooks")
	if err := tb.Check(); err != nil {
		t.Fatal(err)
	}
	return tb
}

func distinctValues(v []float32) []float32 {
	s := slices.Clone(v)
	slices.Sort(s)
	return slices.Compact(s)
}

// goldenQuery is one line of tiny.expected.jsonl.
type goldenQuery struct {
	Context []string `json:"context"`
	Word    string   `json:"word"`
	Log10   float64  `json:"log10"`
}

// goldenQueries lists the expected answers of the tiny model: every
// predictable word (and one word outside the vocabulary) after the empty
// context, after every stored context, and after a few contexts that are not
// stored or are longer than the model looks. Words outside the vocabulary
// are scored as <unk>. The reference values come from Tables.LogProb.
func goldenQueries(tb *tables.Tables) []goldenQuery {
	contexts := [][]string{{}}
	for k := 1; k < tb.Order(); k++ {
		for e := 0; e < tb.Len(k+1); e++ {
			g := tb.Gram(k+1, e)[:k]
			c := make([]string, k)
			for i, id := range g {
				c[i] = tb.Vocab[id]
			}
			if last := contexts[len(contexts)-1]; !equalWords(last, c) {
				contexts = append(contexts, c)
			}
		}
	}
	contexts = append(contexts,
		[]string{"<s>", "fog", "horn"}, // longer than the model looks
		[]string{"beam", "lit"},        // not stored
		[]string{"was", "fog"},         // not stored, its suffix is
		[]string{"anchor"},             // outside the vocabulary
		[]string{"<s>", "anchor", "the"},
	)
	var words []string
	for _, w := range tb.Vocab {
		if w != tables.SentenceStart {
			words = append(words, w)
		}
	}
	words = append(words, "anchor")
	toID := func(w string) uint32 {
		if id, ok := tb.ID(w); ok {
			return id
		}
		id, _ := tb.ID(tables.Unknown)
		return id
	}
	var out []goldenQuery
	for _, c := range contexts {
		g := make([]uint32, 0, len(c)+1)
		for _, w := range c {
			g = append(g, toID(w))
		}
		for _, w := range words {
			out = append(out, goldenQuery{Context: c, Word: w, Log10: tb.LogProb(append(g, toID(w)))})
		}
	}
	return out
}

func equalWords(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func marshalQueries(t *testing.T, qs []goldenQuery) []byte {
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	for _, q := range qs {
		if err := enc.Encode(q); err != nil {
			t.Fatal(err)
		}
	}
	return b.Bytes()
}

func readQueries(t *testing.T, path string) []goldenQuery {
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	var out []goldenQuery
	sc := bufio.NewScanner(bytes.NewReader(data))
	for line := 1; sc.Scan(); line++ {
		var q goldenQuery
		if err := json.Unmarshal(sc.Bytes(), &q); err != nil {
			t.Fatalf("%s:%d: %v", path, line, err)
		}
		out = append(out, q)
	}
	return out
}

// TestGolden checks that the committed golden models are exactly what
// Write produces for the hand-built models (tiny.ingot in the tables
// layout of version 1, the others in version 3), and that the reader gives
// every expected answer. Run with -update to rewrite the files.
func TestGolden(t *testing.T) {
	tiny, cut := tinyModel(t), cutTiny(t)
	for _, c := range []struct {
		model, expected string
		tb              *tables.Tables
		version         int
	}{
		{goldenModel, goldenExpected, tiny, 1},
		{goldenModel3, goldenExpected, tiny, 3},
		{goldenCutModel3, goldenCutExpected, cut, 3},
	} {
		checkGolden(t, c.model, c.expected, c.tb, c.version)
	}
	m, err := Open(goldenCutModel3)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	if m.SuffixClosed() || m.levels[2].ranked || m.levels[1].marks.count == uint64(m.Count(2)) {
		t.Errorf("%s does not exercise word-id keys at order 3 and entries that are not contexts", goldenCutModel3)
	}
	m3, err := Open(goldenModel3)
	if err != nil {
		t.Fatal(err)
	}
	defer m3.Close()
	if !m3.levels[2].ranked {
		t.Errorf("%s does not exercise successor ranks", goldenModel3)
	}
}

func checkGolden(t *testing.T, model, expected string, tb *tables.Tables, version int) {
	data, err := MarshalVersion(tb, version)
	if err != nil {
		t.Fatal(err)
	}
	queries := marshalQueries(t, goldenQueries(tb))
	if *update {
		if err := os.WriteFile(model, data, 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(expected, queries, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	committed, err := os.ReadFile(model)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(committed, data) {
		t.Fatalf("%s differs from what Write produces now (run go test -run TestGolden -update if the change is intended)", model)
	}
	if committed, err := os.ReadFile(expected); err != nil || !bytes.Equal(committed, queries) {
		t.Fatalf("%s differs from the reference answers (err %v)", expected, err)
	}
	m, err := Open(model)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	if m.Version() != version {
		t.Errorf("%s: version %d, expected %d", model, m.Version(), version)
	}
	if err := m.Verify(); err != nil {
		t.Fatal(err)
	}
	toID := func(w string) uint32 {
		if id, ok := m.ID(w); ok {
			return id
		}
		return m.UnknownID()
	}
	for _, q := range readQueries(t, expected) {
		context := make([]uint32, len(q.Context))
		for i, w := range q.Context {
			context[i] = toID(w)
		}
		if got := m.LogProb(context, toID(q.Word)); got != q.Log10 {
			t.Errorf("%s: log10 P(%s | %v) = %v, expected %v", model, q.Word, q.Context, got, q.Log10)
		}
	}
}
