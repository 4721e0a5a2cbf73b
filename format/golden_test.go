package format

import (
	"bufio"
	"bytes"
	"encoding/json"
	"flag"
	"os"
	"path/filepath"
	"testing"

	"ingot/compile/tables"
)

var update = flag.Bool("update", false, "rewrite the golden vectors in ../spec/golden from the hand-built model")

var (
	goldenModel    = filepath.Join("..", "spec", "golden", "tiny.ingot")
	goldenExpected = filepath.Join("..", "spec", "golden", "tiny.expected.jsonl")
)

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

// TestGolden checks that the committed golden model is exactly what Write
// produces for the hand-built model, and that the reader gives every
// expected answer. Run with -update to rewrite both files.
func TestGolden(t *testing.T) {
	tb := tinyModel(t)
	data := mustMarshalTables(t, tb)
	queries := marshalQueries(t, goldenQueries(tb))
	if *update {
		if err := os.WriteFile(goldenModel, data, 0o644); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(goldenExpected, queries, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	committed, err := os.ReadFile(goldenModel)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(committed, data) {
		t.Fatalf("%s differs from what Write produces now (run go test -run TestGolden -update if the change is intended)", goldenModel)
	}
	if committed, err := os.ReadFile(goldenExpected); err != nil || !bytes.Equal(committed, queries) {
		t.Fatalf("%s differs from the reference answers (err %v)", goldenExpected, err)
	}
	m, err := Open(goldenModel)
	if err != nil {
		t.Fatal(err)
	}
	defer m.Close()
	if err := m.Verify(); err != nil {
		t.Fatal(err)
	}
	toID := func(w string) uint32 {
		if id, ok := m.ID(w); ok {
			return id
		}
		return m.UnknownID()
	}
	for _, q := range readQueries(t, goldenExpected) {
		context := make([]uint32, len(q.Context))
		for i, w := range q.Context {
			context[i] = toID(w)
		}
		if got := m.LogProb(context, toID(q.Word)); got != q.Log10 {
			t.Errorf("log10 P(%s | %v) = %v, expected %v", q.Word, q.Context, got, q.Log10)
		}
	}
}
