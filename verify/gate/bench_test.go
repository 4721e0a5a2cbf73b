package gate

import (
	"bytes"
	"ingot/format/formattest"
	"math"
	"strings"
	"testing"
	"time"

	"ingot/compile/corpus"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/format"
)

// denseKL is the divergence as the gate computed it before: every
// prediction builds both models' whole distributions over the events, in
// time linear in the vocabularies. Kept here to measure the two side by
// side; it goes through the event mapping of d and the query path of the
// models, not through Divergence's closed form.
func denseKL(d *Divergence, tokens []string) float64 {
	dist := func(s *distribution) []float64 {
		out := make([]float64, d.events)
		for id := range s.event {
			if ev := s.event[id]; ev >= 0 {
				st := s.state
				out[ev] += math.Pow(10, s.m.Next(&st, uint32(id)))
			}
		}
		return out
	}
	total := 0.0
	d.p.begin()
	d.q.begin()
	for t := 0; t <= len(tokens); t++ {
		p, q := dist(&d.p), dist(&d.q)
		zp, zq := 0.0, 0.0
		for e := range p {
			zp += p[e]
			zq += q[e]
		}
		for e := range p {
			if x := p[e] / zp; x > 0 {
				total += x * math.Log(x/(q[e]/zq))
			}
		}
		if t < len(tokens) {
			d.p.read(tokens[t])
			d.q.read(tokens[t])
		}
	}
	return total
}

// benchModels builds the baseline (order n) and the candidate (order n-1)
// from the same counts.
func benchModels(b *testing.B, train []string, order int) (base, cand *format.Model) {
	c, err := counts.NewCounter(order)
	if err != nil {
		b.Fatal(err)
	}
	for _, s := range train {
		c.AddSentence(strings.Fields(s))
	}
	cs := c.Counts(1)
	for i, n := range []int{order, order - 1} {
		tb, _, err := estimate.Estimate(cs, estimate.Options{Method: estimate.KneserNey, Order: n})
		if err != nil {
			b.Fatal(err)
		}
		m := formattest.Open(b, tb)
		if i == 0 {
			base = m
		} else {
			cand = m
		}
	}
	return base, cand
}

// BenchmarkReleaseGate times the whole gate (both scores, the n-gram
// differences, the divergence at every held-out prediction) and, side by
// side on the first 20 held-out sentences, the divergence against the
// former whole-vocabulary computation:
//
//   - sotu-5gram: the full bundled State of the Union text, every tenth
//     sentence held out, modified Kneser-Ney of order 5 against order 4;
//   - generated-100k: 200,000 generated sentences over a 100,000-word
//     vocabulary (corpus.Generate, seed 1) and 2,000 held out, order 3
//     against order 2.
func BenchmarkReleaseGate(b *testing.B) {
	for _, c := range []struct {
		name  string
		order int
		data  func() (train, held []string)
	}{
		{"sotu-5gram", 5, func() ([]string, []string) {
			all, err := corpus.SOTU()
			if err != nil {
				b.Fatal(err)
			}
			return corpus.Split(all, 0)
		}},
		{"generated-100k", 3, func() ([]string, []string) {
			var buf bytes.Buffer
			if err := corpus.Generate(&buf, 1, 202_000, 100_000); err != nil {
				b.Fatal(err)
			}
			lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
			return lines[:200_000], lines[200_000:]
		}},
	} {
		b.Run(c.name, func(b *testing.B) {
			train, held := c.data()
			base, cand := benchModels(b, train, c.order)
			text := strings.Join(held, "\n")
			b.ResetTimer()
			for b.Loop() {
				if _, err := Compare(cand, base, "held", strings.NewReader(text)); err != nil {
					b.Fatal(err)
				}
			}
			b.StopTimer()
			// Side by side: the closed form and the whole-vocabulary
			// computation on the same 20 sentences.
			sample := held[:20]
			d := NewDivergence(base, cand)
			timeIt := func(f func(tokens []string) float64) (float64, float64) {
				start := time.Now()
				sum := 0.0
				for _, s := range sample {
					sum += f(strings.Fields(s))
				}
				return time.Since(start).Seconds(), sum
			}
			fast, a := timeIt(d.Sentence)
			slow, z := timeIt(func(tokens []string) float64 { return denseKL(d, tokens) })
			if math.Abs(a-z) > 1e-6*math.Max(1, z) {
				b.Fatalf("the two computations disagree: %v and %v", a, z)
			}
			b.ReportMetric(float64(base.VocabSize()), "words")
			b.ReportMetric(float64(len(held)), "sentences")
			b.ReportMetric(slow/fast, "x-faster-than-whole-vocabulary")
		})
	}
}
