package format

import (
	"ingot/compile/fixture"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"ingot/compile/tables"
)

// benchTables is a generated order-3 model of about 370 thousand n-grams
// over 20 thousand words, with a heavy-tailed choice of words.
func benchTables() *tables.Tables {
	return fixture.RandomTables(42, 20000, []int{150000, 200000})
}

func ngrams(tb *tables.Tables) int {
	n := 0
	for k := 1; k <= tb.Order(); k++ {
		n += tb.Len(k)
	}
	return n
}

// benchText returns sentences of running text in which most words follow a
// stored continuation of their context, as in text the model was built
// from, so that lookups reach every order.
func benchText(m *Model, size int) []uint32 {
	rng := rand.New(rand.NewPCG(9, 9))
	text := make([]uint32, 0, size)
	history := []uint32{m.StartID()}
	for len(text) < size {
		w := 3 + rng.Uint32N(uint32(m.VocabSize()-3))
		if rng.IntN(5) > 0 {
			w = storedContinuation(rng, m, history, w)
		}
		if w == m.StartID() || len(history) > 25 {
			w = m.EndID()
		}
		text = append(text, w)
		history = append(history, w)
		if w == m.EndID() {
			history = history[:1]
		}
	}
	return text
}

// BenchmarkNext scores running text word by word with a State, as a
// decoder does.
func BenchmarkNext(b *testing.B) {
	tb := benchTables()
	data := mustMarshal(b, tb)
	m := mustOpen(b, data)
	text := benchText(m, 1<<16)
	s := m.StartState()
	i, sum := 0, 0.0
	b.ReportAllocs()
	for b.Loop() {
		w := text[i]
		i = (i + 1) & (len(text) - 1)
		sum += m.Next(&s, w)
		if w == m.EndID() {
			s = m.StartState()
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/word")
	b.ReportMetric(float64(len(data))/float64(ngrams(tb)), "bytes/ngram")
	b.ReportMetric(float64(ngrams(tb)), "ngrams")
	_ = sum
}

// BenchmarkLogProb scores single predictions with a full context each time,
// the stateless path.
func BenchmarkLogProb(b *testing.B) {
	tb := benchTables()
	m := mustOpen(b, mustMarshal(b, tb))
	text := benchText(m, 1<<16)
	i, sum := 2, 0.0
	for b.Loop() {
		sum += m.LogProb(text[i-2:i], text[i])
		if i++; i == len(text) {
			i = 2
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/word")
	_ = sum
}

// BenchmarkOpen opens models of very different sizes, from a file (mapped)
// and from bytes in memory: the time must not grow with the number of
// n-grams.
func BenchmarkOpen(b *testing.B) {
	for _, c := range []struct {
		name string
		tb   *tables.Tables
	}{
		{"tiny", tinyModel(b)},
		{"medium", fixture.RandomTables(42, 2000, []int{15000, 20000})},
		{"large", benchTables()},
	} {
		path := filepath.Join(b.TempDir(), "model.ingot")
		data := mustMarshal(b, c.tb)
		if err := os.WriteFile(path, data, 0o644); err != nil {
			b.Fatal(err)
		}
		b.Run("file/"+c.name, func(b *testing.B) {
			for b.Loop() {
				m, err := Open(path)
				if err != nil {
					b.Fatal(err)
				}
				m.Close()
			}
			b.ReportMetric(float64(ngrams(c.tb)), "ngrams")
			b.ReportMetric(float64(len(data)), "file-bytes")
		})
		b.Run("bytes/"+c.name, func(b *testing.B) {
			for b.Loop() {
				if _, err := FromBytes(data); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(ngrams(c.tb)), "ngrams")
		})
	}
}

// BenchmarkWrite encodes the generated model.
func BenchmarkWrite(b *testing.B) {
	tb := benchTables()
	size := 0
	for b.Loop() {
		size = len(mustMarshal(b, tb))
	}
	b.ReportMetric(float64(size)/float64(ngrams(tb)), "bytes/ngram")
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(ngrams(tb)), "ns/ngram")
}
