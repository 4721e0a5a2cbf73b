package format_test

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
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
	all, err := corpus.SOTU()
	if err != nil {
		b.Fatal(err)
	}
	train, held := corpus.Split(all, 0)
	scoreCached(b, "bundled-5gram-8bit", train, held)
}

// scoreCached builds (or finds in $INGOT_BENCH_CACHE) the version-2 file of
// the 8-bit 5-gram Kneser-Ney model of train, writes it in version 3 (with
// INGOT_BENCH_KEEP_V3 set, reuses the version-3 file of an earlier run: for
// changes to the query code, not to the layout), and scores held with both.
func scoreCached(b *testing.B, name string, train, held []string) {
	dir := os.Getenv("INGOT_BENCH_CACHE")
	if dir == "" {
		dir = b.TempDir()
	}
	path := filepath.Join(dir, name+".v2")
	if _, err := os.Stat(path); err != nil {
		if err := os.MkdirAll(dir, 0o755); err != nil {
			b.Fatal(err)
		}
		c, err := counts.NewCounter(5)
		if err != nil {
			b.Fatal(err)
		}
		for _, s := range train {
			c.AddSentence(strings.Fields(s))
		}
		tb, _, err := estimate.Estimate(c.Counts(1), estimate.Options{Method: estimate.KneserNey, Order: 5})
		if err != nil {
			b.Fatal(err)
		}
		c = nil
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
	defer m2.Close()
	ngrams := 0
	for k := 1; k <= m2.Order(); k++ {
		ngrams += m2.Count(k)
	}
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
	m3, err := format.Open(v3)
	if err != nil {
		b.Fatal(err)
	}
	defer m3.Close()
	b.ReportMetric(float64(ngrams), "ngrams")
	b.ReportMetric(float64(m3.Size())/float64(ngrams), "v3-bytes/ngram")
	reportTrieBytes(b, m3, ngrams)
	reportScoring(b, m3, m2, held)
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
