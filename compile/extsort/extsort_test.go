package extsort

import (
	"math/rand/v2"
	"os"
	"slices"
	"testing"
)

// TestSortSpills: the records come out sorted and complete (a multiset
// equal to the input, duplicates kept), the same with a budget that forces
// many runs as with one that holds everything, and the runs are removed.
func TestSortSpills(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	const width, n = 3, 20000
	var input [][]uint32
	for range n {
		input = append(input, []uint32{rng.Uint32N(50), rng.Uint32N(50), rng.Uint32()})
	}
	input = append(input, input[7], input[9]) // duplicates stay
	want := slices.Clone(input)
	slices.SortFunc(want, compare)
	for _, budget := range []int64{1 << 30, 16 * 1024} {
		dir := t.TempDir()
		s := New(dir, "t", width, budget)
		for _, r := range input {
			if err := s.Add(r); err != nil {
				t.Fatal(err)
			}
		}
		it, err := s.Sort()
		if err != nil {
			t.Fatal(err)
		}
		var got [][]uint32
		for {
			r, ok, err := it.Next()
			if err != nil {
				t.Fatal(err)
			}
			if !ok {
				break
			}
			got = append(got, slices.Clone(r))
		}
		it.Close()
		if !slices.EqualFunc(got, want, slices.Equal) {
			t.Errorf("budget %d: %d records out, not the %d sorted records in", budget, len(got), len(want))
		}
		if budget < 1<<20 && s.Runs() < 2 {
			t.Errorf("budget %d: %d runs; the test means to spill", budget, s.Runs())
		}
		if left, _ := os.ReadDir(dir); len(left) != 0 {
			t.Errorf("budget %d: %d files left behind", budget, len(left))
		}
	}
}
