package format_test

import (
	"bytes"
	"fmt"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/format"
)

// BenchmarkID measures Model.ID, word to id, on running held-out text
// (words outside the vocabulary included, as a decoder meets them), for
// the vocabulary of the bundled 5-gram model (nine tenths of the State of
// the Union text) and of the generated text of BenchmarkScoringGenerated.
// The vocabulary sections depend only on the words, so the models are
// bigram models of the same training text: the same vocabulary, built in
// seconds. Every word-hash encoding a version-3 file may hold is written
// for the same vocabulary and timed side by side in one process (seven
// rounds interleaved, medians), with the binary search of version 1 for
// reference:
//
//	go test ./format -run '^$' -bench 'ID$' -benchtime 1x
//
// Metrics: <variant>-ns/word, and <variant>-hash-bytes (the word hash
// section) and vocab-B/word (word starts, text and hash per word).
func BenchmarkID(b *testing.B) {
	b.Run("bundled", func(b *testing.B) {
		train, held := sotuSplit(b)
		benchID(b, train, held)
	})
	b.Run("generated", func(b *testing.B) {
		var text bytes.Buffer
		if err := corpus.Generate(&text, 1, 230000, 50000); err != nil {
			b.Fatal(err)
		}
		train, held := corpus.Split(strings.Split(strings.TrimSpace(text.String()), "\n"), 0)
		benchID(b, train, held)
	})
}

func benchID(b *testing.B, train, held []string) {
	tb := fixture.Estimate(b, train, 2, estimate.Options{Method: estimate.KneserNey})
	type variant struct {
		name string
		m    *format.Model
		hash int64
	}
	var variants []variant
	add := func(name string, data []byte, err error) {
		if err != nil {
			b.Fatal(err)
		}
		m, err := format.FromBytes(data)
		if err != nil {
			b.Fatal(err)
		}
		var hash int64
		for _, s := range m.Sections() {
			if s.Kind == format.KindWordHash {
				hash = s.Length
			}
		}
		variants = append(variants, variant{name, m, hash})
	}
	data, err := format.MarshalVersion(tb, 1)
	add("binary-search", data, err)
	data, err = format.MarshalWordHash(tb, format.Plain, 0)
	add("u32", data, err)
	data, err = format.MarshalWordHash(tb, format.PackedIDs, 0)
	add("packed", data, err)
	for _, tag := range []uint{4, 6, 8, 12} {
		data, err = format.MarshalWordHash(tb, format.TaggedIDs, tag)
		add(fmt.Sprintf("tag%d", tag), data, err)
	}
	data, err = format.Marshal(tb)
	add("written", data, err)
	var words []string
	for _, s := range held {
		words = append(words, strings.Fields(s)...)
	}
	known := 0
	for _, w := range words {
		id, ok := variants[0].m.ID(w)
		if ok {
			known++
		}
		for _, v := range variants[1:] {
			if got, gotOK := v.m.ID(w); got != id || gotOK != ok {
				b.Fatalf("%s: ID(%q) = %d, %v; binary search %d, %v", v.name, w, got, gotOK, id, ok)
			}
		}
	}
	times := make([][]float64, len(variants))
	sink := uint32(0)
	for range b.N {
		for range 7 {
			for i, v := range variants {
				start := time.Now()
				for _, w := range words {
					id, _ := v.m.ID(w)
					sink += id
				}
				times[i] = append(times[i], float64(time.Since(start).Nanoseconds())/float64(len(words)))
			}
		}
	}
	_ = sink
	b.ReportMetric(float64(len(words)), "words")
	b.ReportMetric(float64(known)/float64(len(words)), "known-fraction")
	b.ReportMetric(float64(tb.Order()), "order")
	b.ReportMetric(float64(len(tb.Vocab)), "V")
	for i, v := range variants {
		b.ReportMetric(median(times[i]), v.name+"-ns/word")
		if v.hash > 0 {
			b.ReportMetric(float64(v.hash), v.name+"-hash-bytes")
		}
	}
}
