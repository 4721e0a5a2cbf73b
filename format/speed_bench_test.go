package format_test

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/format"
	"ingot/quantize"
)

// BenchmarkScoringGenerated is the scoring part of
// BenchmarkLayoutsGenerated alone, for iterating on the query code and the
// trie layout: the 8-bit 5-gram model of the same generated text, written
// in version 2 once and kept in the directory $INGOT_BENCH_CACHE (when set;
// otherwise built afresh in a temporary directory), read back and written
// in version 3 by the code under test, then both scored side by side with
// the pointer chase (reportScoring).
//
//	INGOT_BENCH_CACHE=/tmp/ingot-bench go test ./format -run '^$' -bench ScoringGenerated -benchtime 1x
func BenchmarkScoringGenerated(b *testing.B) {
	var text bytes.Buffer
	if err := corpus.Generate(&text, 1, 230000, 50000); err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(strings.Split(strings.TrimSpace(text.String()), "\n"), 0)
	scoreCached(b, "generated-5gram-8bit", train, held)
}

// BenchmarkScoringBundled is BenchmarkScoringGenerated on the model of
// BenchmarkLayouts: nine tenths of the bundled corpus, 5-gram Kneser-Ney,
// 8 bits.
//
//	INGOT_BENCH_CACHE=/tmp/ingot-bench go test ./format -run '^$' -bench ScoringBundled -benchtime 1x
func BenchmarkScoringBundled(b *testing.B) {
	train, held := sotuSplit(b)
	scoreCached(b, "bundled-5gram-8bit", train, held)
}

// scoreCached builds (or finds in $INGOT_BENCH_CACHE) the version-2 file of
// the 8-bit 5-gram Kneser-Ney model of train, writes it in version 3 (with
// INGOT_BENCH_KEEP_V3 set, reuses the version-3 file of an earlier run: for
// changes to the query code, not to the layout), and scores held with both.
func scoreCached(b *testing.B, name string, train, held []string) {
	m3, m2 := cachedModels(b, name, train)
	ngrams := 0
	for k := 1; k <= m2.Order(); k++ {
		ngrams += m2.Count(k)
	}
	b.ReportMetric(float64(ngrams), "ngrams")
	b.ReportMetric(float64(m3.Size())/float64(ngrams), "v3-bytes/ngram")
	reportTrieBytes(b, m3, ngrams)
	reportScoring(b, m3, m2, held)
	reportCachedScoring(b, m3, m2, held)
}

// reportCachedScoring reports the time of a scoring step whose reads hit
// the cache: each word is scored 3 times from copies of the same state,
// the first bringing the step's lines into the cache, against once; the
// difference, halved, is the step's cost without cache misses, the work a
// layout asks of the processor. Medians of five rounds, version 3 and
// version 2 interleaved.
func reportCachedScoring(b *testing.B, m3, m2 *format.Model, held []string) {
	ids := heldIDs(m3, held)
	pass := func(m *format.Model, repeats int) float64 {
		s := m.StartState()
		sum := 0.0
		start := time.Now()
		for _, w := range ids {
			for range repeats - 1 {
				t := s
				sum += m.Next(&t, w)
			}
			sum += m.Next(&s, w)
			if w == m.EndID() {
				s = m.StartState()
			}
		}
		d := float64(time.Since(start).Nanoseconds()) / float64(len(ids))
		if math.IsNaN(sum) {
			b.Fatal("NaN score")
		}
		return d
	}
	var h3, h2 []float64
	for range 5 {
		h3 = append(h3, (pass(m3, 3)-pass(m3, 1))/2)
		h2 = append(h2, (pass(m2, 3)-pass(m2, 1))/2)
	}
	b.ReportMetric(median(h3), "v3-cached-ns/word")
	b.ReportMetric(median(h2), "v2-cached-ns/word")
}

// cachedModels returns the version-3 and version-2 models of scoreCached,
// open; they are closed when the benchmark ends.
func cachedModels(b *testing.B, name string, train []string) (m3, m2 *format.Model) {
	dir := os.Getenv("INGOT_BENCH_CACHE")
	if dir == "" {
		dir = b.TempDir()
	}
	path := filepath.Join(dir, name+".v2")
	if _, err := os.Stat(path); err != nil {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			b.Fatal(err)
		}
		tb := fixture.Estimate(b, train, 5, estimate.Options{Method: estimate.KneserNey})
		q, _, err := quantize.Model(tb, quantize.Options{Bits: 8, Trainer: quantize.LeastSquares})
		if err != nil {
			b.Fatal(err)
		}
		data, err := format.MarshalVersion(q, 2)
		if err != nil {
			b.Fatal(err)
		}
		if err := os.WriteFile(path+".tmp", data, 0o644); err != nil {
			b.Fatal(err)
		}
		if err := os.Rename(path+".tmp", path); err != nil {
			b.Fatal(err)
		}
	}
	m2, err := format.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { m2.Close() })
	v3 := filepath.Join(dir, name+".v3")
	if _, err := os.Stat(v3); err != nil || os.Getenv("INGOT_BENCH_KEEP_V3") == "" {
		q, err := format.ToTables(m2)
		if err != nil {
			b.Fatal(err)
		}
		data, err := format.MarshalVersion(q, 3)
		if err != nil {
			b.Fatal(err)
		}
		if err := os.WriteFile(v3, data, 0o644); err != nil {
			b.Fatal(err)
		}
	}
	m3, err = format.Open(v3)
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { m3.Close() })
	return m3, m2
}

// reportTrieBytes reports the bytes per n-gram of the trie's sections in a
// version-3 model: last-word keys, child starts and context marks.
func reportTrieBytes(b *testing.B, m *format.Model, ngrams int) {
	var trie int64
	for _, s := range m.Sections() {
		switch s.Kind {
		case format.KindLastWords, format.KindChildStarts, format.KindContexts:
			trie += s.Length
		}
	}
	b.ReportMetric(float64(trie)/float64(ngrams), "trie-B/ngram")
}

// BenchmarkScoringGeneratedLarge is BenchmarkScoringGenerated on a model
// well above the caches: the 8-bit 5-gram Kneser-Ney model of 750,000
// generated sentences over 50,000 words (every tenth held out; 28237532
// n-grams, 76.5 MiB in version 3). Building it takes about 4 minutes and
// 5.8 GiB of memory; the script .ci/benchmarks.d/32-scoring-large.sh runs
// it; with INGOT_BENCH_CACHE set it is built once.
//
//	INGOT_BENCH_CACHE=/tmp/ingot-bench go test ./format -run '^$' -bench ScoringGeneratedLarge -benchtime 1x
func BenchmarkScoringGeneratedLarge(b *testing.B) {
	var text bytes.Buffer
	if err := corpus.Generate(&text, 1, 750000, 50000); err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(strings.Split(strings.TrimSpace(text.String()), "\n"), 0)
	text = bytes.Buffer{}
	scoreCached(b, "generated-large-5gram-8bit", train, held)
}
