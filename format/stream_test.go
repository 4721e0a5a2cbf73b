package format

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"

	"ingot/compile/tables"
)

// closedTables returns a model holding every n-gram (orders 1..order) of
// random sentences, so prefix- and suffix-closed as a model estimated from
// counts is, with random values; about one back-off weight in three is
// +0.0 (weight 1), on entries with and without children.
func closedTables(seed uint64, sentences, vocabSize, order int) *tables.Tables {
	rng := rand.New(rand.NewPCG(seed, 7))
	vocab := []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown}
	for i := 0; i < vocabSize; i++ {
		vocab = append(vocab, fmt.Sprintf("v%04d", i))
	}
	sort.Strings(vocab)
	tb := &tables.Tables{Vocab: vocab, Levels: make([]tables.Level, order)}
	start, _ := tb.ID(tables.SentenceStart)
	end, _ := tb.ID(tables.SentenceEnd)
	zipf := rand.NewZipf(rng, 1.2, 3, uint64(vocabSize-1))
	seen := make([]map[string][]uint32, order+1)
	for k := range seen {
		seen[k] = map[string][]uint32{}
	}
	for range sentences {
		s := []uint32{start}
		for range 1 + rng.IntN(12) {
			for {
				w, _ := tb.ID(fmt.Sprintf("v%04d", zipf.Uint64()))
				if w != start && w != end {
					s = append(s, w)
					break
				}
			}
		}
		s = append(s, end)
		for i := 1; i < len(s); i++ {
			for k := 2; k <= order && i-k+1 >= 0; k++ {
				g := slices.Clone(s[i-k+1 : i+1])
				seen[k][fmt.Sprint(g)] = g
			}
		}
	}
	value := func(lo, hi float64) float32 { return float32(lo + (hi-lo)*rng.Float64()) }
	for id := range vocab {
		lv := &tb.Levels[0]
		lv.Words = append(lv.Words, uint32(id))
		p := value(-6, -1)
		if uint32(id) == start {
			p = tables.NoProb
		}
		lv.LogProb = append(lv.LogProb, p)
	}
	for k := 2; k <= order; k++ {
		var grams [][]uint32
		for _, g := range seen[k] {
			grams = append(grams, g)
		}
		slices.SortFunc(grams, tables.Compare)
		lv := &tb.Levels[k-1]
		for _, g := range grams {
			lv.Words = append(lv.Words, g...)
			lv.LogProb = append(lv.LogProb, value(-4, -0.01))
		}
	}
	for k := 1; k < order; k++ {
		lv := &tb.Levels[k-1]
		lv.LogBackoff = make([]float32, len(lv.LogProb))
		for i := range lv.LogBackoff {
			if rng.IntN(3) > 0 {
				lv.LogBackoff[i] = value(-2, 0.5)
			}
		}
	}
	tb.Info = tables.Info{Method: "random", ToolVersion: "test", Fallbacks: []string{"none"}}
	return tb
}

// streamTables writes t through a StreamWriter.
func streamTables(t *testing.T, tb *tables.Tables) []byte {
	return streamTablesTop(t, tb, false)
}

// streamTablesTop is streamTables that, with top, gives the top order's
// entries to the TopWriter, before the orders below (the writer must not
// depend on which comes first).
func streamTablesTop(t *testing.T, tb *tables.Tables, top bool) []byte {
	t.Helper()
	N := tb.Order()
	counts := make([]uint64, N)
	for k := 1; k <= N; k++ {
		counts[k-1] = uint64(tb.Len(k))
	}
	sw, err := NewStreamWriter(t.TempDir(), tb.Vocab, counts)
	if err != nil {
		t.Fatal(err)
	}
	defer sw.Close()
	starts := make([][]uint32, N)
	for k := 1; k < N; k++ {
		starts[k-1] = childStartValues(tb, k)
	}
	var tw *TopWriter
	if top {
		if tw, err = sw.Top(); err != nil {
			t.Fatal(err)
		}
	}
	ks := make([]int, 0, N)
	if top {
		ks = append(ks, N)
	}
	for k := 1; k <= N; k++ {
		if !top || k < N {
			ks = append(ks, k)
		}
	}
	for _, k := range ks {
		lv := &tb.Levels[k-1]
		for i := range lv.LogProb {
			g := tb.Gram(k, i)
			var rank uint32
			if k >= 3 {
				s, c := tb.Find(g[1:]), tb.Find(g[1:k-1])
				rank = uint32(s) - starts[k-3][c]
			}
			var bow float32
			var children uint64
			if k < N {
				bow = lv.LogBackoff[i]
				children = uint64(starts[k-1][i+1] - starts[k-1][i])
			}
			add := sw.Add
			if top && k == N {
				add = tw.Add
			}
			if err := add(g, rank, lv.LogProb[i], bow, children); err != nil {
				t.Fatal(err)
			}
		}
	}
	var out bytes.Buffer
	if err := sw.Finish(&out, tb.Info); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

// TestStreamWriterSameBytes: the streamed writer gives Write's bytes, on
// models small and large enough for several Elias-Fano samples and rank
// counters per order, also with the top order given to its TopWriter
// (first, before the orders below).
func TestStreamWriterSameBytes(t *testing.T) {
	forms := map[Encoding]int{}
	for _, c := range []struct {
		seed                    uint64
		sentences, vocab, order int
	}{{1, 3, 5, 2}, {2, 40, 20, 3}, {3, 2000, 300, 5}, {4, 5000, 2000, 4}, {5, 1, 3, 1}, {9, 3000, 15, 4}} {
		tb := closedTables(c.seed, c.sentences, c.vocab, c.order)
		if err := tb.Check(); err != nil {
			t.Fatal(err)
		}
		want := mustMarshal(t, tb)
		got := streamTables(t, tb)
		if !bytes.Equal(got, want) {
			t.Errorf("seed %d (order %d, %d entries at the top): streamed model (%d bytes) differs from Write's (%d bytes)",
				c.seed, c.order, tb.Len(c.order), len(got), len(want))
		}
		if c.order >= 2 {
			if topFirst := streamTablesTop(t, tb, true); !bytes.Equal(topFirst, want) {
				t.Errorf("seed %d (order %d): streamed model with the top order written apart (%d bytes) differs from Write's (%d bytes)",
					c.seed, c.order, len(topFirst), len(want))
			}
		}
		m := mustOpen(t, got)
		if err := m.Verify(); err != nil {
			t.Errorf("seed %d: %v", c.seed, err)
		}
		for _, s := range m.Sections() {
			if s.Kind == KindLastWords {
				forms[s.Encoding]++
			}
		}
	}
	// The cases exercise one sequence and coded lists, of word ids and of
	// ranks.
	for _, enc := range []Encoding{EliasFano, EliasFanoRanks, CodedListIDs, CodedListRanks} {
		if forms[enc] == 0 {
			t.Errorf("no case stores its keys as %v (forms written: %v)", enc, forms)
		}
	}
}

// TestStreamWriterRefuses: entries out of order, a wrong number of them,
// NaN values and children at the top order are errors, not files.
func TestStreamWriterRefuses(t *testing.T) {
	tb := closedTables(9, 30, 10, 2)
	counts := []uint64{uint64(tb.Len(1)), uint64(tb.Len(2))}
	try := func(mut func(k, i int, g []uint32, p *float32, children *uint64) []uint32) error {
		sw, err := NewStreamWriter(t.TempDir(), tb.Vocab, counts)
		if err != nil {
			t.Fatal(err)
		}
		defer sw.Close()
		starts := childStartValues(tb, 1)
		for k := 1; k <= 2; k++ {
			for i := range tb.Levels[k-1].LogProb {
				g := slices.Clone(tb.Gram(k, i))
				p := tb.Levels[k-1].LogProb[i]
				var bow float32
				var ch uint64
				if k == 1 {
					bow = tb.Levels[0].LogBackoff[i]
					ch = uint64(starts[i+1] - starts[i])
				}
				g = mut(k, i, g, &p, &ch)
				if g == nil {
					continue
				}
				if err := sw.Add(g, 0, p, bow, ch); err != nil {
					return err
				}
			}
		}
		return sw.Finish(&bytes.Buffer{}, tb.Info)
	}
	if err := try(func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 { return g }); err != nil {
		t.Fatalf("unchanged entries refused: %v", err)
	}
	cases := map[string]func(k, i int, g []uint32, p *float32, ch *uint64) []uint32{
		"swapped": func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 {
			if k == 2 && i == 1 {
				return tb.Gram(2, 0)
			}
			return g
		},
		"missing": func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 {
			if k == 2 && i == 3 {
				return nil
			}
			return g
		},
		"nan": func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 {
			if k == 2 && i == 2 {
				*p = float32(math.NaN())
			}
			return g
		},
		"children at the top": func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 {
			if k == 2 && i == 0 {
				*ch = 1
			}
			return g
		},
		"children miscounted": func(k, i int, g []uint32, p *float32, ch *uint64) []uint32 {
			if k == 1 && *ch > 0 {
				*ch++
			}
			return g
		},
	}
	for name, mut := range cases {
		if err := try(mut); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}

// TestTopWriterRefuses: with the top order given apart (Top), each writer
// refuses the other's entries, Finish refuses a top order left short, and
// Top is refused once entries were added.
func TestTopWriterRefuses(t *testing.T) {
	tb := closedTables(9, 30, 10, 2)
	counts := []uint64{uint64(tb.Len(1)), uint64(tb.Len(2))}
	starts := childStartValues(tb, 1)
	// write gives unigram i to below and bigram i to top, for the first
	// bigrams of them (all: -1), then finishes.
	write := func(below, top func(sw *StreamWriter, tw *TopWriter) func([]uint32, uint32, float32, float32, uint64) error, bigrams int) error {
		sw, err := NewStreamWriter(t.TempDir(), tb.Vocab, counts)
		if err != nil {
			t.Fatal(err)
		}
		defer sw.Close()
		tw, err := sw.Top()
		if err != nil {
			t.Fatal(err)
		}
		for i := range tb.Levels[0].LogProb {
			if err := below(sw, tw)(tb.Gram(1, i), 0, tb.Levels[0].LogProb[i], tb.Levels[0].LogBackoff[i], uint64(starts[i+1]-starts[i])); err != nil {
				return err
			}
		}
		for i := range tb.Levels[1].LogProb {
			if i == bigrams {
				break
			}
			if err := top(sw, tw)(tb.Gram(2, i), 0, tb.Levels[1].LogProb[i], 0, 0); err != nil {
				return err
			}
		}
		return sw.Finish(&bytes.Buffer{}, tb.Info)
	}
	main := func(sw *StreamWriter, _ *TopWriter) func([]uint32, uint32, float32, float32, uint64) error {
		return sw.Add
	}
	apart := func(_ *StreamWriter, tw *TopWriter) func([]uint32, uint32, float32, float32, uint64) error {
		return tw.Add
	}
	if err := write(main, apart, -1); err != nil {
		t.Fatalf("entries given as asked refused: %v", err)
	}
	if err := write(main, main, -1); err == nil {
		t.Error("the top order given to the writer of the orders below: accepted")
	}
	if err := write(apart, apart, -1); err == nil {
		t.Error("unigrams given to the top-order writer: accepted")
	}
	if err := write(main, apart, tb.Len(2)-1); err == nil {
		t.Error("top order one entry short: finished")
	}
	sw, err := NewStreamWriter(t.TempDir(), tb.Vocab, counts)
	if err != nil {
		t.Fatal(err)
	}
	defer sw.Close()
	if err := sw.Add(tb.Gram(1, 0), 0, tb.Levels[0].LogProb[0], tb.Levels[0].LogBackoff[0], uint64(starts[1]-starts[0])); err != nil {
		t.Fatal(err)
	}
	if _, err := sw.Top(); err == nil {
		t.Error("Top after an Add: accepted")
	}
}

// TestStreamWriterWritesEveryKeysForm: the stream writer, made to store
// every order's last words in key lists or in coded key lists, writes the
// bytes MarshalKeyLists and MarshalCodedLists write. The writer's own
// choice rarely picks key lists now that coded lists exist (they cost
// the same or less on every case of TestStreamWriterSameBytes), so
// without this the stream writer's key-list path would go untested.
func TestStreamWriterWritesEveryKeysForm(t *testing.T) {
	defer func(f func(one, lists, coded int64) int) { streamKeysForm = f }(streamKeysForm)
	for _, c := range []struct {
		name  string
		form  int
		want  Encoding
		write func(*tables.Tables) ([]byte, error)
	}{
		{"key lists", formLists, ListRanks, MarshalKeyLists},
		{"coded key lists", formCoded, CodedListRanks, MarshalCodedLists},
	} {
		streamKeysForm = func(int64, int64, int64) int { return c.form }
		for _, seed := range []uint64{2, 3, 4} {
			tb := closedTables(seed, 500*int(seed), 50*int(seed), int(seed)+1)
			want, err := c.write(tb)
			if err != nil {
				t.Fatal(err)
			}
			got := streamTables(t, tb)
			if !bytes.Equal(got, want) {
				t.Errorf("%s, seed %d: streamed model (%d bytes) differs from the forced writer's (%d bytes)", c.name, seed, len(got), len(want))
			}
			m := mustOpen(t, got)
			if err := m.Verify(); err != nil {
				t.Errorf("%s, seed %d: %v", c.name, seed, err)
			}
			for _, s := range m.Sections() {
				if s.Kind == KindLastWords && s.Order >= 3 && s.Encoding != c.want {
					t.Errorf("%s, seed %d: order %d stored as %v", c.name, seed, s.Order, s.Encoding)
				}
			}
		}
	}
}
