package quantize

import (
	"math"
	"slices"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/tables"
)

// outsideTable counts, per back-off order, the stored weights (those of
// contexts with successors) whose level is not among the cheapTable levels
// the most contexts use: the weights an 8-bit narrow column must escape.
func outsideTable(q *tables.Tables) (outside, stored int) {
	for k := 1; k < q.Order(); k++ {
		lv := &q.Levels[k-1]
		if len(lv.BackoffCodebook) <= cheapTable+1 {
			continue
		}
		children := map[int]bool{}
		for j := 0; j < q.Len(k+1); j++ {
			if i := q.Find(q.Gram(k+1, j)[:k]); i >= 0 {
				children[i] = true
			}
		}
		freq := map[float32]int{}
		for i := range children {
			freq[lv.LogBackoff[i]]++
		}
		counts := make([]int, 0, len(freq))
		for _, c := range freq {
			counts = append(counts, c)
		}
		slices.Sort(counts)
		slices.Reverse(counts)
		in := 0
		for _, c := range counts[:min(cheapTable, len(counts))] {
			in += c
		}
		stored += len(children)
		outside += len(children) - in
	}
	return outside, stored
}

// cheapen moves back-off weights onto the levels most contexts use, which
// a tiered column stores in its narrow part, while every context keeps
// summing to one (law of probability: within MaxResidual, as Model
// promises) and held-out perplexity keeps its cost. On State of the Union
// 3-gram models (CC0; Kneser-Ney, whose lower orders Kneser and Ney 1995
// define, and Katz) the weights outside the 255 most used levels must drop
// by at least a twentieth (measured: from 13.6% to 12.2% of the stored
// weights for Kneser-Ney, 29.5% to 20.8% for Katz), and perplexity may
// grow by at most 0.02% against the same quantizer without cheapen
// (measured: +0.008% and -0.006%).
func TestCheapenGathersWeightsOnFrequentLevels(t *testing.T) {
	models, held := sotuModels(t, 3000, 3)
	for _, method := range []estimate.Method{estimate.KneserNey, estimate.Katz} {
		measure := func(skip bool) (outside, stored int, ppl float64) {
			q, _, err := Model(models[method], Options{Bits: 8, Trainer: LeastSquares, nearestBackoffs: skip})
			if err != nil {
				t.Fatal(err)
			}
			q.Sums(func(s tables.ContextSum) {
				if d := math.Abs(s.Sum - 1); !(d <= MaxResidual) {
					t.Errorf("%s: context %q sums to %.9f", method, q.Words(s.Context), s.Sum)
				}
			})
			outside, stored = outsideTable(q)
			return outside, stored, perplexity(q, held)
		}
		co, cs, cp := measure(false)
		no, ns, np := measure(true)
		t.Logf("%s: outside the table %d of %d with cheapen (%.1f%%), %d of %d without (%.1f%%); perplexity %.4f against %.4f",
			method, co, cs, 100*float64(co)/float64(cs), no, ns, 100*float64(no)/float64(ns), cp, np)
		if cs == 0 || cs != ns {
			t.Fatalf("%s: %d and %d stored weights in codebooks wider than the table", method, cs, ns)
		}
		if float64(co) > 0.95*float64(no) {
			t.Errorf("%s: cheapen leaves %d weights outside the table, without it %d", method, co, no)
		}
		if cp > np*1.0002 {
			t.Errorf("%s: perplexity %.4f with cheapen, %.4f without", method, cp, np)
		}
	}
}
