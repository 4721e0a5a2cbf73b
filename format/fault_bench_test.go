package format

import (
	"testing"
	"time"
)

// BenchmarkNextGuard measures the cost of the fault-safe mode (Guard) on
// the decoder's query path. Each iteration scores the same 4096 words of
// running text three ways, one after the other (each first in turn) so that
// the machine's load and the caches fall alike on all three: plain Next, Next inside a Guard per word, and
// a Guard per sentence around the Nexts up to </s>. It reports ns/word of
// each and the extra ns/word of the two guarded ways.
func BenchmarkNextGuard(b *testing.B) {
	tb := benchTables()
	m := mustOpen(b, mustMarshal(b, tb))
	text := benchText(m, 1<<16)
	const block = 4096
	words, at, sum := 0, 0, 0.0
	b.ReportAllocs()
	ways := []func(span []uint32){
		func(span []uint32) { // plain Next
			s := m.StartState()
			for _, w := range span {
				sum += m.Next(&s, w)
				if w == m.EndID() {
					s = m.StartState()
				}
			}
		},
		func(span []uint32) { // a Guard per word
			s := m.StartState()
			for _, w := range span {
				if err := Guard(func() error { sum += m.Next(&s, w); return nil }); err != nil {
					b.Fatal(err)
				}
				if w == m.EndID() {
					s = m.StartState()
				}
			}
		},
		func(span []uint32) { // a Guard per sentence
			for i := 0; i < len(span); {
				err := Guard(func() error {
					s := m.StartState()
					for ; i < len(span); i++ {
						sum += m.Next(&s, span[i])
						if span[i] == m.EndID() {
							i++
							return nil
						}
					}
					return nil
				})
				if err != nil {
					b.Fatal(err)
				}
			}
		},
	}
	var took [3]time.Duration
	round := 0
	for b.Loop() {
		span := text[at : at+block]
		at = (at + block) % len(text)
		// Each way goes first in turn: the first pass over a span finds
		// the caches colder than the two after it.
		for j := range ways {
			way := (round + j) % len(ways)
			t0 := time.Now()
			ways[way](span)
			took[way] += time.Since(t0)
		}
		round++
		words += block
	}
	plain, perWord, perSentence := took[0], took[1], took[2]
	ns := func(d time.Duration) float64 { return float64(d.Nanoseconds()) / float64(words) }
	b.ReportMetric(ns(plain), "ns/word-plain")
	b.ReportMetric(ns(perWord), "ns/word-guard-per-word")
	b.ReportMetric(ns(perSentence), "ns/word-guard-per-sentence")
	b.ReportMetric(ns(perWord)-ns(plain), "extra-ns/word-per-word")
	b.ReportMetric(ns(perSentence)-ns(plain), "extra-ns/word-per-sentence")
	_ = sum
}

// BenchmarkGuardCall is the fixed cost of one Guard around nothing: what
// a Guard per word adds to every word, and a Guard per sentence to every
// sentence.
func BenchmarkGuardCall(b *testing.B) {
	n := 0
	for b.Loop() {
		Guard(func() error { n++; return nil })
	}
	_ = n
}
