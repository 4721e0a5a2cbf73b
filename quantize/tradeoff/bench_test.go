package tradeoff

import (
	"fmt"
	"ingot/compile/fixture"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/quantize"
)

// BenchmarkShrinkTargets measures the size-for-accuracy targets on the
// 5-gram Kneser-Ney and Katz models of the full State of the Union corpus
// (every tenth sentence held out): held-out perplexity after 8-bit and
// 4-bit quantization, and after pruning to half the n-grams. It builds the
// models once (a few minutes); run it alone:
//
//	go test -run '^$' -bench ShrinkTargets -benchtime 1x ./quantize/tradeoff
func BenchmarkShrinkTargets(b *testing.B) {
	train, held := fixture.SOTU(b, 0)
	cnt := fixture.Counts(b, 5, train)
	heldout := fixture.Tokens(held)
	for _, method := range []estimate.Method{estimate.KneserNey, estimate.Katz} {
		m, _, err := estimate.Estimate(cnt, estimate.Options{Method: method, Order: 5})
		if err != nil {
			b.Fatal(err)
		}
		b.Run(string(method), func(b *testing.B) {
			for range b.N {
				base := perplexityOf(b, m, heldout)
				report := func(name string, t *tables.Tables) {
					ppl := perplexityOf(b, t, heldout)
					size, _ := format.Size(t)
					b.ReportMetric(100*(ppl/base-1), name+"_ppl_increase_%")
					b.Logf("%s %s: perplexity %.3f (base %.3f, %+.2f%%), %d bytes", method, name, ppl, base, 100*(ppl/base-1), size)
				}
				for _, bits := range []int{8, 4} {
					q, _, err := quantize.Model(m, quantize.Options{Bits: bits, Trainer: quantize.LeastSquares})
					if err != nil {
						b.Fatal(err)
					}
					report(fmt.Sprintf("q%d", bits), q)
				}
				total := 0
				for k := 1; k <= m.Order(); k++ {
					total += m.Len(k)
				}
				scores := prune.EntropyScores(m)
				th, keep, err := prune.KeepAtMost(m, scores, total/2)
				if err != nil {
					b.Fatal(err)
				}
				kept := 0
				for _, n := range prune.Kept(keep) {
					kept += n
				}
				b.Logf("%s: threshold %.4g keeps %d of %d n-grams", method, th, kept, total)
				report("half", prune.Apply(m, keep))
			}
		})
	}
}

func perplexityOf(b *testing.B, t *tables.Tables, heldout [][]string) float64 {
	data, err := format.Marshal(t)
	if err != nil {
		b.Fatal(err)
	}
	m, err := format.FromBytes(data)
	if err != nil {
		b.Fatal(err)
	}
	sc := score.NewScorer(m)
	var sum score.Summary
	for _, s := range heldout {
		sum.Add(sc.Score(s))
	}
	return sum.Perplexity()
}
