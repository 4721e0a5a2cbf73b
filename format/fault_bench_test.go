package format

import "testing"

// The cost of the fault-safe mode (Guard) on the decoder's query path, side
// by side with BenchmarkNext in one process: Guard around every word, and
// Guard around every sentence (the words up to </s>). Report ns/word of
// each against BenchmarkNext.
func BenchmarkNextGuard(b *testing.B) {
	tb := benchTables()
	m := mustOpen(b, mustMarshal(b, tb))
	text := benchText(m, 1<<16)
	b.Run("unguarded", func(b *testing.B) {
		s, i, sum := m.StartState(), 0, 0.0
		for b.Loop() {
			w := text[i]
			i = (i + 1) & (len(text) - 1)
			sum += m.Next(&s, w)
			if w == m.EndID() {
				s = m.StartState()
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/word")
		_ = sum
	})
	b.Run("per-word", func(b *testing.B) {
		s, i, sum := m.StartState(), 0, 0.0
		b.ReportAllocs()
		for b.Loop() {
			w := text[i]
			i = (i + 1) & (len(text) - 1)
			if err := Guard(func() error { sum += m.Next(&s, w); return nil }); err != nil {
				b.Fatal(err)
			}
			if w == m.EndID() {
				s = m.StartState()
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N), "ns/word")
		_ = sum
	})
	b.Run("per-sentence", func(b *testing.B) {
		i, words, sum := 0, 0, 0.0
		b.ReportAllocs()
		for b.Loop() {
			err := Guard(func() error {
				s := m.StartState()
				for {
					w := text[i]
					i = (i + 1) & (len(text) - 1)
					words++
					sum += m.Next(&s, w)
					if w == m.EndID() {
						return nil
					}
				}
			})
			if err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(words), "ns/word")
		_ = sum
	})
}
