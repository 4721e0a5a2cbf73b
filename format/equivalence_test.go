package format_test

import (
	"bytes"
	"math"
	"reflect"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/inspect"
	"ingot/quantize"
)

// equivalenceSentences is how many training sentences of the bundled corpus
// the equivalence test builds its 5-gram model from: about 240,000 n-grams,
// a few seconds of CI. BenchmarkEquivalence runs the same comparison on the
// whole corpus.
const equivalenceSentences = 2000

// TestVersion3AnswersAsVersion2 checks the promise of spec/FORMAT.md §8 that
// the layout is not the model: the same tables written as format version 2
// and version 3 answer every query alike, for a float and an 8-bit model of
// real text (the bundled State of the Union corpus, a 5-gram Kneser-Ney
// model). The queries: every word's id, every stored n-gram found (on a
// fresh model, whose version-3 Find reads the words as running text, and
// after a whole-trie walk has decoded the trie), its probability and
// back-off weight with their codebook indexes, its child range and last
// word, LogProb of its last word after the others; Next, the matched order
// and Explain at every word of held-out text, and the States they reach;
// the entries each order iterates, and inspect's dump.
func TestVersion3AnswersAsVersion2(t *testing.T) {
	train, held := sotuSplit(t)
	compareVersions(t, train[:equivalenceSentences], held[:equivalenceSentences/9])
}

// BenchmarkEquivalence is TestVersion3AnswersAsVersion2 on the 5-gram model
// of nine tenths of the bundled corpus (4.1 million n-grams), against the
// other tenth: go test ./format -run '^$' -bench Equivalence -benchtime 1x.
func BenchmarkEquivalence(b *testing.B) {
	train, held := sotuSplit(b)
	for b.Loop() {
		compareVersions(b, train, held)
	}
}

func sotuSplit(t testing.TB) (train, held []string) {
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	return corpus.Split(all, 0)
}

func compareVersions(t testing.TB, train, held []string) {
	tb := fixture.Estimate(t, train, 5, estimate.Options{Method: estimate.KneserNey})
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	for name, tb := range map[string]*tables.Tables{"float": tb, "8-bit": q} {
		open := func(v int) *format.Model {
			data, err := format.MarshalVersion(tb, v)
			if err != nil {
				t.Fatal(err)
			}
			m, err := format.FromBytes(data)
			if err != nil {
				t.Fatal(err)
			}
			if m.Version() != v && !(v == 2 && name == "float" && m.Version() == 1) {
				t.Fatalf("%s: asked for version %d, got %d", name, v, m.Version())
			}
			return m
		}
		m2, m3 := open(2), open(3)
		if name == "8-bit" {
			// Its widened back-off weights are stored tiered: the
			// comparisons below read them through the tiers.
			tiered := 0
			for _, s := range m3.Sections() {
				if s.Encoding == format.Tiered && s.Kind == format.KindBackoffs {
					tiered++
				}
			}
			if tiered == 0 {
				t.Error("8-bit: no back-off column of version 3 is tiered")
			}
		}
		if got := m3.Size(); got >= m2.Size() {
			t.Errorf("%s: version 3 is %d bytes, version 2 %d: the layouts did not differ", name, got, m2.Size())
		}
		if testing.Verbose() {
			n := 0
			for k := 1; k <= m2.Order(); k++ {
				n += m2.Count(k)
			}
			t.Logf("%s: %d n-grams, %d held-out sentences", name, n, len(held))
		}
		sameQueries(t, name, m2, m3, held)
	}
}

// sameQueries compares every query of m2 (version 2) and m3 (version 3).
func sameQueries(t testing.TB, name string, m2, m3 *format.Model, held []string) {
	fail := func(format string, args ...any) {
		t.Helper()
		t.Fatalf(name+": "+format, args...)
	}
	if m2.Order() != m3.Order() || m2.VocabSize() != m3.VocabSize() {
		fail("order %d/%d, vocabulary %d/%d", m2.Order(), m3.Order(), m2.VocabSize(), m3.VocabSize())
	}
	for id := range uint32(m2.VocabSize()) {
		w := m2.Word(id)
		if m3.Word(id) != w {
			fail("word %d is %q in version 2, %q in version 3", id, w, m3.Word(id))
		}
		if id3, ok := m3.ID(w); !ok || id3 != id {
			fail("ID(%q) = %d, %v in version 3; version 2 stores it as %d", w, id3, ok, id)
		}
	}
	for _, w := range []string{"", "zzzz-not-a-word", "The ", "\xff"} {
		id2, ok2 := m2.ID(w)
		id3, ok3 := m3.ID(w)
		if id2 != id3 || ok2 != ok3 {
			fail("ID(%q) = %d, %v in version 2, %d, %v in version 3", w, id2, ok2, id3, ok3)
		}
	}

	// Every stored n-gram, from version 2's entries.
	N := m2.Order()
	var grams [][]uint32
	for k := 1; k <= N; k++ {
		if m2.Count(k) != m3.Count(k) {
			fail("order %d: %d entries in version 2, %d in version 3", k, m2.Count(k), m3.Count(k))
		}
		it := m2.Entries(k)
		for it.Next() {
			grams = append(grams, append([]uint32(nil), it.Gram()...))
		}
		if err := it.Err(); err != nil {
			fail("%v", err)
		}
	}
	// Find on the fresh version-3 model first: the running-text walk.
	findAll := func(when string) {
		t.Helper()
		for _, g := range grams {
			i2, ok2 := m2.Find(g)
			i3, ok3 := m3.Find(g)
			if !ok2 || i2 != i3 || ok2 != ok3 {
				fail("Find(%v) %s: version 2 %d, %v; version 3 %d, %v", g, when, i2, ok2, i3, ok3)
			}
		}
	}
	findAll("on a fresh model")
	notStored(t, name, m2, m3, grams)

	// Now the whole-trie walks: entries and dump, which decode a version-3 trie.
	for k := 1; k <= N; k++ {
		i2, i3 := m2.Entries(k), m3.Entries(k)
		for i2.Next() {
			if !i3.Next() || i3.Index() != i2.Index() || !slicesEqual(i2.Gram(), i3.Gram()) {
				fail("order %d entry %d: version 2 iterates %v, version 3 %v", k, i2.Index(), i2.Gram(), i3.Gram())
			}
		}
		if i3.Next() || i2.Err() != nil || i3.Err() != nil {
			fail("order %d: version 3 iterates more entries, or an error: %v %v", k, i2.Err(), i3.Err())
		}
	}
	var d2, d3 bytes.Buffer
	n2, err2 := inspect.Dump(&d2, m2, inspect.Selection{})
	n3, err3 := inspect.Dump(&d3, m3, inspect.Selection{})
	if err2 != nil || err3 != nil || n2 != len(grams) || n3 != n2 || !bytes.Equal(d2.Bytes(), d3.Bytes()) {
		fail("inspect dump differs: %d entries (%v) in version 2, %d (%v) in version 3", n2, err2, n3, err3)
	}
	// Dumps under a prefix: each order's run of entries below a stored
	// n-gram, found through child ranges (in version 3 the first entries
	// of a run need not be contexts).
	prefixes := 0
	for i, g := range grams {
		if i%61 != 0 || len(g) == N {
			continue
		}
		sel := inspect.Selection{}
		for _, id := range g {
			sel.Prefix = append(sel.Prefix, m2.Word(id))
		}
		d2.Reset()
		d3.Reset()
		n2, err2 := inspect.Dump(&d2, m2, sel)
		n3, err3 := inspect.Dump(&d3, m3, sel)
		if err2 != nil || err3 != nil || n2 < 1 || n3 != n2 || !bytes.Equal(d2.Bytes(), d3.Bytes()) {
			fail("inspect dump under %q differs: %d entries (%v) in version 2, %d (%v) in version 3", sel.Prefix, n2, err2, n3, err3)
		}
		prefixes++
	}
	if prefixes == 0 {
		fail("no prefix dumps compared")
	}
	findAll("after the trie was decoded")

	for _, g := range grams {
		k := len(g)
		i, _ := m2.Find(g)
		if a, b := m2.LogProbAt(k, i), m3.LogProbAt(k, i); !sameFloat32(a, b) {
			fail("%v: stored log10 probability %v in version 2, %v in version 3", g, a, b)
		}
		if a, b := m2.LogBackoffAt(k, i), m3.LogBackoffAt(k, i); !sameFloat32(a, b) {
			fail("%v: stored log10 back-off %v in version 2, %v in version 3", g, a, b)
		}
		for _, backoff := range []bool{false, true} {
			j2, ok2 := m2.Index(k, i, backoff)
			j3, ok3 := m3.Index(k, i, backoff)
			// Version 3 stores no weight for an entry that is not a context;
			// its index is that of the codebook's +0.0 (the weight's value).
			if ok2 != ok3 || j2 != j3 && !(backoff && m2.Codebook(k, true)[j2] == m3.Codebook(k, true)[j3]) {
				fail("%v: codebook index (back-off %v) %d, %v in version 2, %d, %v in version 3", g, backoff, j2, ok2, j3, ok3)
			}
		}
		a2, b2 := m2.ChildRange(k, i)
		a3, b3 := m3.ChildRange(k, i)
		if a2 != a3 || b2 != b3 {
			fail("%v: children [%d, %d) in version 2, [%d, %d) in version 3", g, a2, b2, a3, b3)
		}
		if w2, w3 := m2.WordAt(k, i), m3.WordAt(k, i); w2 != w3 {
			fail("%v: last word %d in version 2, %d in version 3", g, w2, w3)
		}
		if a, b := m2.LogProb(g[:k-1], g[k-1]), m3.LogProb(g[:k-1], g[k-1]); !sameFloat(a, b) {
			fail("LogProb(%v) = %v in version 2, %v in version 3", g, a, b)
		}
	}
	for k := 1; k <= N; k++ {
		if !reflect.DeepEqual(m2.Codebook(k, false), m3.Codebook(k, false)) || !reflect.DeepEqual(m2.Codebook(k, true), m3.Codebook(k, true)) {
			fail("order %d: the codebooks differ", k)
		}
	}

	// Held-out text, word by word as a decoder scores it.
	s2, s3 := m2.StartState(), m3.StartState()
	var context []uint32
	words := 0
	for _, sentence := range held {
		ids := []uint32{}
		for _, w := range strings.Fields(sentence) {
			id, ok := m2.ID(w)
			if !ok {
				id = m2.UnknownID()
			}
			ids = append(ids, id)
		}
		ids = append(ids, m2.EndID())
		context = append(context[:0], m2.StartID())
		for _, w := range ids {
			ex2, ex3 := m2.Explain(context, w), m3.Explain(context, w)
			p2, k2 := m2.NextMatched(&s2, w)
			p3, k3 := m3.NextMatched(&s3, w)
			if !sameFloat(p2, p3) || k2 != k3 || s2 != s3 || !m3.SameFuture(s2, s3) {
				fail("word %d of held-out text: %v (order %d) in version 2, %v (order %d) in version 3", words, p2, k2, p3, k3)
			}
			if !reflect.DeepEqual(ex2, ex3) || !sameFloat(ex2.LogProb, p2) {
				fail("word %d of held-out text: Explain %+v in version 2, %+v in version 3", words, ex2, ex3)
			}
			context = append(context, w)
			words++
		}
		s2, s3 = m2.StartState(), m3.StartState()
	}
	if words == 0 {
		fail("no held-out words")
	}
}

// notStored checks that both versions refuse the same n-grams that are not
// stored: each stored n-gram with its last word replaced by the next id,
// and with a word outside the vocabulary.
func notStored(t testing.TB, name string, m2, m3 *format.Model, grams [][]uint32) {
	V := uint32(m2.VocabSize())
	g := make([]uint32, 0, tables.MaxOrder)
	for i, stored := range grams {
		if i%7 != 0 {
			continue
		}
		for _, last := range []uint32{(stored[len(stored)-1] + 1) % V, V, math.MaxUint32} {
			g = append(append(g[:0], stored[:len(stored)-1]...), last)
			i2, ok2 := m2.Find(g)
			i3, ok3 := m3.Find(g)
			if i2 != i3 || ok2 != ok3 {
				t.Fatalf("%s: Find(%v): version 2 %d, %v; version 3 %d, %v", name, g, i2, ok2, i3, ok3)
			}
		}
	}
}

func sameFloat(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

func sameFloat32(a, b float32) bool {
	return math.Float32bits(a) == math.Float32bits(b) || a != a && b != b
}

func slicesEqual(a, b []uint32) bool { return reflect.DeepEqual(a, b) }
