package quantize

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
)

func sotuModels(t *testing.T, limit, order int) (map[estimate.Method]*tables.Tables, []string) {
	t.Helper()
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	train, held := corpus.Split(all, limit)
	c, _ := counts.NewCounter(order)
	for _, s := range train {
		c.AddSentence(strings.Fields(s))
	}
	cnt := c.Counts(1)
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

func tolerance(q *tables.Tables) float64 {
	var tops []float64
	for k := 1; k < q.Order(); k++ {
		cb := q.Levels[k-1].BackoffCodebook
		tops = append(tops, float64(cb[len(cb)-1]))
	}
	return Tolerance(1e-5, q.Info.Quantization.Residual[:q.Order()-1], tops)
}

// Law of probability: after quantization every context still sums to one,
// within the tolerance the codebooks' steps give; and quantizing costs
// little held-out perplexity on State of the Union text (CC0).
func TestQuantizedModelsNormalise(t *testing.T) {
	models, held := sotuModels(t, 3000, 3)
	for _, method := range estimate.Methods {
		m := models[method]
		base := perplexity(m, held)
		for _, bits := range []int{4, 8} {
			for _, tr := range Trainers() {
				t.Run(fmt.Sprintf("%s/%d/%s", method, bits, tr), func(t *testing.T) {
					q, _, err := Model(m, Options{Bits: bits, Trainer: tr})
					if err != nil {
						t.Fatal(err)
					}
					if err := q.Check(); err != nil {
						t.Fatal(err)
					}
					tol := tolerance(q)
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
