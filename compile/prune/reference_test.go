package prune_test

// A reference for count cutoffs and relative-entropy pruning, written from
// the estimation notes (ESTIMATORS.md: "The back-off form", "Pruning by
// relative entropy", after A. Stolcke (1998), "Entropy-based pruning of
// backoff language models") and nothing else. It holds the model in maps
// keyed by the n-grams' words, finds a context's successors by trying every
// word of the vocabulary, computes every probability by recursion over the
// back-off chain and every P(h) as a product of such probabilities, and
// counts the sentences itself for the cutoffs. It is slow on purpose and
// shares no code with package prune (nor with package estimate, which only
// provides the model both start from: its own agreement with a reference
// estimator is tested there).
//
// Both start from the stored model (float32 values), so the comparison is
// of the pruning and renormalising arithmetic, before float32 storage, to
// 1e-9; the weights of a lower order are used as stored (rounded to
// float32) when a higher order is renormalised, as in the file.

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/pipeline"
	"ingot/compile/prune"
	"ingot/compile/tables"
)

const (
	refStart = "<s>"
	refEnd   = "</s>"
)

func refKey(ws []string) string { return strings.Join(ws, " ") }

// refLM is a back-off model held as maps of linear values.
type refLM struct {
	N     int
	vocab []string            // every word, <s> included
	prob  map[string]float64  // stored n-gram -> P(w|h)
	bow   map[string]float64  // stored n-gram below order N -> its weight
	order map[string]int      // stored n-gram -> its order
	succ  map[string][]string // context -> A(h), see successors
}

// newRefLM copies the stored model (the only thing taken from the tables).
func newRefLM(t *tables.Tables) *refLM {
	m := &refLM{N: t.Order(), vocab: t.Vocab, prob: map[string]float64{}, bow: map[string]float64{}, order: map[string]int{}, succ: map[string][]string{}}
	for k := 1; k <= t.Order(); k++ {
		lv := &t.Levels[k-1]
		for i := range lv.LogProb {
			ws := make([]string, k)
			for j, id := range lv.Words[k*i : k*i+k] {
				ws[j] = t.Vocab[id]
			}
			g := refKey(ws)
			m.prob[g] = math.Pow(10, float64(lv.LogProb[i]))
			m.order[g] = k
			if k < t.Order() {
				m.bow[g] = math.Pow(10, float64(lv.LogBackoff[i]))
			}
		}
	}
	return m
}

func join(h []string, w string) []string { return append(append([]string{}, h...), w) }

// P is the back-off rule: the stored value, else bow(h) P(w|h'), with
// weight 1 for a context that is not stored.
func (m *refLM) P(h []string, w string) float64 {
	if len(h) > m.N-1 {
		h = h[len(h)-(m.N-1):]
	}
	if p, ok := m.prob[refKey(join(h, w))]; ok {
		return p
	}
	if len(h) == 0 {
		return 0
	}
	b, ok := m.bow[refKey(h)]
	if !ok {
		b = 1
	}
	return b * m.P(h[1:], w)
}

// successors returns A(h), trying every word of the vocabulary (once per
// context until the model changes).
func (m *refLM) successors(h []string) []string {
	hk := refKey(h)
	if a, ok := m.succ[hk]; ok {
		return a
	}
	a := []string{}
	for _, w := range m.vocab {
		if m.stored(hk, w) {
			a = append(a, w)
		}
	}
	m.succ[hk] = a
	return a
}

// stored reports whether the n-gram of the words hk (joined) then w is
// stored.
func (m *refLM) stored(hk, w string) bool {
	if hk == "" {
		_, ok := m.prob[w]
		return ok
	}
	_, ok := m.prob[hk+" "+w]
	return ok
}

// grams returns the stored n-grams of order k, sorted (for a fixed order
// of work; the results do not depend on it).
func (m *refLM) grams(k int) [][]string {
	var out [][]string
	for g, o := range m.order {
		if o == k {
			out = append(out, strings.Split(g, " "))
		}
	}
	sort.Slice(out, func(i, j int) bool { return refKey(out[i]) < refKey(out[j]) })
	return out
}

// renormalize recomputes every weight with the back-off formula, lowest
// order first, each order from the lower orders' weights as stored
// (float32); a context without successors, or whose successors take all
// the lower-order mass (>= 1 - 1e-12), gets weight 1. It returns the
// weights before rounding.
func (m *refLM) renormalize() map[string]float64 {
	exact := map[string]float64{}
	for k := 1; k < m.N; k++ {
		for _, h := range m.grams(k) {
			var stored, lower float64
			a := m.successors(h)
			for _, w := range a {
				stored += m.prob[refKey(join(h, w))]
				lower += m.P(h[1:], w)
			}
			b := 1.0
			if len(a) > 0 && lower < 1-1e-12 {
				b = (1 - stored) / (1 - lower)
			}
			exact[refKey(h)] = b
		}
		for _, h := range m.grams(k) {
			m.bow[refKey(h)] = math.Pow(10, float64(float32(math.Log10(exact[refKey(h)]))))
		}
	}
	return exact
}

// contextProb is P(h) = P(h_1) P(h_2|h_1) ... with P(</s>) for a leading
// <s>, each factor the model's full back-off probability.
func (m *refLM) contextProb(h []string) float64 {
	p := 1.0
	for j := range h {
		if j == 0 && h[0] == refStart {
			p *= m.P(nil, refEnd)
			continue
		}
		p *= m.P(h[:j], h[j])
	}
	return p
}

// entropy returns Stolcke's D(h, w) for every stored n-gram of order >= 2
// (natural logarithms).
func (m *refLM) entropy() map[string]float64 {
	d := map[string]float64{}
	for k := 2; k <= m.N; k++ {
		var last string
		var sumP, sumL float64
		for _, g := range m.grams(k) {
			h, w := g[:k-1], g[k-1]
			if refKey(h) != last { // the sums over A(h), once per context
				last, sumP, sumL = refKey(h), 0, 0
				for _, v := range m.successors(h) {
					sumP += m.P(h, v)
					sumL += m.P(h[1:], v)
				}
			}
			p, pl := m.P(h, w), m.P(h[1:], w)
			bowNew := (1 - sumP + p) / (1 - sumL + pl)
			d[refKey(g)] = -m.contextProb(h) * (p*(math.Log(pl)+math.Log(bowNew)-math.Log(p)) +
				(math.Log(bowNew)-math.Log(m.bow[refKey(h)]))*(1-sumP))
		}
	}
	return d
}

// remove drops, from the highest order down, the n-grams of order >= 2
// that drop(g) marks, unless they are the context of a surviving longer
// n-gram. Unigrams stay.
func (m *refLM) remove(drop func(g []string) bool) {
	for k := m.N; k >= 2; k-- {
		for _, g := range m.grams(k) {
			if !drop(g) {
				continue
			}
			needed, gk := false, refKey(g)
			for _, w := range m.vocab {
				if m.stored(gk, w) {
					needed = true
					break
				}
			}
			if !needed {
				delete(m.prob, refKey(g))
				delete(m.bow, refKey(g))
				delete(m.order, refKey(g))
			}
		}
	}
	m.succ = map[string][]string{}
}

// keys lists the stored n-grams of production tables.
func keys(t *tables.Tables) map[string]bool {
	out := map[string]bool{}
	for k := 1; k <= t.Order(); k++ {
		for i := 0; i < t.Len(k); i++ {
			out[t.Words(t.Gram(k, i))] = true
		}
	}
	return out
}

// relDiff is the relative difference of a and b: 0 when they are equal
// (the same infinity, or both NaN), NaN when only one of them is NaN or
// infinite, so that a comparison "!(relDiff <= tolerance)" fails then.
func relDiff(a, b float64) float64 {
	if a == b || (math.IsNaN(a) && math.IsNaN(b)) {
		return 0
	}
	return math.Abs(a-b) / math.Max(math.Max(math.Abs(a), math.Abs(b)), 1e-300)
}

// compareRemoved checks that production's pruned tables (out, with the
// weights before storage in bow64) hold exactly the reference's n-grams,
// their unchanged probabilities, and weights within 1e-9 (before storage)
// and within float32 rounding (as stored). It returns the largest relative
// difference before storage.
func compareRemoved(t *testing.T, out *tables.Tables, bow64 [][]float64, ref *refLM, exact map[string]float64) float64 {
	t.Helper()
	got := keys(out)
	if len(got) != len(ref.prob) {
		t.Fatalf("%d n-grams kept, reference %d", len(got), len(ref.prob))
	}
	worst := 0.0
	for k := 1; k <= out.Order(); k++ {
		lv := &out.Levels[k-1]
		for i := 0; i < out.Len(k); i++ {
			g := out.Words(out.Gram(k, i))
			p, ok := ref.prob[g]
			if !ok {
				t.Fatalf("%q kept, the reference removes it", g)
			}
			if math.Pow(10, float64(lv.LogProb[i])) != p {
				t.Fatalf("P(%s) changed by pruning", g)
			}
			if k == out.Order() {
				continue
			}
			want := exact[g]
			if d := relDiff(bow64[k-1][i], want); !(d <= 1e-9) {
				t.Fatalf("bow(%s) = %.15g before storage, reference %.15g", g, bow64[k-1][i], want)
			} else {
				worst = max(worst, d)
			}
			if stored, w := float64(lv.LogBackoff[i]), float64(float32(math.Log10(want))); math.Abs(stored-w) > 1e-6*math.Max(1, math.Abs(w)) {
				t.Fatalf("bow(%s) stored as log10 %v, reference %v", g, stored, w)
			}
		}
	}
	return worst
}

// sameTables checks that two models store the same n-grams with the same
// values, bit for bit.
func sameTables(t *testing.T, got, want *tables.Tables) {
	t.Helper()
	if got.Order() != want.Order() {
		t.Fatalf("order %d, want %d", got.Order(), want.Order())
	}
	for k := range want.Levels {
		g, w := &got.Levels[k], &want.Levels[k]
		if !slices.Equal(g.Words, w.Words) || !slices.Equal(g.LogProb, w.LogProb) || !slices.Equal(g.LogBackoff, w.LogBackoff) {
			t.Fatalf("order %d differs from prune.Apply's", k+1)
		}
	}
}

func estimated(t *testing.T, sentences []string, N int, method estimate.Method) (*tables.Tables, *counts.Counts) {
	t.Helper()
	c, err := counts.NewCounter(N)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range sentences {
		c.AddSentence(strings.Fields(s))
	}
	cnt := c.Counts(1)
	tb, _, err := estimate.Estimate(cnt, estimate.Options{Method: method, Order: N})
	if err != nil {
		t.Fatal(err)
	}
	return tb, cnt
}

// checkPruning prunes the model of the sentences at a threshold that
// removes about the given fraction of the n-grams of orders >= 2 (a
// threshold halfway between two scores, so no score sits on it), with
// package prune and with the reference, and compares scores, survivors
// and weights. It returns the largest relative differences of the scores
// and of the weights.
func checkPruning(t *testing.T, sentences []string, N int, method estimate.Method, fraction float64) (dScore, dBow float64) {
	t.Helper()
	tb, _ := estimated(t, sentences, N, method)
	scores := prune.EntropyScores(tb)
	ref := newRefLM(tb)
	refD := ref.entropy()
	var all []float64
	for k := 2; k <= N; k++ {
		for i, s := range scores[k-1] {
			g := tb.Words(tb.Gram(k, i))
			want := refD[g]
			if d := relDiff(s, want); !(d <= 1e-9) {
				t.Fatalf("D(%s) = %.15g, reference %.15g", g, s, want)
			} else {
				dScore = max(dScore, d)
			}
			all = append(all, s)
		}
	}
	if len(all) < 2 {
		return
	}
	slices.Sort(all)
	j := int(fraction * float64(len(all)))
	for j+1 < len(all) && relDiff(all[j], all[j+1]) < 1e-6 {
		j++
	}
	if j+1 >= len(all) {
		return
	}
	threshold := (all[j] + all[j+1]) / 2
	keep := prune.Keep(tb, scores, threshold)
	out := prune.Select(tb, keep)
	bow64 := prune.RenormalizeFloat64(out)
	applied := prune.Apply(tb, keep)
	for k := 1; k < N; k++ {
		if !slices.Equal(applied.Levels[k-1].LogBackoff, out.Levels[k-1].LogBackoff) {
			t.Fatalf("Apply and Select + Renormalize differ at order %d", k)
		}
	}
	// What ingot prune runs gives the same model.
	res, err := pipeline.Prune{DropBelow: threshold}.Run(tb)
	if err != nil {
		t.Fatal(err)
	}
	sameTables(t, res.Model, applied)
	ref.remove(func(g []string) bool { return refD[refKey(g)] < threshold })
	exact := ref.renormalize()
	dBow = compareRemoved(t, applied, bow64, ref, exact)
	if removed := len(keys(tb)) - len(keys(out)); removed == 0 {
		t.Fatalf("threshold %g removed nothing", threshold)
	}
	return
}

// checkCutoffs applies count cutoffs as ingot compile --min-count does
// (estimate, mark with prune.Cutoffs from the raw counts, prune.Apply),
// and with the reference, which counts the sentences itself (ESTIMATORS.md
// "Counting"), removes the n-grams of order K seen fewer than minCount[K]
// times unless they are the context of a kept longer one, and
// renormalises.
func checkCutoffs(t *testing.T, sentences []string, N int, method estimate.Method, minCount map[int]uint64) float64 {
	t.Helper()
	tb, cnt := estimated(t, sentences, N, method)
	raw := make([][]uint64, N)
	for k := range raw {
		raw[k] = cnt.Levels[k].Counts
	}
	keep, err := prune.Cutoffs(tb, raw, minCount)
	if err != nil {
		t.Fatal(err)
	}
	out := prune.Select(tb, keep)
	bow64 := prune.RenormalizeFloat64(out)
	applied := prune.Apply(tb, keep)

	// What ingot compile --min-count runs gives the same model.
	var given []string
	for k := 2; k <= N; k++ {
		if m, ok := minCount[k]; ok {
			given = append(given, fmt.Sprintf("%d=%d", k, m))
		}
	}
	res, err := pipeline.Compile{Estimate: estimate.Options{Method: method, Order: N}, MinCount: strings.Join(given, ",")}.Run(cnt)
	if err != nil {
		t.Fatal(err)
	}
	sameTables(t, res.Model, applied)

	count := map[string]uint64{}
	for _, s := range sentences {
		toks := append(append([]string{refStart}, strings.Fields(s)...), refEnd)
		for i := 1; i < len(toks); i++ {
			for k := 1; k <= N && i-k+1 >= 0; k++ {
				count[refKey(toks[i-k+1:i+1])]++
			}
		}
	}
	ref := newRefLM(tb)
	ref.remove(func(g []string) bool {
		m, ok := minCount[len(g)]
		return ok && count[refKey(g)] < m
	})
	exact := ref.renormalize()
	return compareRemoved(t, applied, bow64, ref, exact)
}

// Count cutoffs and pruning of every method on slices of the State of the
// Union text (CC0) agree with the reference to 1e-9 before float32
// storage.
func TestCutoffsAndPruningAgreeWithReferenceOnSOTU(t *testing.T) {
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	var worstScore, worstBow float64
	for i, method := range estimate.Methods {
		sentences := all[1000*i : 1000*i+40]
		N := 3
		if i%2 == 1 {
			N = 4
		}
		t.Run(fmt.Sprintf("%s order %d", method, N), func(t *testing.T) {
			for _, cut := range []map[int]uint64{{2: 2}, {N: 2}, {2: 2, 3: 3}} {
				worstBow = max(worstBow, checkCutoffs(t, sentences, N, method, cut))
			}
			for _, f := range []float64{0.3, 0.8} {
				ds, db := checkPruning(t, sentences, N, method, f)
				worstScore, worstBow = max(worstScore, ds), max(worstBow, db)
			}
		})
	}
	t.Logf("largest relative difference from the reference: scores %.3g, weights before storage %.3g", worstScore, worstBow)
}

// Random count sets: short sentences over a small alphabet make contexts
// followed by every word, n-grams whose removal leaves no mass to back off
// with, and cutoffs that empty an order likely.
func TestCutoffsAndPruningAgreeWithReferenceOnRandomText(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 7))
	var worstScore, worstBow float64
	for trial := 0; trial < 32; trial++ {
		words := 2 + rng.IntN(7)
		var sentences []string
		for s := 0; s < 3+rng.IntN(40); s++ {
			var toks []string
			for j := 0; j < 1+rng.IntN(6); j++ {
				toks = append(toks, fmt.Sprintf("w%d", rng.IntN(words)))
			}
			sentences = append(sentences, strings.Join(toks, " "))
		}
		method := estimate.Methods[trial%4]
		N := 2 + rng.IntN(3)
		cut := map[int]uint64{2 + rng.IntN(N-1): uint64(2 + rng.IntN(3))}
		fraction := rng.Float64()
		t.Run(fmt.Sprintf("%d-%s", trial, method), func(t *testing.T) {
			worstBow = max(worstBow, checkCutoffs(t, sentences, N, method, cut))
			ds, db := checkPruning(t, sentences, N, method, fraction)
			worstScore, worstBow = max(worstScore, ds), max(worstBow, db)
		})
	}
	t.Logf("largest relative difference from the reference: scores %.3g, weights before storage %.3g", worstScore, worstBow)
}
