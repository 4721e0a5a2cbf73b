package inspect

import (
	"math"
	"testing"

	"ingot/format"
)

func TestStatistics(t *testing.T) {
	plain, quantized := demoModels(t)
	for _, tc := range []struct {
		name      string
		m         *format.Model
		quantized bool
	}{
		{"golden", openGolden(t), false},
		{"plain", plain, false},
		{"quantized", quantized, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			m := tc.m
			st := Statistics(m)
			tb, err := format.ToTables(m)
			if err != nil {
				t.Fatal(err)
			}
			// Every byte is in a section of one order, or shared.
			sum := st.SharedBytes
			total := 0
			for k, o := range st.Orders {
				sum += o.Bytes
				total += o.NGrams
				if o.NGrams != tb.Len(k+1) || st.NGrams[k] != o.NGrams {
					t.Errorf("order %d: %d n-grams, tables hold %d", k+1, o.NGrams, tb.Len(k+1))
				}
				if want := float64(o.Bytes) * 8 / float64(o.NGrams); float64(o.BitsPerNGram) != want {
					t.Errorf("order %d: %v bits per n-gram, want %v", k+1, o.BitsPerNGram, want)
				}
			}
			if sum != st.FileBytes || st.FileBytes != m.Size() || total != st.TotalNGrams {
				t.Errorf("bytes: shared + orders = %d, file %d; n-grams %d, total %d", sum, st.FileBytes, total, st.TotalNGrams)
			}
			if want := float64(st.FileBytes) * 8 / float64(total); float64(st.BitsPerNGram) != want {
				t.Errorf("bits per n-gram %v, want %v", st.BitsPerNGram, want)
			}
			// Contexts and their weights, counted independently from the tables:
			// the distinct k-word prefixes of the stored (k+1)-grams.
			for k := 1; k < tb.Order(); k++ {
				contexts := map[int]bool{}
				for i := range tb.Len(k + 1) {
					contexts[tb.Find(tb.Gram(k+1, i)[:k])] = true
				}
				lo, hi, sum := math.Inf(1), math.Inf(-1), 0.0
				for i := range contexts {
					b := float64(tb.Levels[k-1].LogBackoff[i])
					lo, hi, sum = min(lo, b), max(hi, b), sum+b
				}
				o := st.Orders[k-1]
				w := o.BackoffWeights
				if o.Contexts != len(contexts) || w.Count != len(contexts) || float64(w.Min) != lo || float64(w.Max) != hi ||
					math.Abs(float64(w.Mean)-sum/float64(len(contexts))) > 1e-12 || w.NonContextsNotOne != 0 {
					t.Errorf("order %d: %d contexts, weights %+v; want %d, min %v max %v mean %v",
						k, o.Contexts, *w, len(contexts), lo, hi, sum/float64(len(contexts)))
				}
			}
			if top := st.Orders[tb.Order()-1]; top.Contexts != 0 || top.BackoffWeights != nil || top.BackoffCodebook != nil {
				t.Errorf("highest order: %+v", top)
			}
			for k := 1; k <= tb.Order(); k++ {
				// Stored bits: the column's section bytes times 8 over the
				// entries it holds (in version 3 the back-off weights of the
				// contexts only).
				weights := tb.Len(k)
				if m.Version() >= 3 {
					weights = st.Orders[k-1].Contexts
				}
				checkCodebook(t, k, "probabilities", st.Orders[k-1].ProbCodebook, tb.Levels[k-1].ProbCodebook, sectionBits(m, format.KindProbabilities, k, tb.Len(k)))
				checkCodebook(t, k, "back-offs", st.Orders[k-1].BackoffCodebook, tb.Levels[k-1].BackoffCodebook, sectionBits(m, format.KindBackoffs, k, weights))
			}
			if got := st.Orders[1].ProbCodebook != nil; got != tc.quantized {
				t.Errorf("order 2 probability codebook present %v, want %v", got, tc.quantized)
			}
		})
	}
}

// sectionBits is the length in bits of the section of kind and order k
// over n entries, or 0 when the file has no such section.
func sectionBits(m *format.Model, kind format.SectionKind, k, n int) Number {
	for _, s := range m.Sections() {
		if s.Kind == kind && s.Order == k {
			return Number(float64(s.Length) * 8 / float64(n))
		}
	}
	return 0
}

func checkCodebook(t *testing.T, k int, what string, got *CodebookStats, levels []float32, stored Number) {
	t.Helper()
	if levels == nil {
		if got != nil {
			t.Errorf("order %d %s: codebook %+v for a plain column", k, what, *got)
		}
		return
	}
	step := 0.0
	for i := 1; i < len(levels); i++ {
		step = max(step, float64(levels[i])-float64(levels[i-1]))
	}
	// The smallest B with 2^B >= L (spec/FORMAT.md §4.5).
	bits := 1
	for 1<<bits < len(levels) {
		bits++
	}
	want := CodebookStats{len(levels), bits, stored, Number(levels[0]), Number(levels[len(levels)-1]), Number(step)}
	if got == nil || *got != want {
		t.Errorf("order %d %s: codebook %+v, want %+v", k, what, got, want)
	}
}
