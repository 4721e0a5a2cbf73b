package interpolate

import (
	"ingot/compile/fixture"
	"math"
	"strings"
	"sync"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
	"ingot/verify"
)

// sotu is the bundled State of the Union text (CC0), in chronological order.
var sotu = sync.OnceValues(corpus.SOTU)

func sentences(t testing.TB) []string {
	t.Helper()
	all, err := sotu()
	if err != nil {
		t.Fatal(err)
	}
	return all
}

func build(t testing.TB, lines []string, order int, method estimate.Method) *tables.Tables {
	t.Helper()
	return fixture.Estimate(t, lines, order, estimate.Options{Method: method})
}

func domain(t testing.TB, order int) (general, dom *tables.Tables, fit, test [][]string) {
	domainOnce.Do(func() { domainModels = map[int][2]*tables.Tables{} })
	all := sentences(t)
	train, held := corpus.Split(all[len(all)-4000:], 0)
	ms, ok := domainModels[order]
	if !ok {
		ms = [2]*tables.Tables{build(t, all[:6000], order, estimate.KneserNey), build(t, train[:1500], order, estimate.KneserNey)}
		domainModels[order] = ms
	}
	return ms[0], ms[1], fixture.Tokens(held[:200]), fixture.Tokens(held[200:])
}

var (
	domainOnce   sync.Once
	domainModels map[int][2]*tables.Tables
)

func mustMix(t testing.TB, models ...*tables.Tables) *Mixture {
	t.Helper()
	m, err := New(models)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

func mustBuild(t testing.TB, m *Mixture, w ...float64) *tables.Tables {
	t.Helper()
	out, err := m.Build(w, nil)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// checkNormalised applies the law of probability to every context of t.
func checkNormalised(t *testing.T, what string, m *tables.Tables) {
	t.Helper()
	worst := 0.0
	m.Sums(func(s tables.ContextSum) { worst = max(worst, math.Abs(s.Sum-1)) })
	if worst > 1e-5 {
		t.Errorf("%s: a context sums to 1 %+.3g", what, worst)
	}
}

// Interpolating a model with itself gives back the same model: the mixture
// of equal distributions is that distribution, whatever the weights.
func TestSelfInterpolationIsTheIdentity(t *testing.T) {
	a := build(t, sentences(t)[:800], 3, estimate.KneserNey)
	out := mustBuild(t, mustMix(t, a, a), 0.3, 0.7)
	for k := 1; k <= a.Order(); k++ {
		if out.Len(k) != a.Len(k) {
			t.Fatalf("order %d: %d n-grams, want %d", k, out.Len(k), a.Len(k))
		}
		for i := 0; i < a.Len(k); i++ {
			if tables.Compare(out.Gram(k, i), a.Gram(k, i)) != 0 {
				t.Fatalf("order %d entry %d differs", k, i)
			}
			if d := math.Abs(float64(out.Levels[k-1].LogProb[i] - a.Levels[k-1].LogProb[i])); d > 1e-6 {
				t.Errorf("order %d %q: log10 %v, want %v", k, a.Words(a.Gram(k, i)), out.Levels[k-1].LogProb[i], a.Levels[k-1].LogProb[i])
			}
			if k < a.Order() {
				if d := math.Abs(float64(out.Levels[k-1].LogBackoff[i] - a.Levels[k-1].LogBackoff[i])); d > 1e-5 {
					t.Errorf("order %d %q: log10 bow %v, want %v", k, a.Words(a.Gram(k, i)), out.Levels[k-1].LogBackoff[i], a.Levels[k-1].LogBackoff[i])
				}
			}
		}
	}
}

// The written model stores the exact mixture on every stored n-gram,
// normalises in every context, and passes ingot verify.
func TestWrittenModelStoresTheMixtureAndVerifies(t *testing.T) {
	general, dom, _, _ := domain(t, 3)
	m := mustMix(t, general, dom)
	w := []float64{0.35, 0.65}
	out := mustBuild(t, m, w...)
	probs := make([]float64, 2)
	checked := 0
	for k := 1; k <= out.Order(); k++ {
		for i := 0; i < out.Len(k); i += 7 {
			g := out.Gram(k, i)
			if k == 1 && out.Vocab[g[0]] == tables.SentenceStart {
				continue
			}
			want := m.LogProbs(g, w, probs)
			if got := float64(out.Levels[k-1].LogProb[i]); math.Abs(got-want) > 1e-6 {
				t.Errorf("%q: stored %v, exact mixture %v", out.Words(g), got, want)
			}
			checked++
		}
	}
	if checked < 1000 {
		t.Errorf("only %d n-grams checked", checked)
	}
	checkNormalised(t, "mixture", out)
	data, err := format.Marshal(out)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := verify.Bytes(data, verify.Options{})
	if err != nil || !rep.OK() {
		t.Fatalf("verify: %v %v", err, rep.Err())
	}
}

// The union of the stored n-grams is written: nothing either input stores
// is missing, nothing else is added.
func TestUnionOfStoredNGrams(t *testing.T) {
	general, dom, _, _ := domain(t, 2)
	m := mustMix(t, general, dom)
	out := mustBuild(t, m, 0.5, 0.5)
	want := map[string]bool{}
	for _, in := range []*tables.Tables{general, dom} {
		for i := 0; i < in.Len(2); i++ {
			want[in.Words(in.Gram(2, i))] = true
		}
	}
	if out.Len(2) != len(want) {
		t.Errorf("%d bigrams written, union holds %d", out.Len(2), len(want))
	}
	for i := 0; i < out.Len(2); i++ {
		if !want[out.Words(out.Gram(2, i))] {
			t.Errorf("%q written but stored by neither input", out.Words(out.Gram(2, i)))
		}
	}
	if len(out.Vocab) != len(m.Vocab()) {
		t.Errorf("|V| = %d, want |U| = %d", len(out.Vocab), len(m.Vocab()))
	}
}

// The rule for vocabularies that differ (estimation notes): model i gives
// each word of U it does not know its <unk> probability divided by
// |K_i| + 1, <unk> keeps the same share, so each model still sums to one
// over U (law of probability). Hand-checked on unigram models.
func TestDifferentVocabulariesShareUnknownMass(t *testing.T) {
	a := build(t, []string{"a b", "a a"}, 1, estimate.WittenBell)
	b := build(t, []string{"b c d", "c"}, 1, estimate.WittenBell)
	m := mustMix(t, a, b)
	// U = </s> <s> <unk> a b c d; model a lacks c, d (|K| = 2); model b lacks a.
	if got := strings.Join(m.Vocab(), " "); got != "</s> <s> <unk> a b c d" {
		t.Fatalf("U = %q", got)
	}
	lp := func(t *tables.Tables, w string) float64 {
		id, _ := t.ID(w)
		return t.LogProb([]uint32{id})
	}
	out := make([]float64, 2)
	for _, tc := range []struct {
		word   string
		wantA  float64
		wantB  float64
		inBoth bool
	}{
		{"c", lp(a, "<unk>") - math.Log10(3), lp(b, "c"), false},
		{"d", lp(a, "<unk>") - math.Log10(3), lp(b, "d"), false},
		{"<unk>", lp(a, "<unk>") - math.Log10(3), lp(b, "<unk>") - math.Log10(2), false},
		{"a", lp(a, "a"), lp(b, "<unk>") - math.Log10(2), false},
		{"b", lp(a, "b"), lp(b, "b"), true},
	} {
		id, _ := m.id(tc.word)
		m.LogProbs([]uint32{id}, nil, out)
		if math.Abs(out[0]-tc.wantA) > 1e-6 || math.Abs(out[1]-tc.wantB) > 1e-6 {
			t.Errorf("%s: log10 P = %v, %v; want %v, %v", tc.word, out[0], out[1], tc.wantA, tc.wantB)
		}
	}
	for i := 0; i < 2; i++ {
		var sum float64
		for u, w := range m.Vocab() {
			if w == tables.SentenceStart {
				continue
			}
			m.LogProbs([]uint32{uint32(u)}, nil, out)
			sum += math.Pow(10, out[i])
		}
		if math.Abs(sum-1) > 1e-6 {
			t.Errorf("model %d sums to %v over U", i+1, sum)
		}
	}
}

// Models of different vocabularies and orders, one quantized and one
// pruned, interpolate into a model that normalises over U and verifies.
func TestQuantizedPrunedAndUnequalInputs(t *testing.T) {
	all := sentences(t)
	a := build(t, all[:1200], 3, estimate.KneserNey)
	q, _, err := quantize.Model(a, quantize.Options{Bits: 8, Trainer: quantize.EqualMass})
	if err != nil {
		t.Fatal(err)
	}
	data, err := format.Marshal(q)
	if err != nil {
		t.Fatal(err)
	}
	fm, err := format.FromBytes(data)
	if err != nil {
		t.Fatal(err)
	}
	qa, err := format.ToTables(fm) // read through the format's reader API
	if err != nil {
		t.Fatal(err)
	}
	b := build(t, all[len(all)-1500:], 4, estimate.Katz)
	keep := prune.Keep(b, prune.EntropyScores(b), 1e-6)
	pb := prune.Apply(b, keep)
	if pb.Len(4) >= b.Len(4) {
		t.Fatalf("pruning removed nothing")
	}
	m := mustMix(t, qa, pb)
	out := mustBuild(t, m, 0.4, 0.6)
	if out.Order() != 4 {
		t.Errorf("order %d, want 4", out.Order())
	}
	checkNormalised(t, "quantized + pruned", out)
	written, err := format.Marshal(out)
	if err != nil {
		t.Fatal(err)
	}
	rep, err := verify.Bytes(written, verify.Options{})
	if err != nil || !rep.OK() {
		t.Fatalf("verify: %v %v", err, rep.Err())
	}
}

// goldenSection maximises f on [lo, hi] (f unimodal), to within tol.
func goldenSection(f func(float64) float64, lo, hi, tol float64) float64 {
	r := (math.Sqrt(5) - 1) / 2
	a, b := lo, hi
	c, d := b-r*(b-a), a+r*(b-a)
	fc, fd := f(c), f(d)
	for b-a > tol {
		if fc > fd {
			b, d, fd = d, c, fc
			c = b - r*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + r*(b-a)
			fd = f(d)
		}
	}
	return (a + b) / 2
}

// EM's weights (Dempster, Laird & Rubin 1977) match a direct search of the
// held-out log-likelihood, which is concave in the weight of the first of
// two models; the written model's held-out perplexity is within 2% of the
// exact mixture's at the same weights (the targets). A mixture of a
// general model and a smaller model of the held-out text's own kind beats
// both (Jelinek & Mercer 1980: interpolating a detailed but sparse estimate
// with a general one lowers held-out perplexity below each).
func TestFitMatchesDirectSearchAndMixtureBeatsBoth(t *testing.T) {
	general, dom, fit, test := domain(t, 3)
	m := mustMix(t, general, dom)
	h := m.Score(fit)
	w, iters, err := h.Fit()
	if err != nil {
		t.Fatal(err)
	}
	if iters >= FitMaxIterations {
		t.Errorf("EM did not converge in %d steps", iters)
	}
	if math.Abs(w[0]+w[1]-1) > 1e-12 {
		t.Errorf("weights %v do not sum to 1", w)
	}
	best := goldenSection(func(a float64) float64 { return h.LogLikelihood([]float64{a, 1 - a}) }, 0, 1, 1e-7)
	if d := math.Abs(w[0] - best); d > 2e-3 {
		t.Errorf("EM weight %.6f, direct search %.6f (|d| = %.2g)", w[0], best, d)
	}
	t.Logf("EM %d steps: weights %.5f %.5f; direct search %.5f", iters, w[0], w[1], best)

	ht := m.Score(test)
	mix := ht.Perplexity(w)
	pg, pd := ht.Perplexity(Unit(2, 0)), ht.Perplexity(Unit(2, 1))
	t.Logf("held-out perplexity: general %.2f, domain %.2f, mixture %.2f", pg, pd, mix)
	if !(mix < pg && mix < pd) {
		t.Errorf("mixture %.2f does not beat general %.2f and domain %.2f", mix, pg, pd)
	}
	out := mustBuild(t, m, w...)
	written := mustMix(t, out).Score(test).Perplexity([]float64{1})
	t.Logf("written model %.2f (%.3f%% from the mixture)", written, 100*(written/mix-1))
	if math.Abs(written/mix-1) > 0.02 {
		t.Errorf("written model's perplexity %.3f is not within 2%% of the mixture's %.3f", written, mix)
	}
}

func TestCheckWeights(t *testing.T) {
	a := build(t, []string{"a b"}, 1, estimate.WittenBell)
	m := mustMix(t, a, a)
	for _, tc := range []struct {
		w    []float64
		want string
	}{
		{[]float64{0.5}, "1 weights for 2 models"},
		{[]float64{0, 1}, "weight 1 is 0"},
		{[]float64{0.5, 0.6}, "weights sum to 1.1"},
		{[]float64{math.NaN(), 1}, "weight 1 is NaN"},
	} {
		if err := m.CheckWeights(tc.w); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%v: error %v, want %q", tc.w, err, tc.want)
		}
	}
}

// The exact mixture of models of two disjoint halves of the bundled corpus
// (older and newer addresses; the newer half is the smaller, 0.68 against
// 1.12 million tokens) beats both on held-out text of the newer half, with
// weights fitted by EM on other held-out sentences of it (Dempster, Laird
// & Rubin 1977): Jelinek & Mercer
// (1980) interpolate a sparse but well-matched estimate with a broader one
// because the mixture predicts unseen text better than either.
func TestMixtureOfDisjointHalvesBeatsBoth(t *testing.T) {
	all := sentences(t)
	older, newer := all[:len(all)/2], all[len(all)/2:]
	train, held := corpus.Split(newer, 0)
	a := build(t, older, 2, estimate.KneserNey)
	b := build(t, train, 2, estimate.KneserNey)
	m := mustMix(t, a, b)
	// Held-out sentences alternate between fitting and testing, so both
	// span the newer half's years.
	var fit, test []string
	for i, s := range held {
		if i%2 == 0 {
			fit = append(fit, s)
		} else {
			test = append(test, s)
		}
	}
	w, _, err := m.Score(fixture.Tokens(fit)).Fit()
	if err != nil {
		t.Fatal(err)
	}
	h := m.Score(fixture.Tokens(test))
	mix, pa, pb := h.Perplexity(w), h.Perplexity(Unit(2, 0)), h.Perplexity(Unit(2, 1))
	t.Logf("weights %.4f %.4f; perplexity older half %.2f, newer half %.2f, mixture %.2f", w[0], w[1], pa, pb, mix)
	if !(mix < pa && mix < pb) {
		t.Errorf("mixture %.3f does not beat the older half's %.3f and the newer half's %.3f", mix, pa, pb)
	}
}
