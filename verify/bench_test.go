package verify

import (
	"ingot/compile/fixture"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/format"
)

// benchDir holds the benchmark model; TestMain removes it.
var benchDir = sync.OnceValues(func() (string, error) { return os.MkdirTemp("", "ingot-verify-bench-") })

// benchModel is the 5-gram modified Kneser-Ney model of the whole bundled
// corpus (1.8 million tokens, 4.6 million n-grams), built once per process
// (about half a minute) and kept in a temporary file.
var benchModel = sync.OnceValues(func() (string, error) {
	dir, err := benchDir()
	if err != nil {
		return "", err
	}
	all, err := corpus.SOTU()
	if err != nil {
		return "", err
	}
	tb, err := fixture.EstimateText(all, 5, estimate.Options{Method: estimate.KneserNey})
	if err != nil {
		return "", err
	}
	data, err := format.Marshal(tb)
	if err != nil {
		return "", err
	}
	path := filepath.Join(dir, "sotu-5-kneser-ney.ingot")
	return path, os.WriteFile(path, data, 0o644)
})

func TestMain(m *testing.M) {
	code := m.Run()
	if dir, err := benchDir(); err == nil {
		os.RemoveAll(dir)
	}
	os.Exit(code)
}

func benchPath(b *testing.B) (string, int) {
	path, err := benchModel()
	if err != nil {
		b.Fatal(err)
	}
	m, err := format.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	defer m.Close()
	n := 0
	for k := 1; k <= m.Order(); k++ {
		n += m.Count(k)
	}
	return path, n
}

// BenchmarkVerify runs every check on the full-corpus 5-gram model, from
// reading the file to the last sum. Compare its ns/ngram with
// BenchmarkLookupEveryNGram's: the README records the ratio.
func BenchmarkVerify(b *testing.B) {
	path, n := benchPath(b)
	for b.Loop() {
		rep, err := File(path, Options{})
		if err != nil || !rep.OK() {
			b.Fatalf("%v %v", err, rep.Err())
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/ngram")
	b.ReportMetric(float64(n), "ngrams")
}

// BenchmarkLookupEveryNGram looks each stored n-gram of the same model up
// once, in stored order (the order in which lookups share the most cache):
// "find" walks the trie to the n-gram with Model.Find (after Entries has
// decoded a version-3 trie), "find-fresh" the same on a model just opened;
// "logprob" asks
// Model.LogProb for the probability of its last word after the others, as
// a decoder asks.
func BenchmarkLookupEveryNGram(b *testing.B) {
	path, n := benchPath(b)
	m, err := format.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	defer m.Close()
	grams := make([]uint32, 0, 4*n)
	orders := make([]int, 0, n)
	for k := 1; k <= m.Order(); k++ {
		it := m.Entries(k)
		for it.Next() {
			grams = append(grams, it.Gram()...)
			orders = append(orders, k)
		}
	}
	b.Run("find", func(b *testing.B) {
		for b.Loop() {
			at := 0
			for _, k := range orders {
				if _, ok := m.Find(grams[at : at+k]); !ok {
					b.Fatalf("stored n-gram %v not found", grams[at:at+k])
				}
				at += k
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/ngram")
	})
	// A model no whole-trie walk has touched: in version 3 Find then takes
	// the running-text step of Next at every word (see Model.Find).
	b.Run("find-fresh", func(b *testing.B) {
		for b.Loop() {
			b.StopTimer()
			fresh, err := format.Open(path)
			if err != nil {
				b.Fatal(err)
			}
			b.StartTimer()
			at := 0
			for _, k := range orders {
				if _, ok := fresh.Find(grams[at : at+k]); !ok {
					b.Fatalf("stored n-gram %v not found", grams[at:at+k])
				}
				at += k
			}
			fresh.Close()
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/ngram")
	})
	b.Run("logprob", func(b *testing.B) {
		sum := 0.0
		for b.Loop() {
			at := 0
			for _, k := range orders {
				sum += m.LogProb(grams[at:at+k-1], grams[at+k-1])
				at += k
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/ngram")
		_ = sum
	})
}
