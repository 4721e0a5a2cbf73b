package estimate

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/tables"
)

func count(t testing.TB, order int, sentences []string) *counts.Counts {
	t.Helper()
	c, err := counts.NewCounter(order)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range sentences {
		c.AddSentence(strings.Fields(s))
	}
	return c.Counts(1)
}

func build(t testing.TB, order int, sentences []string, opt Options) *tables.Tables {
	t.Helper()
	return estimate(t, count(t, order, sentences), order, opt)
}

func estimate(t testing.TB, c *counts.Counts, order int, opt Options) *tables.Tables {
	t.Helper()
	opt.Order = order
	m, _, err := Estimate(c, opt)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Check(); err != nil {
		t.Fatal(err)
	}
	return m
}

func ids(t testing.TB, m *tables.Tables, words string) []uint32 {
	var g []uint32
	for _, w := range strings.Fields(words) {
		id, ok := m.ID(w)
		if !ok {
			t.Fatalf("%q not in vocabulary", w)
		}
		g = append(g, id)
	}
	return g
}

func p(t testing.TB, m *tables.Tables, words string) float64 {
	return math.Pow(10, m.LogProb(ids(t, m, words)))
}

// Good-Turing re-estimates r* = (r+1) N_{r+1} / N_r on the AP-newswire bigram
// count-of-counts of Church & Gale (1991), as reproduced in Jurafsky & Martin,
// "Speech and Language Processing", n-gram chapter. Both the counts and the
// expected r* are recalled from memory, not copied from the book.
func TestGoodTuringChurchGale(t *testing.T) {
	n := []float64{0, 2018046, 449721, 188933, 105668, 68379, 48190}
	want := []float64{0, 0.446, 1.26, 2.24, 3.24, 4.22}
	got := GoodTuring(n)
	for r := 1; r <= 5; r++ {
		if math.Abs(got[r]-want[r]) > 0.01 {
			t.Errorf("r*(%d) = %.4f, want about %.3f", r, got[r], want[r])
		}
	}
}

// Modified Kneser-Ney discounts, Chen & Goodman (1998) section 3:
// Y = n1/(n1+2n2), D1 = 1-2Y n2/n1, D2 = 2-3Y n3/n2, D3+ = 3-4Y n4/n3.
// Computed by hand for n1..n4 = 10, 5, 3, 2: Y = 0.5, D1 = 0.5, D2 = 1.1,
// D3+ = 3 - 4/3 = 1.6667.
func TestKneserNeyDiscountsByHand(t *testing.T) {
	Y, D1, D2, D3, why := KneserNeyDiscounts([]float64{0, 10, 5, 3, 2})
	want := []float64{0.5, 0.5, 1.1, 5.0 / 3}
	for i, got := range []float64{Y, D1, D2, D3} {
		if math.Abs(got-want[i]) > 1e-12 {
			t.Errorf("discount %d = %v, want %v", i, got, want[i])
		}
	}
	if why != "" {
		t.Errorf("unexpected fallback %q", why)
	}
	// Hand-computed corner: n1..n4 = 4, 1, 4, 1 gives D2 = 2 - 3(2/3)(4) < 0,
	// so the rule replaces all three by Y = 4/6.
	Y, D1, D2, D3, why = KneserNeyDiscounts([]float64{0, 4, 1, 4, 1})
	if why == "" || D1 != Y || D2 != Y || D3 != Y || math.Abs(Y-2.0/3) > 1e-12 {
		t.Errorf("fallback not applied: Y=%v D=%v,%v,%v why=%q", Y, D1, D2, D3, why)
	}
}

// Absolute discounting with D = 0.5 (a common rule of thumb, no source) on a
// small example of our own: the left-over mass of a context h is
// D |A(h)| / c(h), shared among unseen words in proportion to the lower order.
func TestAbsoluteLeftOverMass(t *testing.T) {
	text := []string{"a b", "a b", "a c", "b c", "c a b", "b"}
	m := build(t, 2, text, Options{Method: Absolute, Discount: 0.5})
	// Successors of "a": b (3), c (1); c(a) = 4, |A(a)| = 2.
	seen := p(t, m, "a b") + p(t, m, "a c")
	if got, want := 1-seen, 0.5*2/4; math.Abs(got-want) > 1e-6 {
		t.Errorf("left-over mass of a = %v, want D|A|/c = %v", got, want)
	}
	if got, want := p(t, m, "a b"), (3-0.5)/4; math.Abs(got-want) > 1e-6 {
		t.Errorf("P(b|a) = %v, want %v", got, want)
	}
	// Unseen successors of "a": a, </s>, <unk>. Their share of the left-over
	// mass is proportional to their unigram probabilities.
	unseen := []string{"a", "</s>", "<unk>"}
	var lower float64
	for _, w := range unseen {
		lower += p(t, m, w)
	}
	for _, w := range unseen {
		got := p(t, m, "a "+w)
		want := (1 - seen) * p(t, m, w) / lower
		if math.Abs(got-want) > 1e-6 {
			t.Errorf("P(%s|a) = %v, want %v", w, got, want)
		}
	}
}

// Kneser-Ney with its unigrams in back-off form (Kneser & Ney 1995; the
// modified discounts of Chen & Goodman 1998 section 3), computed by hand on
// a small example of our own. Bigram counts: <s> a 3, a b 3, b </s> 4,
// <s> b 2, c </s> 2, and 1 each for <s> c, a c, b c, c a; so n1..n4 = 4,
// 2, 2, 1, Y = 1/2, D1 = 1 - 2(1/2)(2/4) = 1/2, D2 = 2 - 3(1/2)(2/2) = 1/2,
// D3+ = 3 - 4(1/2)(1/2) = 2. Unigram adjusted counts N1+(. w): a 2
// (<s>, c), b 2 (<s>, a), c 3 (<s>, a, b), </s> 2 (b, c), total 9; n1 = 0,
// so all three unigram discounts are Y = 1/2 (0.5 when n1 is 0).
func TestKneserNeyUnigramsBackedOffByHand(t *testing.T) {
	text := []string{"a b", "a b", "a c", "b c", "c a b", "b"}
	m := build(t, 2, text, Options{Method: KneserNey, UnigramsBackedOff: true})
	// Context a: b 3 (D3+), c 1 (D1), c(a) = 4, gamma(a) = (2 + 1/2)/4.
	gammaA := 2.5 / 4
	checks := []struct {
		words string
		want  float64
	}{
		{"b", (2 - 0.5) / 9.0},
		{"c", (3 - 0.5) / 9.0},
		// The empty context's left-over mass, 4 (1/2) / 9, goes whole to
		// the one predictable word without a count.
		{"<unk>", 2 / 9.0},
		// Order 2 stays interpolated.
		{"a b", (3-2)/4.0 + gammaA*1.5/9},
		{"a c", (1-0.5)/4.0 + gammaA*2.5/9},
		{"a a", gammaA * 1.5 / 9},
	}
	for _, c := range checks {
		if got := p(t, m, c.words); math.Abs(got-c.want) > 1e-6 {
			t.Errorf("P(%s) = %.7f, want %.7f", c.words, got, c.want)
		}
	}
	// The interpolated form (the pinned one) spreads that mass over the
	// whole vocabulary instead: gamma/|V| each.
	if got := p(t, build(t, 2, text, Options{Method: KneserNey}), "<unk>"); math.Abs(got-2/9.0) < 0.1 {
		t.Errorf("interpolated P(<unk>) = %v, as the back-off form's", got)
	}
}

// Witten-Bell, interpolated form (Chen & Goodman 1998, 2.5), checked against
// the formula computed by hand on a small example of our own.
func TestWittenBellByHand(t *testing.T) {
	text := []string{"a b", "a b", "a c"}
	m := build(t, 2, text, Options{Method: WittenBell})
	// Unigram counts: a 3, b 2, c 1, </s> 3 (total 9, T = 4); |V| = 5
	// (a, b, c, </s>, <unk>).
	pb := (2 + 4.0/5) / (9 + 4)
	if got := p(t, m, "b"); math.Abs(got-pb) > 1e-6 {
		t.Errorf("P(b) = %v, want %v", got, pb)
	}
	// Context a: c(a) = 3, T(a) = 2.
	want := (2 + 2*pb) / (3 + 2)
	if got := p(t, m, "a b"); math.Abs(got-want) > 1e-6 {
		t.Errorf("P(b|a) = %v, want %v", got, want)
	}
	punk := (0 + 4.0/5) / 13
	if got, want := p(t, m, "a <unk>"), 2.0/5*punk; math.Abs(got-want) > 1e-7 {
		t.Errorf("P(<unk>|a) = %v, want %v", got, want)
	}
}

func sotu(t testing.TB, limit int) (train, heldout []string) {
	t.Helper()
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	return corpus.Split(all, limit)
}

// Law of probability: every conditional distribution sums to one. Checked
// for every stored context of models of the State of the Union text (CC0),
// all four methods, orders 2 to 5.
func TestEveryContextSumsToOne(t *testing.T) {
	limit := 6000
	if testing.Short() {
		limit = 1500
	}
	train, _ := sotu(t, limit)
	cnt := count(t, 5, train)
	variants := []Options{}
	for _, method := range Methods {
		variants = append(variants, Options{Method: method})
	}
	variants = append(variants, Options{Method: KneserNey, UnigramsBackedOff: true})
	for _, opt := range variants {
		method := opt.Method
		name := string(method)
		if opt.UnigramsBackedOff {
			name += "-unigrams-backed-off"
		}
		for order := 2; order <= 5; order++ {
			t.Run(fmt.Sprintf("%s/%d", name, order), func(t *testing.T) {
				opt.Order = order
				m, _, err := Estimate(cnt, opt)
				if err != nil {
					t.Fatal(err)
				}
				checked, worst := 0, 0.0
				m.Sums(func(s tables.ContextSum) {
					checked++
					if d := math.Abs(s.Sum - 1); d > worst || math.IsNaN(d) {
						worst = d
						if !(d <= 1e-5) {
							t.Errorf("context %q sums to %.9f", m.Words(s.Context), s.Sum)
						}
					}
				})
				if checked < 1000 {
					t.Errorf("only %d contexts checked", checked)
				}
			})
		}
	}
}

func perplexity(m *tables.Tables, sentences []string) float64 {
	var sum float64
	var n int
	unk, _ := m.ID(tables.Unknown)
	start, _ := m.ID(tables.SentenceStart)
	end, _ := m.ID(tables.SentenceEnd)
	for _, s := range sentences {
		g := []uint32{start}
		for _, w := range append(strings.Fields(s), tables.SentenceEnd) {
			id, ok := m.ID(w)
			if !ok || id == start {
				id = unk
			}
			if w == tables.SentenceEnd {
				id = end
			}
			g = append(g, id)
			sum += m.LogProb(g)
			n++
		}
	}
	return math.Pow(10, -sum/float64(n))
}

// Chen & Goodman (1998) conclude that interpolated modified Kneser-Ney beats
// Katz back-off on held-out text; checked on held-out State of the Union
// sentences at orders 3 to 5.
func TestKneserNeyBeatsKatzOnHeldOut(t *testing.T) {
	limit := 20000
	if testing.Short() {
		limit = 5000
	}
	train, heldout := sotu(t, limit)
	cnt := count(t, 5, train)
	for order := 3; order <= 5; order++ {
		kn := perplexity(estimate(t, cnt, order, Options{Method: KneserNey}), heldout)
		katz := perplexity(estimate(t, cnt, order, Options{Method: Katz}), heldout)
		t.Logf("order %d: kneser-ney %.2f, katz %.2f", order, kn, katz)
		if !(kn < katz) {
			t.Errorf("order %d: kneser-ney perplexity %.2f not below katz %.2f", order, kn, katz)
		}
	}
}
