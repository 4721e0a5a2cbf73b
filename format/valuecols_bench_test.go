package format_test

import (
	"fmt"
	"math"
	"os"
	"slices"
	"strings"
	"testing"

	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/pipeline"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
	"ingot/verify"
)

// BenchmarkValueColumns builds only the 8-bit 5-gram Kneser-Ney model of
// nine tenths of the bundled corpus (every tenth sentence held out) and
// reports the parts of its version-3 file, the stored bits per value of
// its probability and back-off columns, the held-out perplexity against
// the float model, and the largest |S(h) - 1| ingot verify measures.
// Run it once: go test ./format -run '^$' -bench ValueColumns -benchtime 1x
// (about 40 s; -v adds each value column's stored bits, entropy and the
// shares of its most used levels).
func BenchmarkValueColumns(b *testing.B) {
	train, held := sotuSplit(b)
	var tb *tables.Tables
	// INGOT_KN5_CACHE names a file to keep the float model in between runs
	// (written when missing), so that a run measuring only the quantizer
	// skips counting and estimating.
	cache := os.Getenv("INGOT_KN5_CACHE")
	if cache != "" {
		if m, err := format.Open(cache); err == nil {
			tb, err = format.ToTables(m)
			if err != nil {
				b.Fatal(err)
			}
		}
	}
	if tb == nil {
		var err error
		cs := fixture.Counts(b, 5, train)
		tb, _, err = estimate.Estimate(cs, estimate.Options{Method: estimate.KneserNey, Order: 5})
		if err != nil {
			b.Fatal(err)
		}
		if cache != "" {
			data, err := format.Marshal(tb)
			if err != nil {
				b.Fatal(err)
			}
			if err := os.WriteFile(cache, data, 0o644); err != nil {
				b.Fatal(err)
			}
		}
	}
	q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		b.Fatal(err)
	}
	ngrams := 0
	for k := 1; k <= tb.Order(); k++ {
		ngrams += tb.Len(k)
	}
	dir := b.TempDir()
	var sentences [][]string
	for _, s := range held {
		sentences = append(sentences, strings.Fields(s))
	}
	var ppl [2]float64
	for x, t := range []*tables.Tables{tb, q} {
		data, err := format.Marshal(t)
		if err != nil {
			b.Fatal(err)
		}
		path := dir + "/m" + string(rune('0'+x))
		if err := os.WriteFile(path, data, 0o644); err != nil {
			b.Fatal(err)
		}
		m, err := format.Open(path)
		if err != nil {
			b.Fatal(err)
		}
		ppl[x] = pipeline.Perplexity(m, sentences)
		m.Close()
		if x == 1 {
			b.ReportMetric(float64(len(data))/float64(ngrams), "bytes/ngram")
			reportComponents(b, path, ngrams)
			printColumns(b, path)
			rep, err := verify.Bytes(data, verify.Options{})
			if err != nil || !rep.OK() {
				b.Fatalf("ingot verify: %v %v", err, rep.Failed())
			}
			n := rep.Normalisation
			b.ReportMetric(n.MaxDeviation, "max|S-1|")
			b.ReportMetric(float64(n.Histogram[6]+n.Histogram[7]), "contexts>1e-4")
		}
	}
	b.ReportMetric(ppl[0], "ppl-float")
	b.ReportMetric(ppl[1], "ppl-8bit")
	b.ReportMetric(100*(ppl[1]/ppl[0]-1), "ppl-cost-%")
}

// printColumns logs, per order, each quantized column's stored bits per
// value, entropy and the shares of its 15 to 255 most used levels.
func printColumns(b *testing.B, path string) {
	m, err := format.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	defer m.Close()
	for _, backoff := range []bool{false, true} {
		for k := 1; k <= m.Order(); k++ {
			cb := m.Codebook(k, backoff)
			if cb == nil {
				continue
			}
			written, hist, n := columnLevels(b, m, k, backoff)
			var ent float64
			usedLevels := 0
			for _, h := range hist {
				if h > 0 {
					usedLevels++
					ent -= float64(h) * math.Log2(float64(h)/float64(n))
				}
			}
			sorted := slices.Clone(hist)
			slices.Sort(sorted)
			slices.Reverse(sorted)
			cov := ""
			for _, t := range []int{15, 31, 63, 127, 255} {
				c := 0
				for _, h := range sorted[:min(t, len(sorted))] {
					c += h
				}
				cov += fmt.Sprintf(" top%d %.3f", t, float64(c)/float64(n))
			}
			b.Logf("back-offs %v, order %d: %d values, codebook %d levels (%d used), stored %.2f bits a value, entropy %.2f bits; shares of the most used levels:%s", backoff, k, n, len(cb), usedLevels, written/float64(n), ent/float64(n), cov)
		}
	}
}
