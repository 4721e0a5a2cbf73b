package budget

import (
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/quantize"
)

// BenchmarkBudgetPoints fits the four methods (8-bit, from the counts, the
// order and Kneser-Ney's form chosen on DEV, as ingot compile --max-size
// SIZE --bits 8 --heldout DEV does) to a few budgets and prints, for each
// chosen model, TEST perplexity with and without the predictions of <unk>,
// the probability it gives <unk>, and what was compared. It is the quick
// check of single budgets that the full pruning benchmark
// (BenchmarkPruningPaths, 40 minutes) is too slow for:
//
//   - INGOT_POINTS_SPLIT=sotu (default): the full State of the Union text,
//     every tenth sentence held out (even ones DEV, odd ones TEST), the
//     budget 889140 bytes (1/16 of the unpruned 8-bit 5-gram Kneser-Ney
//     file as BENCHMARKS.md measured it);
//
//   - INGOT_POINTS_SPLIT=tail: another split and size, to check the method
//     away from that one figure: the last 20,000 sentences only, every
//     tenth from the fifth held out, budgets of 2 MB and 500 KB;
//
//   - INGOT_POINTS_BYTES=N,N,... other budgets; INGOT_POINTS_ORDER (5);
//     INGOT_POINTS_METHODS=m,m,...; INGOT_POINTS_FORM=interpolated keeps
//     Kneser-Ney's pruned models interpolated, for comparison.
//
//     INGOT_POINTS_METHODS=kneser-ney go test -run '^$' -bench BudgetPoints -benchtime 1x -timeout 2h ./compile/budget
func BenchmarkBudgetPoints(b *testing.B) {
	all, err := corpus.SOTU()
	if err != nil {
		b.Fatal(err)
	}
	var train, held []string
	budgets := []int64{14226248 / 16}
	if os.Getenv("INGOT_POINTS_SPLIT") == "tail" {
		for i, s := range all[max(0, len(all)-20000):] {
			if i%10 == 4 {
				held = append(held, s)
			} else {
				train = append(train, s)
			}
		}
		budgets = []int64{2000000, 500000}
	} else {
		train, held = corpus.Split(all, 0)
	}
	if s := os.Getenv("INGOT_POINTS_BYTES"); s != "" {
		budgets = nil
		for _, f := range strings.Split(s, ",") {
			n, err := strconv.ParseInt(f, 10, 64)
			if err != nil {
				b.Fatal(err)
			}
			budgets = append(budgets, n)
		}
	}
	order := 5
	if s := os.Getenv("INGOT_POINTS_ORDER"); s != "" {
		if order, err = strconv.Atoi(s); err != nil {
			b.Fatal(err)
		}
	}
	methods := estimate.Methods
	if s := os.Getenv("INGOT_POINTS_METHODS"); s != "" {
		methods = nil
		for _, f := range strings.Split(s, ",") {
			methods = append(methods, estimate.Method(f))
		}
	}
	c := fixture.Counts(b, order, train)
	var dev, test [][]string
	for i, s := range held {
		if i%2 == 0 {
			dev = append(dev, strings.Fields(s))
		} else {
			test = append(test, strings.Fields(s))
		}
	}
	for range b.N {
		for _, m := range methods {
			bld, err := NewBuilder(c, Options{Estimate: estimate.Options{Method: m, Order: order}, Quantize: q8Points, Heldout: dev,
				interpolated: os.Getenv("INGOT_POINTS_FORM") == "interpolated"})
			if err != nil {
				b.Fatal(err)
			}
			for _, budget := range budgets {
				began := time.Now()
				res, err := bld.Fit(budget)
				if err != nil {
					progress("%s %d: %v", m, budget, err)
					continue
				}
				for _, cand := range res.Candidates {
					progress("  %s %d bytes: compared %+v", m, budget, cand)
				}
				with, without, unk := pointScores(b, res.Model, test)
				progress("%s %d bytes: order %d %s, %d bytes, n-grams %v: TEST perplexity %.3f (without <unk> %.3f), log10 P(<unk>) %.3f; DEV %.3f quantized, %.3f compared (%.0f s)",
					m, budget, res.Chosen.Order, res.Chosen.Form, res.Chosen.FileBytes, res.Chosen.NGrams, with, without, unk,
					res.Perplexity, res.Chosen.Perplexity, time.Since(began).Seconds())
			}
		}
	}
}

var q8Points = quantize.Options{Bits: 8, Trainer: quantize.LeastSquares}

// pointScores returns TEST perplexity with and without <unk> and the
// unigram log10 probability of <unk>.
func pointScores(b testing.TB, m *tables.Tables, sentences [][]string) (with, without, unk float64) {
	b.Helper()
	data, err := format.Marshal(m)
	if err != nil {
		b.Fatal(err)
	}
	f, err := format.FromBytes(data)
	if err != nil {
		b.Fatal(err)
	}
	sc := score.NewScorer(f)
	var sum score.Summary
	for _, s := range sentences {
		sum.Add(sc.Score(s))
	}
	id := slices.Index(m.Vocab, tables.Unknown)
	return sum.Perplexity(), sum.PerplexityWithoutUnknown(), float64(m.Levels[0].LogProb[id])
}
