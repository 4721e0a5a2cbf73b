package vocab_test

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/compile/vocab"
)

func TestReadRefusesBadListsWithFileAndLine(t *testing.T) {
	for _, tc := range []struct{ list, want string }{
		{"a\nb\na\n", `words.txt:3: "a" listed twice (first on line 1)`},
		{"a\n\nb\n", "words.txt:2: empty line (one word per line)"},
		{"a\n  \t \n", "words.txt:2: empty line"},
		{"a\nturn on\n", "words.txt:2: 2 words on one line"},
		{"a\ncaf\xe9\n", "words.txt:2: invalid UTF-8"},
		{"</s>\n</s>\n", `words.txt:2: "</s>" listed twice`},
		{"", "words.txt: no words in the word list"},
	} {
		_, err := vocab.Read("words.txt", strings.NewReader(tc.list))
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("list %q: error %v, want %q", tc.list, err, tc.want)
		}
	}
}

func TestReadAndMap(t *testing.T) {
	l, err := vocab.Read("w", strings.NewReader("zebra\r\n apple \n<unk>\n<s>\n"))
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff([]string{"apple", "zebra"}, l.Words()); diff != "" {
		t.Errorf("words (-want +got):\n%s", diff)
	}
	for in, want := range map[string]string{
		"apple": "apple", "zebra": "zebra", "pear": "<unk>", "<unk>": "<unk>",
		"<s>": "<s>", "</s>": "</s>", "Apple": "<unk>",
	} {
		if got := l.Map(in); got != want {
			t.Errorf("Map(%q) = %q, want %q", in, got, want)
		}
	}
}

func mustList(t testing.TB, words ...string) *vocab.List {
	t.Helper()
	l, err := vocab.New(words)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

func countLines(t testing.TB, order int, l *vocab.List, lines ...string) *counts.Counts {
	t.Helper()
	c, err := counts.NewCounter(order)
	if err != nil {
		t.Fatal(err)
	}
	if l != nil {
		c.UseVocabulary(l)
	}
	if err := c.AddText("t.txt", strings.NewReader(strings.Join(lines, "\n"))); err != nil {
		t.Fatal(err)
	}
	return c.Counts(1)
}

func write(c *counts.Counts) string {
	var b bytes.Buffer
	c.WriteTo(&b)
	return b.String()
}

// The mapping of the estimation notes ("A fixed vocabulary"): outside words
// (a literal <unk> included) become <unk>, equal n-grams are summed, listed
// words without counts join the vocabulary with count 0. Worked by hand.
func TestCountingMapsOutsideWordsAndMerges(t *testing.T) {
	l := mustList(t, "a", "b", "d")
	c := countLines(t, 2, l, "a b c", "a x", "a <unk>")
	want := strings.Join([]string{
		"3\t</s>", "3\t<unk>", "3\ta", "1\tb",
		"3\t<s> a", "3\t<unk> </s>", "2\ta <unk>", "1\ta b", "1\tb <unk>",
	}, "\n") + "\n"
	if diff := cmp.Diff(want, write(c)); diff != "" {
		t.Errorf("counts (-want +got):\n%s", diff)
	}
	if diff := cmp.Diff([]string{"</s>", "<s>", "<unk>", "a", "b", "d"}, c.Vocab); diff != "" {
		t.Errorf("vocabulary (-want +got):\n%s", diff)
	}
}

func TestCountingWithAListStillRefusesSentenceMarkers(t *testing.T) {
	for _, text := range []string{"a b\na <s> b\n", "a b\na </s>\n"} {
		c, _ := counts.NewCounter(2)
		c.UseVocabulary(mustList(t, "a"))
		err := c.AddText("t.txt", strings.NewReader(text))
		if err == nil || !strings.Contains(err.Error(), "t.txt:2: marker") {
			t.Errorf("%q: error %v, want t.txt:2: marker ...", text, err)
		}
	}
}

// Mapping while counting and mapping the finished counts give the same
// counts (so count --vocabulary then compile --vocabulary equals count then
// compile --vocabulary), on State of the Union text (CC0) with a list of
// its frequent words plus words it never uses.
func TestMappingWhileCountingEqualsMappingCounts(t *testing.T) {
	train := sotuTrain(t, 400)
	l := frequentWords(t, train, 300, "zyzzyva", "quokka")
	mapped := countLines(t, 3, l, train...)
	later := countLines(t, 3, nil, train...).MapVocabulary(l)
	if diff := cmp.Diff(later, mapped); diff != "" {
		t.Errorf("counts differ (-mapped later +mapped while counting):\n%s", diff)
	}
}

func sotuTrain(t testing.TB, n int) []string {
	t.Helper()
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	train, _ := corpus.Split(all, n)
	return train
}

// frequentWords lists the top words of the text plus extra unseen words.
func frequentWords(t testing.TB, lines []string, top int, extra ...string) *vocab.List {
	c := countLines(t, 1, nil, lines...)
	type wc struct {
		w string
		n uint64
	}
	var all []wc
	for id, n := range c.Levels[0].Counts {
		if w := c.Vocab[id]; !strings.HasPrefix(w, "<") || len(w) == 1 {
			all = append(all, wc{w, n})
		}
	}
	// Stable selection: by count, then by word.
	for i := 1; i < len(all); i++ {
		for j := i; j > 0 && (all[j].n > all[j-1].n || all[j].n == all[j-1].n && all[j].w < all[j-1].w); j-- {
			all[j], all[j-1] = all[j-1], all[j]
		}
	}
	var words []string
	for _, x := range all[:top] {
		words = append(words, x.w)
	}
	return mustList(t, append(words, extra...)...)
}

// A hand-computed case, absolute discounting with D = 0.5 (Ney, Essen &
// Kneser 1994) over the mapped counts of "a b c" and "a x" with the list
// {a, b, d}: V = {a, b, d, </s>, <unk>}, unigram counts a 2, b 1, <unk> 2,
// </s> 2 (total 7), d 0.
//
//	P(a) = P(<unk>) = P(</s>) = 1.5/7, P(b) = 0.5/7
//	bow() = (2/7) / (1 - 4/5) = 10/7, so P(d) = bow()/|V| = 2/7
//	context a: stored P(b|a) = P(<unk>|a) = 0.5/2,
//	bow(a) = 0.5 / (1 - 1/14 - 3/14) = 0.7, P(d|a) = 0.7 * 2/7 = 0.2
func TestHandComputedAbsoluteWithAList(t *testing.T) {
	c := countLines(t, 2, mustList(t, "a", "b", "d"), "a b c", "a x")
	m, _, err := estimate.Estimate(c, estimate.Options{Method: estimate.Absolute, Order: 2, Discount: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		words []string
		want  float64
	}{
		{[]string{"a"}, 1.5 / 7}, {[]string{"<unk>"}, 1.5 / 7}, {[]string{"</s>"}, 1.5 / 7},
		{[]string{"b"}, 0.5 / 7}, {[]string{"d"}, 2.0 / 7},
		{[]string{"a", "b"}, 0.25}, {[]string{"a", "<unk>"}, 0.25},
		{[]string{"a", "d"}, 0.2}, {[]string{"a", "a"}, 0.7 * 1.5 / 7},
	} {
		g := ids(t, m, tc.words)
		if got := math.Pow(10, m.LogProb(g)); math.Abs(got-tc.want) > 1e-6 {
			t.Errorf("P(%v) = %.7f, want %.7f", tc.words, got, tc.want)
		}
	}
}

func ids(t testing.TB, m *tables.Tables, words []string) []uint32 {
	var g []uint32
	for _, w := range words {
		id, ok := m.ID(w)
		if !ok {
			t.Fatalf("%q not in the vocabulary", w)
		}
		g = append(g, id)
	}
	return g
}

// Law of probability: with a fixed list, every context of every method sums
// to one over the new V (listed words never seen included), and V is exactly
// the list plus </s> and <unk> (and the context word <s>). State of the
// Union text (CC0).
func TestEveryMethodNormalisesOverTheListedVocabulary(t *testing.T) {
	train := sotuTrain(t, 300)
	l := frequentWords(t, train, 200, "zyzzyva", "quokka", "<unk>")
	c := countLines(t, 3, l, train...)
	for _, method := range estimate.Methods {
		m, _, err := estimate.Estimate(c, estimate.Options{Method: method, Order: 3})
		if err != nil {
			t.Fatal(err)
		}
		if len(m.Vocab) != l.Len()+3 {
			t.Errorf("%s: |vocabulary| = %d, want %d listed + 3 markers", method, len(m.Vocab), l.Len())
		}
		for _, w := range l.Words() {
			if _, ok := m.ID(w); !ok {
				t.Errorf("%s: listed %q is not in the model", method, w)
			}
		}
		q := ids(t, m, []string{"quokka"})
		if p := m.LogProb(q); math.IsInf(p, -1) || p >= 0 {
			t.Errorf("%s: unseen listed word has log10 P = %v", method, p)
		}
		n := 0
		m.Sums(func(s tables.ContextSum) {
			n++
			if math.Abs(s.Sum-1) > 1e-5 {
				t.Errorf("%s: context %q sums to %.9f", method, m.Words(s.Context), s.Sum)
			}
		})
		if n < 100 {
			t.Errorf("%s: only %d contexts checked", method, n)
		}
	}
}
