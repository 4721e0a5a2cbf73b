package quantize

import (
	"fmt"
	"ingot/compile/fixture"
	"math"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
)

func sotuModels(t *testing.T, limit, order int) (map[estimate.Method]*tables.Tables, []string) {
	t.Helper()
	train, held := fixture.SOTU(t, limit)
	cnt := fixture.Counts(t, order, train)
	out := map[estimate.Method]*tables.Tables{}
	for _, m := range estimate.Methods {
		tb, _, err := estimate.Estimate(cnt, estimate.Options{Method: m, Order: order})
		if err != nil {
			t.Fatal(err)
		}
		out[m] = tb
	}
	return out, held
}

func perplexity(m *tables.Tables, sentences []string) float64 {
	unk, _ := m.ID(tables.Unknown)
	start, _ := m.ID(tables.SentenceStart)
	var sum float64
	n := 0
	for _, s := range sentences {
		g := []uint32{start}
		for _, w := range append(strings.Fields(s), tables.SentenceEnd) {
			id, ok := m.ID(w)
			if !ok || id == start {
				id = unk
			}
			g = append(g, id)
			sum += m.LogProb(g)
			n++
		}
	}
	return math.Pow(10, -sum/float64(n))
}

// Law of probability: after quantization every context still sums to one,
// within MaxResidual (a fixed figure, whatever the codebooks); and quantizing costs
// little held-out perplexity on State of the Union text (CC0).
func TestQuantizedModelsNormalise(t *testing.T) {
	models, held := sotuModels(t, 3000, 3)
	for _, method := range estimate.Methods {
		m := models[method]
		base := perplexity(m, held)
		for _, bits := range []int{4, 8} {
			for _, tr := range Trainers() {
				t.Run(fmt.Sprintf("%s/%d/%s", method, bits, tr), func(t *testing.T) {
					q, reps, err := Model(m, Options{Bits: bits, Trainer: tr})
					for _, r := range reps {
						t.Logf("order %d: back-off %d bits, residual %.3g", r.Order, r.BackoffBits, r.Residual)
					}
					if err != nil {
						t.Fatal(err)
					}
					if err := q.Check(); err != nil {
						t.Fatal(err)
					}
					tol := MaxResidual
					worst := 0.0
					q.Sums(func(s tables.ContextSum) {
						d := math.Abs(s.Sum - 1)
						worst = max(worst, d)
						if !(d <= tol) {
							t.Errorf("context %q sums to %.9f (tolerance %.3g)", q.Words(s.Context), s.Sum, tol)
						}
					})
					ppl := perplexity(q, held)
					t.Logf("max |S-1| %.3g (tolerance %.3g); perplexity %.3f -> %.3f (%+.2f%%)", worst, tol, base, ppl, 100*(ppl/base-1))
					for k := 2; k <= q.Order(); k++ {
						if n := len(q.Levels[k-1].ProbCodebook); n > 1<<bits {
							t.Errorf("order %d codebook has %d levels for %d bits", k, n, bits)
						}
					}
				})
			}
		}
	}
}

// The joint choice of each back-off weight's level with its successors'
// levels is what brings sums to one. The law is that of the back-off form,
// S(h) = P(h) + bow(h) (S(h') - L(h)): with the weight rounded to its
// nearest level alone, a sum is off by up to (1 - P(h)) (10^(g/2) - 1) for
// a gap g between levels. On State of the Union 3-gram models (CC0), with
// the weights held at 8 bits, the joint choice must leave at most 60% as
// many contexts more than 1e-4 from one as the nearest level alone, and at
// most 60% of its largest |S - 1| (measured: 44% and 24% for Katz, 53% and
// 50% for Kneser-Ney); the rest is what wider weights are for.
func TestJointChoiceBringsSumsToOne(t *testing.T) {
	models, _ := sotuModels(t, 3000, 3)
	for _, method := range []estimate.Method{estimate.Katz, estimate.KneserNey} {
		measure := func(nearest bool) (over int, worst float64) {
			q, _, err := Model(models[method], Options{Bits: 8, BackoffBits: 8, Trainer: LeastSquares, fixedBackoffBits: true, nearestOnly: nearest})
			if err != nil {
				t.Fatal(err)
			}
			q.Sums(func(s tables.ContextSum) {
				d := math.Abs(s.Sum - 1)
				worst = max(worst, d)
				if d > 1e-4 {
					over++
				}
			})
			return over, worst
		}
		jw, jmax := measure(false)
		nw, nmax := measure(true)
		t.Logf("%s: over 1e-4: %d joint, %d nearest; largest |S-1| %.3g joint, %.3g nearest", method, jw, nw, jmax, nmax)
		if float64(jw) > 0.6*float64(nw) || jmax > 0.6*nmax {
			t.Errorf("%s: the joint choice leaves %d contexts over 1e-4 (nearest level alone %d) and largest |S-1| %.3g (%.3g)", method, jw, nw, jmax, nmax)
		}
	}
}

// The unigrams alone make up the empty context, whose sum no back-off
// weight corrects (law of probability: it sums to one). On State of the
// Union 3-gram models (CC0) quantized with 4-bit unigram codebooks, whose
// levels are coarse (nearest-level rounding alone leaves sums off by
// 1e-3 and more), moving values a level at a time, largest first, keeps
// the codebook at 4 bits and brings the empty context within MaxResidual
// of one; the held-out perplexity moves by less than 2% from the model
// with float32 unigrams (measured: see the log).
func TestUnigramCodebookKeepsTheEmptyContextNormalised(t *testing.T) {
	models, held := sotuModels(t, 3000, 3)
	for _, method := range []estimate.Method{estimate.Katz, estimate.KneserNey} {
		opt := Options{Bits: 8, UnigramBits: 4, Trainer: LeastSquares}
		q, _, err := Model(models[method], opt)
		if err != nil {
			t.Fatal(err)
		}
		opt.floatUnigrams = true
		f, _, err := Model(models[method], opt)
		if err != nil {
			t.Fatal(err)
		}
		if f.Levels[0].ProbCodebook != nil {
			t.Fatalf("%s: float unigrams asked for, but order 1 has a codebook", method)
		}
		if n := len(q.Levels[0].ProbCodebook); n == 0 || n > 16 {
			t.Errorf("%s: unigram codebook has %d levels; 4 bits allow 16", method, n)
		}
		var empty float64
		q.Sums(func(s tables.ContextSum) {
			if len(s.Context) == 0 {
				empty = s.Sum
			}
		})
		pq, pf := perplexity(q, held), perplexity(f, held)
		t.Logf("%s: empty context sums to %.9f; perplexity %.3f with float unigrams, %.3f with 4-bit ones", method, empty, pf, pq)
		if !(math.Abs(empty-1) <= MaxResidual) {
			t.Errorf("%s: the empty context sums to %.9f", method, empty)
		}
		if pq > 1.02*pf {
			t.Errorf("%s: 4-bit unigrams cost perplexity %.3f against %.3f", method, pq, pf)
		}
	}
}
