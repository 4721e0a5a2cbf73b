package budget

import (
	"bytes"
	"fmt"
	"ingot/compile/fixture"
	"math"
	"strings"
	"testing"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
	"ingot/verify"
)

// slice returns the counts of the first n sentences of the bundled State of
// the Union corpus (every tenth held out) and the held-out sentences.
func slice(t testing.TB, n, order int) (*counts.Counts, [][]string) {
	t.Helper()
	train, held := fixture.SOTU(t, n)
	return fixture.Counts(t, order, train), fixture.Tokens(held)
}

func sizeOf(t testing.TB, m *tables.Tables) int64 {
	t.Helper()
	n, err := format.Size(m)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

func unpruned(t testing.TB, c *counts.Counts, opt estimate.Options, q quantize.Options) (*tables.Tables, int64) {
	t.Helper()
	m, _, err := estimate.Estimate(c, opt)
	if err != nil {
		t.Fatal(err)
	}
	if q.Bits != 0 {
		if m, _, err = quantize.Model(m, q); err != nil {
			t.Fatal(err)
		}
	}
	return m, sizeOf(t, m)
}

var q8 = quantize.Options{Bits: 8, Trainer: quantize.LeastSquares}

// The law of the whole job: the written model fits the budget, every context
// sums to one (laws of probability, checked by ingot verify's own checks on
// the file's bytes), and the same inputs give the same bytes.
func TestFitsBudgetPassesVerifyAndIsDeterministic(t *testing.T) {
	c, _ := slice(t, 800, 3)
	for _, method := range estimate.Methods {
		opt := estimate.Options{Method: method, Order: 3}
		_, full := unpruned(t, c, opt, q8)
		// Half and two thirds of the full size: in format version 3 the
		// n-grams shrink so much that a third of the full file is below the
		// floor of unigrams and vocabulary.
		for _, frac := range [][2]int64{{1, 2}, {2, 3}} {
			budget := full * frac[0] / frac[1]
			div := fmt.Sprintf("%d/%d", frac[0], frac[1])
			var files [][]byte
			runs := 1
			if method == estimate.KneserNey {
				runs = 2
			}
			for range runs {
				res, err := Fit(c, Options{Estimate: opt, MaxBytes: budget, Quantize: q8})
				if err != nil {
					t.Fatalf("%s %s: %v", method, div, err)
				}
				data, err := format.Marshal(res.Model)
				if err != nil {
					t.Fatal(err)
				}
				if int64(len(data)) > budget || res.Chosen.FileBytes != int64(len(data)) {
					t.Fatalf("%s %s: %d bytes written (reported %d), budget %d", method, div, len(data), res.Chosen.FileBytes, budget)
				}
				rep, err := verify.Bytes(data, verify.Options{})
				if err != nil || !rep.OK() {
					t.Fatalf("%s %s: verify: %v %v", method, div, err, rep.Failed())
				}
				files = append(files, data)
			}
			if runs == 2 && !bytes.Equal(files[0], files[1]) {
				t.Errorf("%s %s: two runs wrote different bytes", method, div)
			}
		}
	}
}

// Kneser & Ney (1995), as in Chen & Goodman (1998) section 3: the highest
// order of a model is estimated from raw counts. Removing every n-gram above
// order n and estimating again on the survivors (each removed v g adds its
// count to a(g), Siivola et al. 2007) must therefore give exactly the
// order-n Kneser-Ney model of the same counts: a(g) becomes the sum over v
// of c(v g), which is c(g) for every g not starting with <s>.
func TestRemovingWholeOrdersGivesTheLowerOrderModel(t *testing.T) {
	c, _ := slice(t, 800, 4)
	for n := 1; n <= 3; n++ {
		surv := make([][]bool, 4)
		for k := 1; k <= 4; k++ {
			surv[k-1] = make([]bool, c.Len(k))
			for i := range surv[k-1] {
				surv[k-1][i] = k <= n
			}
		}
		re, _, err := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: 4, Survivors: surv})
		if err != nil {
			t.Fatal(err)
		}
		low, _, err := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: n})
		if err != nil {
			t.Fatal(err)
		}
		for k := 1; k <= n; k++ {
			a, b := re.Levels[k-1].LogProb, low.Levels[k-1].LogProb
			for i := range a {
				if a[i] != b[i] && !(math.IsInf(float64(a[i]), -1) && math.IsInf(float64(b[i]), -1)) {
					t.Fatalf("n=%d: order %d entry %d (%s): re-estimated log10 %v, order-%d model %v",
						n, k, i, re.Words(re.Gram(k, i)), a[i], n, b[i])
				}
			}
		}
		// And nothing removed changes nothing: the plain estimate.
		if n == 3 {
			all := make([][]bool, 4)
			for k := range all {
				all[k] = make([]bool, c.Len(k+1))
				for i := range all[k] {
					all[k][i] = true
				}
			}
			a, _, _ := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: 4, Survivors: all})
			b, _, _ := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: 4})
			for k := 1; k <= 4; k++ {
				for i, v := range a.Levels[k-1].LogProb {
					if w := b.Levels[k-1].LogProb[i]; v != w && !math.IsInf(float64(v), -1) {
						t.Fatalf("all kept: order %d entry %d: %v, plain estimate %v", k, i, v, w)
					}
				}
			}
		}
	}
}

// The point of the method (Chelba et al. 2010; Siivola et al. 2007): at the
// same budget, the Kneser-Ney model ranked on a Katz model and estimated
// again on the survivors scores held-out text better than the Kneser-Ney
// model pruned by relative entropy on itself with its probabilities kept.
func TestBeatsPlainPruningOfKneserNey(t *testing.T) {
	c, held := slice(t, 3000, 4)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 4}
	m, full := unpruned(t, c, opt, quantize.Options{})
	budget := full / 8
	res, err := Fit(c, Options{Estimate: opt, MaxBytes: budget})
	if err != nil {
		t.Fatal(err)
	}
	_, keep, _, err := prune.Fit(m, prune.EntropyScores(m), budget, func(_ float64, kp [][]bool) (int64, error) {
		return format.Size(prune.Select(m, kp))
	})
	if err != nil {
		t.Fatal(err)
	}
	plain := prune.Apply(m, keep)
	good, err := perplexity(res.Model, held)
	if err != nil {
		t.Fatal(err)
	}
	bad, _ := perplexity(plain, held)
	t.Logf("held-out perplexity at %d bytes: %.3f this path, %.3f plain pruning", budget, good, bad)
	if !(good < bad) {
		t.Errorf("held-out perplexity %.3f, not below plain pruning's %.3f", good, bad)
	}
}

// Kneser & Ney (1995) defined their method in back-off form; the
// interpolated form (Chen & Goodman 1998) spreads the empty context's
// left-over mass over the whole vocabulary, so <unk> gets gamma/|V|. A
// pruned model backs off to its unigrams far more often, and there the
// back-off form at order 1 (that mass to the words without a count) gives
// lower held-out perplexity, <unk> predictions included. Measured here,
// unquantized, at 1/4 and 1/8 of this slice's unpruned file, same
// survivors; the figures without <unk> are logged (they favour the
// interpolated form on this small slice, whose text has many unknown
// words).
func TestBackedOffFormBeatsInterpolatedOncePruned(t *testing.T) {
	c, held := slice(t, 3000, 4)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 4}
	_, full := unpruned(t, c, opt, quantize.Options{})
	for _, div := range []int64{4, 8} {
		var ppl, known [2]float64
		for i, interpolated := range []bool{false, true} {
			res, err := Fit(c, Options{Estimate: opt, MaxBytes: full / div, interpolated: interpolated})
			if err != nil {
				t.Fatal(err)
			}
			if !strings.Contains(res.Model.Info.History[len(res.Model.Info.History)-1], "back-off form") == !interpolated {
				t.Errorf("1/%d: history %q", div, res.Model.Info.History)
			}
			if ppl[i], err = perplexity(res.Model, held); err != nil {
				t.Fatal(err)
			}
			known[i] = perplexityWithoutUnknown(t, res.Model, held)
		}
		t.Logf("1/%d of the file: held-out perplexity %.3f in back-off form, %.3f interpolated (without <unk>: %.3f, %.3f)", div, ppl[0], ppl[1], known[0], known[1])
		if !(ppl[0] < ppl[1]) {
			t.Errorf("1/%d: back-off form %.3f, not below the interpolated form's %.3f", div, ppl[0], ppl[1])
		}
	}
}

// A budget the whole model fits removes nothing: the written model is then
// the plain estimate, the interpolated form ESTIMATORS pins, entry for
// entry.
func TestNothingRemovedKeepsThePlainEstimate(t *testing.T) {
	c, _ := slice(t, 800, 3)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 3}
	plain, full := unpruned(t, c, opt, quantize.Options{})
	res, err := Fit(c, Options{Estimate: opt, MaxBytes: 2 * full})
	if err != nil {
		t.Fatal(err)
	}
	for k := range plain.Levels {
		a, b := plain.Levels[k], res.Model.Levels[k]
		if len(a.LogProb) != len(b.LogProb) {
			t.Fatalf("order %d: %d entries written, %d estimated", k+1, len(b.LogProb), len(a.LogProb))
		}
		for i, v := range a.LogProb {
			if w := b.LogProb[i]; v != w && !(math.IsInf(float64(v), -1) && math.IsInf(float64(w), -1)) {
				t.Fatalf("order %d entry %d: written %v, estimated %v", k+1, i, w, v)
			}
		}
	}
}

// Chelba, Brants, Neveitt & Xu (2010) measured that ranking n-grams for
// removal on the Kneser-Ney model itself is what hurts: its lower orders
// are continuation distributions, poor stand-ins for the removed n-grams.
// At the same budget, both estimated again on the survivors, ranking on the
// default model (Katz) beats ranking on Kneser-Ney itself.
func TestRankingOnKatzBeatsRankingOnKneserNeyItself(t *testing.T) {
	c, held := slice(t, 3000, 4)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 4}
	_, full := unpruned(t, c, opt, quantize.Options{})
	var ppl []float64
	for _, rank := range []estimate.Method{"", estimate.KneserNey} {
		res, err := Fit(c, Options{Estimate: opt, MaxBytes: full / 8, Ranking: rank})
		if err != nil {
			t.Fatal(err)
		}
		p, err := perplexity(res.Model, held)
		if err != nil {
			t.Fatal(err)
		}
		ppl = append(ppl, p)
	}
	t.Logf("held-out perplexity at 1/8 of the file: %.3f ranked on %s, %.3f ranked on kneser-ney", ppl[0], DefaultRanking(opt.Method), ppl[1])
	if !(ppl[0] < ppl[1]) {
		t.Errorf("ranked on the default model %.3f, not below ranked on kneser-ney itself %.3f", ppl[0], ppl[1])
	}
}

// Kneser & Ney (1995), Chen & Goodman (1998) section 3: the highest order
// is estimated from raw counts. A bigram model fitted to the smallest
// budget keeps no bigram, so estimated again on its survivors (Siivola et
// al. 2007: each removed v w adds c(v w) to a(w)) its unigrams must be
// exactly the order-1 Kneser-Ney model of the same counts (in back-off
// form, as every pruned Kneser-Ney model here), not the continuation
// distribution of the unpruned bigram model.
func TestSmallestBigramModelHasTheUnigramModelsProbabilities(t *testing.T) {
	c, _ := slice(t, 800, 2)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 2}
	b, err := NewBuilder(c, Options{Estimate: opt})
	if err != nil {
		t.Fatal(err)
	}
	pre, err := b.prepare(2)
	if err != nil {
		t.Fatal(err)
	}
	all := prune.Keep(pre.t, pre.scores, math.Inf(1))
	if kept := prune.Kept(all); kept[1] != 0 {
		t.Fatalf("the smallest model keeps %d bigrams", kept[1])
	}
	floor, err := sizer(quantize.Options{}, func(th float64, kp [][]bool) *tables.Tables { return pre.shaped(th, kp, pre.t, true) })(math.Inf(1), all)
	if err != nil {
		t.Fatal(err)
	}
	res, err := b.Fit(floor)
	if err != nil {
		t.Fatal(err)
	}
	uni, _, err := estimate.Estimate(c, estimate.Options{Method: estimate.KneserNey, Order: 1, UnigramsBackedOff: true})
	if err != nil {
		t.Fatal(err)
	}
	if res.Model.Len(2) != 0 {
		t.Fatalf("%d bigrams kept at the smallest budget", res.Model.Len(2))
	}
	differ := 0
	for i, p := range res.Model.Levels[0].LogProb {
		if q := uni.Levels[0].LogProb[i]; p != q && !(math.IsInf(float64(p), -1) && math.IsInf(float64(q), -1)) {
			t.Fatalf("unigram %q: log10 %v, order-1 model %v", res.Model.Vocab[i], p, q)
		}
		if p != pre.t.Levels[0].LogProb[i] {
			differ++
		}
	}
	if differ == 0 {
		t.Fatal("the unpruned bigram model's unigrams are the same: the check proves nothing")
	}
}

// With held-out text every order from 2 up is fitted to the budget, for
// Kneser-Ney in both forms (unigrams interpolated and backed off), and the
// lowest perplexity wins; the report lists each.
func TestComparesOrdersOnHeldoutText(t *testing.T) {
	c, held := slice(t, 1500, 4)
	opt := estimate.Options{Method: estimate.KneserNey, Order: 4}
	_, full := unpruned(t, c, opt, q8)
	res, err := Fit(c, Options{Estimate: opt, MaxBytes: full / 4, Quantize: q8, Heldout: held})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Candidates) != 6 {
		t.Fatalf("%d candidates, want orders 4, 3, 2 in two forms each", len(res.Candidates))
	}
	for i, cand := range res.Candidates {
		form := []string{"interpolated", "back-off"}[i%2]
		if cand.Order != 4-i/2 || cand.Form != form || cand.Problem != "" || cand.FileBytes > full/4 {
			t.Errorf("candidate %d: %+v", i, cand)
		}
		if cand.Perplexity < res.Chosen.Perplexity {
			t.Errorf("order %d %s scored %.3f, below the chosen order %d's %.3f", cand.Order, cand.Form, cand.Perplexity, res.Chosen.Order, res.Chosen.Perplexity)
		}
	}
	if res.Chosen.Form == "" {
		t.Errorf("chosen candidate names no form: %+v", res.Chosen)
	}
	if res.Model.Order() != res.Chosen.Order {
		t.Errorf("model of order %d, chosen %d", res.Model.Order(), res.Chosen.Order)
	}
	if got, _ := perplexity(res.Model, held); got != res.Perplexity {
		t.Errorf("chosen model scores %v, reported %v", got, res.Perplexity)
	}
}

func TestTooSmallABudgetSaysWhatFits(t *testing.T) {
	c, _ := slice(t, 300, 3)
	_, err := Fit(c, Options{Estimate: estimate.Options{Method: estimate.Katz, Order: 3}, MaxBytes: 1000})
	if err == nil || !strings.Contains(err.Error(), "smallest model") {
		t.Fatalf("got %v, want an error naming the smallest model's size", err)
	}
}

// When the finished model comes out larger than its sizing (the quantizer
// widening a back-off codebook does that), FitFinished lowers its target
// until the finished file fits. Here finishing adds 3000 bytes of build
// notes that the sizing does not see.
func TestFitFinishedRefitsWhenTheFinishedFileIsLarger(t *testing.T) {
	c, _ := slice(t, 800, 3)
	m, full := unpruned(t, c, estimate.Options{Method: estimate.Katz, Order: 3}, quantize.Options{})
	budget := full / 2
	// Sizing measures the finished tables (in format version 3 re-estimated
	// back-off weights change which entries are contexts, so the size).
	shaped := func(_ float64, kp [][]bool) *tables.Tables {
		p, err := Finish(prune.Select(m, kp), quantize.Options{})
		if err != nil {
			t.Fatal(err)
		}
		return p
	}
	calls := 0
	out, _, _, size, err := FitFinished(m, prune.EntropyScores(m), budget, quantize.Options{}, shaped,
		func(th float64, kp [][]bool) (*tables.Tables, error) {
			calls++
			p, err := Finish(shaped(th, kp), quantize.Options{})
			p.Info.History = append(p.Info.History, strings.Repeat("x", 3000))
			return p, err
		})
	if err != nil {
		t.Fatal(err)
	}
	if got := sizeOf(t, out); got != size || size > budget || calls < 2 {
		t.Errorf("file %d bytes (reported %d), budget %d, %d builds", got, size, budget, calls)
	}
}

// Determinism across reuse: a Builder that already fitted other budgets
// (and remembers their sizes and models) writes, for a budget, the same
// bytes as a fresh Fit of that budget alone.
func TestBuilderReuseWritesTheSameBytesAsAFreshFit(t *testing.T) {
	c, held := slice(t, 800, 3)
	opt := Options{Estimate: estimate.Options{Method: estimate.KneserNey, Order: 3}, Quantize: q8, Heldout: held}
	_, full := unpruned(t, c, opt.Estimate, q8)
	b, err := NewBuilder(c, opt)
	if err != nil {
		t.Fatal(err)
	}
	budgets := []int64{full * 2 / 3, full / 2, full * 3 / 5}
	for _, budget := range budgets {
		reused, err := b.Fit(budget)
		if err != nil {
			t.Fatal(err)
		}
		o := opt
		o.MaxBytes = budget
		fresh, err := Fit(c, o)
		if err != nil {
			t.Fatal(err)
		}
		x, _ := format.Marshal(reused.Model)
		y, _ := format.Marshal(fresh.Model)
		if !bytes.Equal(x, y) {
			t.Errorf("budget %d: the reused builder wrote %d bytes, a fresh fit %d, not the same", budget, len(x), len(y))
		}
	}
}

// perplexityWithoutUnknown scores sentences as perplexity does, leaving out
// the predictions of <unk>.
func perplexityWithoutUnknown(t testing.TB, m *tables.Tables, sentences [][]string) float64 {
	t.Helper()
	_, without, _ := pointScores(t, m, sentences)
	return without
}
