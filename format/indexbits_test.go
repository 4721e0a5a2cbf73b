package format

import (
	"ingot/compile/fixture"
	"math/rand/v2"
	"testing"
)

// IndexBits is the width of a packed column's indexes, ceil(log2 L) bits
// for a codebook of L levels and at least 1 (spec/FORMAT.md §4.5), in
// both layouts, and 0 for a column of plain values: a codebook of 2 levels
// takes 1 bit, of 3 or 4 levels 2 bits, of 5 to 8 levels 3 bits.
func TestIndexBits(t *testing.T) {
	for _, version := range []int{2, 3} {
		for _, step := range []float64{0.5, 0.05, 0.001} {
			tb := fixture.RandomTables(7, 300, []int{2000, 3000, 1000})
			quantizeByRounding(tb, step, 2)
			data, err := MarshalVersion(tb, version)
			if err != nil {
				t.Fatal(err)
			}
			m := mustOpen(t, data)
			if got := m.IndexBits(1, false); got != 0 {
				t.Fatalf("plain unigram probabilities: IndexBits %d, want 0", got)
			}
			for k := 2; k <= m.Order(); k++ {
				for _, backoff := range []bool{false, true} {
					levels := len(m.Codebook(k, backoff))
					if levels == 0 {
						continue
					}
					want := 1
					for 1<<want < levels {
						want++
					}
					if got := m.IndexBits(k, backoff); got != want {
						t.Fatalf("v%d order %d backoff %v: %d levels stored in %d bits, want %d", version, k, backoff, levels, got, want)
					}
				}
			}
		}
	}
}

// StoredBits is a quantized column's section bytes times 8 over the
// entries it stores (spec/FORMAT.md §4.5 and §4.8.6): for a packed column
// its index width plus the header's share, for a tiered one less than the
// index width. Order 2's probabilities are drawn nine in ten from 16 of
// 4096 levels (invented data, the shape of widened back-off weights) so
// that version 3 stores them tiered.
func TestStoredBits(t *testing.T) {
	tb := fixture.RandomTables(7, 300, []int{2000, 3000, 1000})
	quantizeByRounding(tb, 0.05, 2)
	lv := &tb.Levels[1]
	lv.ProbCodebook = make([]float32, 4096)
	for j := range lv.ProbCodebook {
		lv.ProbCodebook[j] = float32(-5 + float64(j)/1024)
	}
	r := rand.New(rand.NewPCG(5, 6))
	for i := range lv.LogProb {
		j := r.IntN(4096)
		if r.Float64() < 0.9 {
			j = 2040 + r.IntN(16)
		}
		lv.LogProb[i] = lv.ProbCodebook[j]
	}
	for _, version := range []int{2, 3} {
		data, err := MarshalVersion(tb, version)
		if err != nil {
			t.Fatal(err)
		}
		m := mustOpen(t, data)
		if got := m.StoredBits(1, false); got != 0 {
			t.Fatalf("v%d: plain unigram probabilities: StoredBits %v, want 0", version, got)
		}
		tiered := 0
		for _, s := range m.Sections() {
			if s.Kind != KindProbabilities && s.Kind != KindBackoffs || s.Order < 2 {
				continue
			}
			backoff := s.Kind == KindBackoffs
			c := &m.levels[s.Order-1].probs
			if backoff {
				c = &m.levels[s.Order-1].backoffs
			}
			got, index := m.StoredBits(s.Order, backoff), float64(m.IndexBits(s.Order, backoff))
			if want := float64(s.Length) * 8 / float64(c.n); got != want {
				t.Errorf("v%d %s: StoredBits %v, want %d bytes x 8 / %d entries = %v", version, s.Name(), got, s.Length, c.n, want)
			}
			switch s.Encoding {
			case Tiered:
				tiered++
				if got >= index {
					t.Errorf("v%d %s: tiered, %.3f stored bits against %v-bit indexes", version, s.Name(), got, index)
				}
			case Packed:
				if got < index || got >= index+1 {
					t.Errorf("v%d %s: packed, %.3f stored bits against %v-bit indexes", version, s.Name(), got, index)
				}
			}
		}
		if want := map[int]int{2: 0, 3: 1}[version]; tiered != want {
			t.Errorf("v%d: %d tiered columns, want %d", version, tiered, want)
		}
	}
}
