package format

import (
	"math"
	"slices"
	"sort"
	"strings"
	"testing"

	"ingot/compile/tables"
)

// handModel builds Tables from probabilities given per n-gram ("the fog" ->
// 0.3). Every word of the vocabulary needs a unigram, except <s>, whose
// log10 probability is NoProb. Back-off weights are then computed so that
// every context's distribution sums to one (see normalize).
func handModel(t testing.TB, order int, probs map[string]float64) *tables.Tables {
	t.Helper()
	vocab := []string{tables.SentenceStart}
	for g := range probs {
		if !strings.Contains(g, " ") {
			vocab = append(vocab, g)
		}
	}
	sort.Strings(vocab)
	tb := &tables.Tables{Vocab: vocab, Levels: make([]tables.Level, order)}
	grams := make([][][]uint32, order)
	for g := range probs {
		words := strings.Fields(g)
		ids := make([]uint32, len(words))
		for i, w := range words {
			id, ok := tb.ID(w)
			if !ok {
				t.Fatalf("n-gram %q uses %q, which has no unigram", g, w)
			}
			ids[i] = id
		}
		if len(ids) > 1 {
			grams[len(ids)-1] = append(grams[len(ids)-1], ids)
		}
	}
	for id := range vocab {
		grams[0] = append(grams[0], []uint32{uint32(id)})
	}
	for k := 1; k <= order; k++ {
		slices.SortFunc(grams[k-1], tables.Compare)
		lv := &tb.Levels[k-1]
		for _, g := range grams[k-1] {
			lv.Words = append(lv.Words, g...)
			p, ok := probs[tb.Words(g)]
			switch {
			case ok:
				lv.LogProb = append(lv.LogProb, float32(math.Log10(p)))
			case k == 1 && tb.Vocab[g[0]] == tables.SentenceStart:
				lv.LogProb = append(lv.LogProb, tables.NoProb)
			default:
				t.Fatalf("no probability for %q", tb.Words(g))
			}
		}
		if k < order {
			lv.LogBackoff = make([]float32, len(lv.LogProb))
		}
	}
	normalize(tb)
	if err := tb.Check(); err != nil {
		t.Fatal(err)
	}
	return tb
}

// normalize sets every back-off weight so that each stored context's
// distribution sums to one, the usual rule for back-off models (common
// practice): for a context h with stored continuations S,
//
//	weight(h) = (1 - sum over w in S of P(w|h)) / (1 - sum over w in S of P(w|h'))
//
// where h' is h without its oldest word. Lower orders come first, since
// P(w|h') uses their weights.
func normalize(tb *tables.Tables) {
	for k := 1; k < tb.Order(); k++ {
		for i := 0; i < tb.Len(k); i++ {
			h := tb.Gram(k, i)
			num, den := 1.0, 1.0
			for e := 0; e < tb.Len(k+1); e++ {
				g := tb.Gram(k+1, e)
				if tables.Compare(g[:k], h) != 0 {
					continue
				}
				num -= math.Pow(10, float64(tb.Levels[k].LogProb[e]))
				den -= math.Pow(10, tb.LogProb(g[1:]))
			}
			tb.Levels[k-1].LogBackoff[i] = float32(math.Log10(num / den))
		}
	}
}

// tinyProbs is the hand-built order-3 model of the golden vectors: a
// lighthouse keeper's log. Unigrams sum to one over the words other than
// <s>; stored continuations leave room for back-off in every context.
func tinyProbs() map[string]float64 {
	return map[string]float64{
		"</s>": 0.15, "<unk>": 0.05, "beam": 0.05, "fog": 0.1, "horn": 0.05,
		"lamp": 0.1, "lit": 0.1, "sounded": 0.05, "the": 0.25, "was": 0.1,

		"<s> the": 0.6, "<s> fog": 0.1,
		"the lamp": 0.4, "the fog": 0.3, "the horn": 0.2,
		"lamp was": 0.5, "lamp lit": 0.2,
		"fog horn": 0.3, "fog was": 0.4,
		"horn sounded": 0.6,
		"was lit":      0.5, "was </s>": 0.1,
		"lit </s>":     0.7,
		"sounded </s>": 0.6,

		"<s> the lamp": 0.5, "<s> the fog": 0.35,
		"the lamp was":      0.7,
		"the fog horn":      0.6,
		"lamp was lit":      0.8,
		"horn sounded </s>": 0.8,
		"fog horn sounded":  0.8,
	}
}

// tinyModel returns the golden model's Tables, with build info filled in.
func tinyModel(t testing.TB) *tables.Tables {
	tb := handModel(t, 3, tinyProbs())
	tb.Info = tables.Info{
		Method:                 "hand-built",
		Fallbacks:              []string{"back-off weights computed so that every context sums to one"},
		Options:                map[string]string{"order": "3"},
		EmptyContextLogBackoff: math.Inf(-1),
		ToolVersion:            "golden-1",
	}
	return tb
}

// mustMarshal encodes tb or fails the test.
func mustMarshal(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// mustOpen opens data or fails the test.
func mustOpen(t testing.TB, data []byte) *Model {
	t.Helper()
	m, err := FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// same reports whether two log10 values are identical, -Inf included.
func same(a, b float64) bool {
	return a == b || (math.IsNaN(a) && math.IsNaN(b))
}

// mustMarshalTables encodes tb in the tables layout of versions 1 and 2
// (version 1 unless a column is quantized), for tests of that layout.
func mustMarshalTables(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := MarshalVersion(tb, 2)
	if err != nil {
		t.Fatal(err)
	}
	return b
}
