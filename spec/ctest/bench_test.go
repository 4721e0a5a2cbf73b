package ctest

import (
	"fmt"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// benchSentences is how much of the bundled corpus the speed benchmark's
// models are built from (0: all of it); INGOT_BENCH_SENTENCES overrides it.
const benchSentences = 0

// goIDs maps text as the C driver's bench mode does: tokens split at
// spaces, words outside the vocabulary (and <s>) as <unk>, each sentence
// followed by a sentence end (noNode here).
func goIDs(m *format.Model, text string) []uint32 {
	var ids []uint32
	for _, line := range strings.Split(text, "\n") {
		toks := strings.Fields(line)
		if len(toks) == 0 {
			continue
		}
		for _, tok := range toks {
			id, ok := m.ID(tok)
			if !ok || id == m.StartID() {
				id = m.UnknownID()
			}
			ids = append(ids, id)
		}
		ids = append(ids, ^uint32(0))
	}
	return ids
}

// goScore scores the ids as the driver does and returns the sum.
func goScore(m *format.Model, ids []uint32) float64 {
	st := m.StartState()
	sum := 0.0
	for _, id := range ids {
		if id == ^uint32(0) {
			sum += m.Next(&st, m.EndID())
			st = m.StartState()
			continue
		}
		sum += m.Next(&st, id)
	}
	return sum
}

func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[len(s)/2]
}

// BenchmarkNextCAgainstGo measures per-word scoring of running held-out
// text with the C reader (spec/c, built -O2, timed inside the driver) and
// with the Go reader (format.Model.Next) on the same model file and the
// same words, in alternating rounds, and reports the medians and their
// ratio. The models are 5-gram Kneser-Ney models of the bundled State of
// the Union text (every tenth sentence held out), in floats and with 8-bit
// codebooks.
func BenchmarkNextCAgainstGo(b *testing.B) {
	p := tools(b)
	limit := benchSentences
	if v := os.Getenv("INGOT_BENCH_SENTENCES"); v != "" {
		n, err := strconv.Atoi(v)
		if err != nil {
			b.Fatal(err)
		}
		limit = n
	}
	all, err := corpus.SOTU()
	if err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(all, limit)
	text := strings.Join(held, "\n") + "\n"
	tb, err := fixture.EstimateText(train, 5, estimate.Options{Method: estimate.KneserNey})
	if err != nil {
		b.Fatal(err)
	}
	q8, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
	if err != nil {
		b.Fatal(err)
	}
	dir := b.TempDir()
	for _, mod := range []struct {
		name string
		tb   *tables.Tables
	}{{"float", tb}, {"8-bit", q8}} {
		path := filepath.Join(dir, mod.name+".ingot")
		f, err := os.Create(path)
		if err != nil {
			b.Fatal(err)
		}
		if err := format.Write(f, mod.tb); err != nil {
			b.Fatal(err)
		}
		if err := f.Close(); err != nil {
			b.Fatal(err)
		}
		b.Run(mod.name, func(b *testing.B) {
			m, err := format.Open(path)
			if err != nil {
				b.Fatal(err)
			}
			defer m.Close()
			ids := goIDs(m, text)
			goScore(m, ids) // warm up
			var cNs, goNs []float64
			var cSum, goSum float64
			for b.Loop() {
				for range 5 {
					r := run(b, text, false, p.driver, "bench", path, "3")
					var words int
					var ns float64
					if _, err := fmt.Sscanf(r.stdout, "words %d ns_per_word %g sum %g", &words, &ns, &cSum); err != nil || r.code != 0 {
						b.Fatalf("driver: %q %s (%v)", r.stdout, r.stderr, err)
					}
					if words != len(ids) {
						b.Fatalf("the C driver scored %d words, Go %d", words, len(ids))
					}
					cNs = append(cNs, ns)
					start := time.Now()
					goSum = goScore(m, ids)
					goNs = append(goNs, float64(time.Since(start).Nanoseconds())/float64(len(ids)))
				}
			}
			// Both readers scored the same words: their sums agree
			// (the driver prints 6 digits of a sum taken 4 times).
			if d := cSum/4 - goSum; d > 1e-5*max(1, -goSum) || d < -1e-5*max(1, -goSum) {
				b.Fatalf("sums differ: C %v, Go %v", cSum/4, goSum)
			}
			info, _ := os.Stat(path)
			b.ReportMetric(median(cNs), "c-ns/word")
			b.ReportMetric(median(goNs), "go-ns/word")
			b.ReportMetric(median(cNs)/median(goNs), "c/go")
			b.ReportMetric(float64(len(ids)), "words")
			b.ReportMetric(float64(info.Size())/(1<<20), "MiB")
		})
	}
}
