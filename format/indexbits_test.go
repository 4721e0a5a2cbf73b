package format

import (
	"ingot/compile/fixture"
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
