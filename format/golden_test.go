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
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/quantize"
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
	goldenHash0Model3 = filepath.Join("..", "spec", "golden", "tiny.v3-hash0.ingot")
	goldenHash4Model3 = filepath.Join("..", "spec", "golden", "tiny.v3-hash4.ingot")
	goldenCutExpected = filepath.Join("..", "spec", "golden", "tiny-cut.expected.jsonl")
	// The tiny models with their last words in key lists (encodings 7
	// and 8), which the writer chooses only where lists are shorter, as
	// they are on larger models.
	goldenListsModel3    = filepath.Join("..", "spec", "golden", "tiny.v3-lists.ingot")
	goldenCutListsModel3 = filepath.Join("..", "spec", "golden", "tiny-cut.v3-lists.ingot")
	// And in coded key lists (encodings 9 and 10).
	goldenCodedModel3    = filepath.Join("..", "spec", "golden", "tiny.v3-coded.ingot")
	goldenCutCodedModel3 = filepath.Join("..", "spec", "golden", "tiny-cut.v3-coded.ingot")
	// The Marrowfen models: estimated from the first 120 commands of the
	// invented demo scenario (marrowfen.txt), in 32-bit floats (version 3)
	// and quantized by package quantize at --bits 8 and --bits 4 (back-off
	// weights 8 bits), each in versions 2 and 3, so that every version
	// and variant Write produces has a golden vector.
	goldenDemoText = filepath.Join("..", "spec", "golden", "marrowfen.txt")
)

func goldenPath(name string) string { return filepath.Join("..", "spec", "golden", name) }

// demoModels returns the float Kneser-Ney order-3 model of marrowfen.txt
// and its 8-bit and 4-bit quantizations (least-squares codebooks, the
// command line's default trainer).
func demoModels(t testing.TB) (float, q8, q4 *tables.Tables) {
	data, err := os.ReadFile(goldenDemoText)
	if err != nil {
		t.Fatal(err)
	}
	float = fixture.Estimate(t, strings.Split(strings.TrimSpace(string(data)), "\n"), 3, estimate.Options{Method: estimate.KneserNey})
	quant := func(bits int) *tables.Tables {
		q, _, err := quantize.Model(float, quantize.Options{Bits: bits, Trainer: quantize.LeastSquares})
		if err != nil {
			t.Fatal(err)
		}
		return q
	}
	return float, quant(8), quant(4)
}

// demoQueries lists the expected answers of a Marrowfen model: every
// stored n-gram given its context, then, after the empty context, every
// stored context and a few contexts that are not stored, the end of
// sentence, one common word and one word outside the vocabulary (most of
// which the model answers by backing off).
func demoQueries(tb *tables.Tables) []goldenQuery {
	unk, _ := tb.ID(tables.Unknown)
	toID := func(w string) uint32 {
		if id, ok := tb.ID(w); ok {
			return id
		}
		return unk
	}
	words := func(ids []uint32) []string {
		out := make([]string, len(ids))
		for i, id := range ids {
			out[i] = tb.Vocab[id]
		}
		return out
	}
	query := func(c []string, w string) goldenQuery {
		g := make([]uint32, 0, len(c)+1)
		for _, x := range c {
			g = append(g, toID(x))
		}
		return goldenQuery{Context: c, Word: w, Log10: tb.LogProb(append(g, toID(w)))}
	}
	var out []goldenQuery
	contexts := [][]string{{}}
	for k := 1; k <= tb.Order(); k++ {
		for e := 0; e < tb.Len(k); e++ {
			g := tb.Gram(k, e)
			if tb.Vocab[g[k-1]] == tables.SentenceStart {
				continue
			}
			out = append(out, query(words(g[:k-1]), tb.Vocab[g[k-1]]))
			if k < tb.Order() {
				contexts = append(contexts, words(g))
			}
		}
	}
	contexts = append(contexts,
		[]string{"<s>", "call", "the", "warden"}, // longer than the model looks
		[]string{"otter", "beacon"},              // not stored
		[]string{"marsh", "harrier"},             // outside the vocabulary
	)
	for _, c := range contexts {
		for _, w := range []string{tables.SentenceEnd, "the", "lantern"} {
			out = append(out, query(c, w))
		}
	}
	return out
}

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
	// The tiny model with the word hashes of older writers (32-bit slots,
	// packed ids without fingerprints), which readers keep reading.
	for _, c := range []struct {
		model string
		enc   Encoding
	}{{goldenHash0Model3, Plain}, {goldenHash4Model3, PackedIDs}} {
		data, err := MarshalWordHash(tiny, c.enc, 0)
		if err != nil {
			t.Fatal(err)
		}
		checkGoldenData(t, c.model, goldenExpected, data, 3, goldenQueries(tiny))
		if m := mustOpen(t, data); m.wordHash.bits != 0 != (c.enc == PackedIDs) || m.wordHash.tag != 0 {
			t.Errorf("%s: not the %s word hash", c.model, c.enc)
		}
	}
	// The tiny models with key lists at every order: ids at order 2,
	// successor ranks (tiny) and ids (cut) at order 3, and in the cut
	// model contexts without children, whose lists are empty.
	for _, c := range []struct {
		model, expected string
		tb              *tables.Tables
		ranked          bool
	}{{goldenListsModel3, goldenExpected, tiny, true}, {goldenCutListsModel3, goldenCutExpected, cut, false}} {
		data, err := MarshalKeyLists(c.tb)
		if err != nil {
			t.Fatal(err)
		}
		checkGoldenData(t, c.model, c.expected, data, 3, goldenQueries(c.tb))
		if m := mustOpen(t, data); !m.levels[1].listed || !m.levels[2].listed || m.levels[2].ranked != c.ranked {
			t.Errorf("%s: orders 2 and 3 not in key lists, or order 3 keyed otherwise than expected", c.model)
		}
	}
	// The same in coded key lists (§4.8.8).
	for _, c := range []struct {
		model, expected string
		tb              *tables.Tables
		ranked          bool
	}{{goldenCodedModel3, goldenExpected, tiny, true}, {goldenCutCodedModel3, goldenCutExpected, cut, false}} {
		data, err := MarshalCodedLists(c.tb)
		if err != nil {
			t.Fatal(err)
		}
		checkGoldenData(t, c.model, c.expected, data, 3, goldenQueries(c.tb))
		if m := mustOpen(t, data); !m.levels[1].coded || !m.levels[2].coded || m.levels[2].ranked != c.ranked {
			t.Errorf("%s: orders 2 and 3 not in coded key lists, or order 3 keyed otherwise than expected", c.model)
		}
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

// TestGoldenMarrowfen checks the Marrowfen golden models like TestGolden:
// a float model in version 3, and quantized models (packed indexes of 4 to
// 8 bits into codebooks) in versions 2 and 3. Run with -update to rewrite
// them.
func TestGoldenMarrowfen(t *testing.T) {
	float, q8, q4 := demoModels(t)
	for _, c := range []struct {
		model, expected string
		tb              *tables.Tables
		version         int
	}{
		{"marrowfen.v3.ingot", "marrowfen.expected.jsonl", float, 3},
		{"marrowfen.q8.v2.ingot", "marrowfen.q8.expected.jsonl", q8, 2},
		{"marrowfen.q8.v3.ingot", "marrowfen.q8.expected.jsonl", q8, 3},
		{"marrowfen.q4.v2.ingot", "marrowfen.q4.expected.jsonl", q4, 2},
		{"marrowfen.q4.v3.ingot", "marrowfen.q4.expected.jsonl", q4, 3},
	} {
		t.Run(c.model, func(t *testing.T) {
			checkGoldenQueries(t, goldenPath(c.model), goldenPath(c.expected), c.tb, c.version, demoQueries(c.tb))
		})
	}
	// The 8-bit model in coded key lists at every order: the golden
	// vector whose lists include every kind of §4.8.8 (one key, one width,
	// Elias-Fano, run).
	coded, err := MarshalCodedLists(q8)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("marrowfen.q8.v3-coded.ingot", func(t *testing.T) {
		checkGoldenData(t, goldenPath("marrowfen.q8.v3-coded.ingot"), goldenPath("marrowfen.q8.expected.jsonl"), coded, 3, demoQueries(q8))
	})
	kinds := map[uint64]bool{}
	m := mustOpen(t, coded)
	for k := 2; k <= m.order; k++ {
		lv := &m.levels[k-1]
		starts := make([]uint64, lv.lists.starts.n)
		if err := lv.lists.starts.decodeAll(starts); err != nil {
			t.Fatal(err)
		}
		for r := 0; r+1 < len(starts); r++ {
			switch size := starts[r+1] - starts[r]; {
			case size == 0:
			case size >= 2 && lv.lists.keyAt(starts[r], listKindBits) == listEF:
				kinds[listEF] = true
			case size == 2 && lv.lists.keyAt(starts[r], listKindBits) == listRun:
				kinds[listRun] = true
			default:
				kinds[listFixed] = true
			}
		}
	}
	if !kinds[listEF] || !kinds[listRun] || !kinds[listFixed] {
		t.Errorf("marrowfen.q8.v3-coded.ingot holds lists of kinds %v; want every kind", kinds)
	}
	// The quantized files cover packed widths that are whole bytes, that
	// divide a byte and that straddle bytes, in both versions.
	widths := map[int]bool{}
	for _, tb := range []*tables.Tables{q8, q4} {
		for _, lv := range tb.Levels {
			for _, cb := range [][]float32{lv.ProbCodebook, lv.BackoffCodebook} {
				if cb != nil {
					widths[indexBits(len(cb))] = true
				}
			}
		}
	}
	if !widths[8] || !widths[4] || !(widths[5] || widths[6] || widths[7]) {
		t.Errorf("the quantized golden models use index widths %v; want 8, 4 and one that straddles bytes", widths)
	}
}

func indexBits(levels int) int {
	b := 1
	for 1<<b < levels {
		b++
	}
	return b
}

func checkGolden(t *testing.T, model, expected string, tb *tables.Tables, version int) {
	checkGoldenQueries(t, model, expected, tb, version, goldenQueries(tb))
}

func checkGoldenQueries(t *testing.T, model, expected string, tb *tables.Tables, version int, qs []goldenQuery) {
	data, err := MarshalVersion(tb, version)
	if err != nil {
		t.Fatal(err)
	}
	checkGoldenData(t, model, expected, data, version, qs)
}

// checkGoldenData compares the committed golden model with data and its
// committed answers with qs (rewriting both with -update), then checks
// that the reader verifies the model and gives every answer.
func checkGoldenData(t *testing.T, model, expected string, data []byte, version int, qs []goldenQuery) {
	queries := marshalQueries(t, qs)
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
