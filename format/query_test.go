package format

import (
	"ingot/compile/fixture"
	"math"
	"math/rand/v2"
	"testing"

	"ingot/compile/tables"
)

// models lists the Tables every equivalence test runs on.
func models(t testing.TB) []struct {
	name string
	tb   *tables.Tables
} {
	bigram := handModel(t, 2, map[string]float64{
		"</s>": 0.3, "<unk>": 0.1, "a": 0.4, "b": 0.2,
		"<s> a": 0.7, "a b": 0.5, "b </s>": 0.6,
	})
	unigram := handModel(t, 1, map[string]float64{"</s>": 0.5, "<unk>": 0.25, "x": 0.25})
	return []struct {
		name string
		tb   *tables.Tables
	}{
		{"unigram", unigram},
		{"bigram", bigram},
		{"tiny trigram", tinyModel(t)},
		{"random order 4", fixture.RandomTables(1, 40, []int{150, 300, 400})},
		{"random order 5 small vocabulary", fixture.RandomTables(2, 8, []int{40, 80, 120, 160})},
		{"random order 10", fixture.RandomTables(3, 20, []int{60, 80, 100, 100, 100, 100, 100, 100, 100})},
	}
}

// TestLogProbMatchesTables compares every answer of the file reader with the
// in-memory reference rule, Tables.LogProb: for every stored n-gram, and for
// random contexts and words, unseen ones and ids outside the vocabulary
// included.
func TestLogProbMatchesTables(t *testing.T) {
	for _, c := range models(t) {
		t.Run(c.name, func(t *testing.T) {
			tb := c.tb
			m := mustOpen(t, mustMarshal(t, tb))
			check := func(context []uint32, w uint32) {
				t.Helper()
				g := append(append([]uint32{}, context...), w)
				want := tb.LogProb(g)
				if got := m.LogProb(context, w); !same(got, want) {
					t.Fatalf("LogProb(%s | %s) = %v, tables say %v", tb.Words([]uint32{w}), tb.Words(context), got, want)
				}
				ex := m.Explain(context, w)
				if !same(ex.LogProb, want) {
					t.Fatalf("Explain(%s | %s).LogProb = %v, tables say %v", tb.Words([]uint32{w}), tb.Words(context), ex.LogProb, want)
				}
				sum := ex.StoredLogProb
				for _, b := range ex.Backoffs {
					sum += b.LogBackoff
				}
				if ex.MatchedOrder > 0 && math.Abs(sum-ex.LogProb) > 1e-9 && !math.IsInf(sum, -1) {
					t.Fatalf("explanation parts sum to %v, not %v", sum, ex.LogProb)
				}
			}
			for k := 1; k <= tb.Order(); k++ {
				for i := 0; i < tb.Len(k); i++ {
					g := tb.Gram(k, i)
					check(g[:k-1], g[k-1])
				}
			}
			rng := rand.New(rand.NewPCG(7, 7))
			V := uint32(len(tb.Vocab))
			for range 3000 {
				context := make([]uint32, rng.IntN(tb.Order()+2))
				for i := range context {
					context[i] = rng.Uint32N(V + 2)
				}
				check(context, rng.Uint32N(V+2))
			}
		})
	}
}

// TestNextMatchesTables scores running text word by word with a State and
// compares each answer with Tables.LogProb over the whole history.
func TestNextMatchesTables(t *testing.T) {
	for _, c := range models(t) {
		t.Run(c.name, func(t *testing.T) {
			tb := c.tb
			m := mustOpen(t, mustMarshal(t, tb))
			rng := rand.New(rand.NewPCG(11, 3))
			V := uint32(len(tb.Vocab))
			for sentence := 0; sentence < 200; sentence++ {
				s := m.StartState()
				history := []uint32{m.StartID()}
				for range 1 + rng.IntN(15) {
					w := rng.Uint32N(V)
					if rng.IntN(4) == 0 {
						// Follow a stored continuation of the longest context.
						w = storedContinuation(rng, m, history, w)
					}
					got, order := m.NextMatched(&s, w)
					history = append(history, w)
					if want := tb.LogProb(history); !same(got, want) {
						t.Fatalf("sentence %d: Next(%s) after %s = %v, tables say %v", sentence, tb.Words([]uint32{w}), tb.Words(history[:len(history)-1]), got, want)
					}
					// The back-off rule uses the longest stored n-gram
					// ending in w, of at most the model's order.
					want := 0
					for k := min(len(history), tb.Order()); k >= 1; k-- {
						if tb.Find(history[len(history)-k:]) >= 0 {
							want = k
							break
						}
					}
					if order != want {
						t.Fatalf("sentence %d: %s after %s matched order %d, the longest stored n-gram has order %d", sentence, tb.Words([]uint32{w}), tb.Words(history[:len(history)-1]), order, want)
					}
					if want := min(len(history), tb.Order()-1); s.Len() != want {
						t.Fatalf("state keeps %d words, want %d", s.Len(), want)
					}
				}
			}
		})
	}
}

// storedContinuation returns the last word of a random stored extension of
// the longest stored suffix of history, or fallback.
func storedContinuation(rng *rand.Rand, m *Model, history []uint32, fallback uint32) uint32 {
	for j := min(len(history), m.Order()-1); j >= 1; j-- {
		if i, ok := m.Find(history[len(history)-j:]); ok {
			if a, b := m.ChildRange(j, i); a < b {
				return m.WordAt(j+1, a+rng.IntN(b-a))
			}
		}
	}
	return fallback
}

// TestDistributionsSumToOne checks a law of probability on the hand-built
// models read from their files: in every context, stored or not, the
// probabilities of all predictable words (every word but <s>) add up to 1.
func TestDistributionsSumToOne(t *testing.T) {
	for _, c := range models(t)[:3] {
		t.Run(c.name, func(t *testing.T) {
			m := mustOpen(t, mustMarshal(t, c.tb))
			contexts := [][]uint32{nil}
			for k := 1; k < m.Order(); k++ {
				it := m.Entries(k)
				for it.Next() {
					contexts = append(contexts, append([]uint32{}, it.Gram()...))
				}
			}
			contexts = append(contexts, []uint32{m.EndID(), m.EndID()}, []uint32{m.UnknownID()})
			for _, h := range contexts {
				sum := 0.0
				for w := uint32(0); w < uint32(m.VocabSize()); w++ {
					sum += math.Pow(10, m.LogProb(h, w))
				}
				if math.Abs(sum-1) > 1e-5 {
					t.Errorf("context %s: probabilities sum to %.7f", c.tb.Words(h), sum)
				}
			}
		})
	}
}

// TestWorkedExamples checks answers of the golden model worked out by hand
// from its stored probabilities and the back-off rule.
func TestWorkedExamples(t *testing.T) {
	m := mustOpen(t, mustMarshal(t, tinyModel(t)))
	tests := []struct {
		context []string
		word    string
		want    float64 // probability, not log
		how     string
	}{
		{[]string{"<s>", "the"}, "lamp", 0.5, "stored trigram"},
		{[]string{"<s>", "fog"}, "was", 0.4,
			"<s> fog is stored with no continuations (weight 1); fog was is stored"},
		{[]string{"<s>", "the"}, "horn", 0.1,
			"weight(<s> the) = (1-0.5-0.35)/(1-0.4-0.3) = 0.5, times P(horn|the) = 0.2"},
		{[]string{"the", "lamp"}, "beam", 0.01125,
			"weight(the lamp) = 0.3/0.5 = 0.6; weight(lamp) = (1-0.5-0.2)/(1-0.1-0.1) = 0.375; P(beam) = 0.05"},
		{[]string{"beam", "lit"}, "</s>", 0.7, "beam lit is not stored (weight 1); lit </s> is stored"},
		{[]string{"sounded"}, "fog", 0.4 / 0.85 * 0.1,
			"weight(sounded) = (1-0.6)/(1-0.15), times P(fog) = 0.1"},
	}
	for _, c := range tests {
		ids := make([]uint32, len(c.context))
		for i, w := range c.context {
			id, ok := m.ID(w)
			if !ok {
				t.Fatalf("%q not in vocabulary", w)
			}
			ids[i] = id
		}
		w, _ := m.ID(c.word)
		got := math.Pow(10, m.LogProb(ids, w))
		if math.Abs(got-c.want) > 1e-6 {
			t.Errorf("P(%s | %v) = %.7f, worked by hand %.7f (%s)", c.word, c.context, got, c.want, c.how)
		}
	}
}

// TestExplain checks the steps of one explanation of the golden model.
func TestExplain(t *testing.T) {
	m := mustOpen(t, mustMarshal(t, tinyModel(t)))
	id := func(w string) uint32 {
		i, ok := m.ID(w)
		if !ok {
			t.Fatalf("%q not in vocabulary", w)
		}
		return i
	}
	ex := m.Explain([]uint32{id("fog"), id("the"), id("lamp")}, id("beam"))
	if len(ex.Context) != 2 || ex.Context[0] != id("the") || ex.Context[1] != id("lamp") {
		t.Errorf("context %v, want the last two words", ex.Context)
	}
	if ex.MatchedOrder != 1 || math.Abs(ex.StoredLogProb-math.Log10(0.05)) > 1e-6 {
		t.Errorf("matched order %d value %v, want the unigram beam (log10 0.05)", ex.MatchedOrder, ex.StoredLogProb)
	}
	if len(ex.Backoffs) != 2 {
		t.Fatalf("%d back-off steps, want 2: %+v", len(ex.Backoffs), ex.Backoffs)
	}
	if got := ex.Backoffs[0]; len(got.Context) != 2 || math.Abs(got.LogBackoff-math.Log10(0.6)) > 1e-6 {
		t.Errorf("first step %+v, want weight 0.6 of 'the lamp'", got)
	}
	if got := ex.Backoffs[1]; len(got.Context) != 1 || got.Context[0] != id("lamp") || math.Abs(got.LogBackoff-math.Log10(0.375)) > 1e-6 {
		t.Errorf("second step %+v, want weight 0.375 of 'lamp'", got)
	}
	if out := m.Explain(nil, uint32(m.VocabSize()+5)); out.MatchedOrder != 0 || !math.IsInf(out.LogProb, -1) {
		t.Errorf("word outside the vocabulary explained as %+v", out)
	}
}

// TestVocabulary checks word/id lookups on the mapped word list.
func TestVocabulary(t *testing.T) {
	tb := tinyModel(t)
	m := mustOpen(t, mustMarshal(t, tb))
	if m.VocabSize() != len(tb.Vocab) {
		t.Fatalf("VocabSize %d, want %d", m.VocabSize(), len(tb.Vocab))
	}
	for id, w := range tb.Vocab {
		if got := m.Word(uint32(id)); got != w {
			t.Errorf("Word(%d) = %q, want %q", id, got, w)
		}
		if got, ok := m.ID(w); !ok || got != uint32(id) {
			t.Errorf("ID(%q) = %d, %v; want %d", w, got, ok, id)
		}
	}
	for _, w := range []string{"", "a", "zzz", "lam", "lampx", "<s", "anchor"} {
		if id, ok := m.ID(w); ok {
			t.Errorf("ID(%q) = %d, want not found", w, id)
		}
	}
	if m.Word(uint32(len(tb.Vocab))) != "" || m.Word(noNode) != "" {
		t.Error("Word outside the vocabulary is not empty")
	}
	for _, c := range []struct {
		got  uint32
		word string
	}{{m.StartID(), "<s>"}, {m.EndID(), "</s>"}, {m.UnknownID(), "<unk>"}} {
		if m.Word(c.got) != c.word {
			t.Errorf("marker id %d is %q, want %q", c.got, m.Word(c.got), c.word)
		}
	}
}

// TestNextAllocatesNothing guards the decoder path: scoring a word with a
// State must not allocate.
func TestNextAllocatesNothing(t *testing.T) {
	m := mustOpen(t, mustMarshal(t, tinyModel(t)))
	words := []uint32{9, 6, 10, 7, 0}
	allocs := testing.AllocsPerRun(100, func() {
		s := m.StartState()
		for _, w := range words {
			m.Next(&s, w)
		}
	})
	if allocs != 0 {
		t.Errorf("Next allocates %.1f times per sentence, want 0", allocs)
	}
}

// Two States that SameFuture calls alike give every continuation the same
// log10 and stay alike; equal States are always alike; and the pairs it
// finds include unequal States (different context lengths, or words no
// stored n-gram reaches), which is why decoders need it rather than ==.
func TestSameFuture(t *testing.T) {
	for _, c := range models(t) {
		t.Run(c.name, func(t *testing.T) {
			m := mustOpen(t, mustMarshal(t, c.tb))
			rng := rand.New(rand.NewPCG(5, 8))
			V := uint32(len(c.tb.Vocab))
			var states []State
			for range 60 {
				s := State{}
				if rng.IntN(2) == 0 {
					s = m.StartState()
				}
				for range rng.IntN(6) {
					m.Next(&s, rng.Uint32N(V))
					states = append(states, s)
				}
			}
			alikeButUnequal := 0
			for i := range states {
				for j := range states {
					a, b := states[i], states[j]
					same := m.SameFuture(a, b)
					if a == b && !same {
						t.Fatalf("equal States %+v not alike", a)
					}
					if !same {
						continue
					}
					if a != b {
						alikeButUnequal++
					}
					for range 3 {
						w := rng.Uint32N(V)
						la, lb := m.Next(&a, w), m.Next(&b, w)
						if la != lb && !(math.IsInf(la, -1) && math.IsInf(lb, -1)) {
							t.Fatalf("alike States give %d log10 %v and %v", w, la, lb)
						}
						if !m.SameFuture(a, b) {
							t.Fatalf("alike States differ after word %d", w)
						}
					}
				}
			}
			if c.tb.Order() > 2 && alikeButUnequal == 0 {
				t.Errorf("no pair of unequal States was alike; the test does not exercise SameFuture")
			}
		})
	}
}
