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
	slices.SortFunc(want, slices.Compare[[]uint32])
	for _, c := range []struct {
		budget int64
		expect int // records announced by Expect (0: none)
	}{{1 << 30, 0}, {16 * 1024, 0}, {1 << 30, len(input)}, {16 * 1024, len(input)}} {
		budget := c.budget
		dir := t.TempDir()
		s := New(dir, "t", width, budget)
		s.Expect(c.expect)
		if cap(s.buf) > s.maxRecs*width {
			t.Errorf("budget %d: Expect(%d) made room for %d words, beyond the budget's %d", budget, c.expect, cap(s.buf), s.maxRecs*width)
		}
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

// TestRadixSortOrder: the radix sort orders records as a comparison sort
// of their words does (lexicographically, word by word), for every width,
// with values that use every byte, values that share some bytes (passes
// skipped) and records all equal.
func TestRadixSortOrder(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	values := []func() uint32{
		rng.Uint32,
		func() uint32 { return rng.Uint32N(300) },           // two low bytes
		func() uint32 { return rng.Uint32N(4) << 24 },       // the high byte only
		func() uint32 { return 0x01020304 },                 // every byte shared
		func() uint32 { return rng.Uint32N(2) << 16 * 255 }, // the third byte
	}
	for width := 1; width <= 6; width++ {
		for vi, value := range values {
			for _, n := range []int{0, 1, 2, 3, 1000} {
				buf := make([]uint32, 0, n*width)
				for range n * width {
					// Mix the kind of value by word, so that some words
					// decide the order and others tie.
					if rng.IntN(3) == 0 {
						buf = append(buf, values[0]())
					} else {
						buf = append(buf, value())
					}
				}
				var want [][]uint32
				for i := 0; i < len(buf); i += width {
					want = append(want, slices.Clone(buf[i:i+width]))
				}
				slices.SortFunc(want, slices.Compare[[]uint32])
				got := radixSort(buf, make([]uint32, len(buf)), width, width)
				for i, r := range want {
					if !slices.Equal(got[i*width:i*width+width], r) {
						t.Fatalf("width %d, values %d, %d records: record %d is %v, want %v", width, vi, n, i, got[i*width:i*width+width], r)
					}
				}
			}
		}
	}
}

// TestKeyedSortIsStable: records ordered by their first word only come out
// with equal keys in the order they were added, in memory and across
// spilled runs.
func TestKeyedSortIsStable(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	const n = 30000
	var input [][]uint32
	for i := range n {
		input = append(input, []uint32{rng.Uint32N(100) << (8 * rng.UintN(4)), rng.Uint32(), uint32(i)})
	}
	want := slices.Clone(input)
	slices.SortStableFunc(want, func(a, b []uint32) int { return slices.Compare(a[:1], b[:1]) })
	for _, budget := range []int64{1 << 30, 16 * 1024} {
		s := NewKeyed(t.TempDir(), "t", 3, 1, budget)
		for _, r := range input {
			if err := s.Add(r); err != nil {
				t.Fatal(err)
			}
		}
		it, err := s.Sort()
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; ; i++ {
			r, ok, err := it.Next()
			if err != nil {
				t.Fatal(err)
			}
			if !ok {
				if i != n {
					t.Fatalf("budget %d: %d records out of %d", budget, i, n)
				}
				break
			}
			if !slices.Equal(r, want[i]) {
				t.Fatalf("budget %d: record %d is %v, want %v", budget, i, r, want[i])
			}
		}
		if budget < 1<<20 && s.Runs() < 2 {
			t.Errorf("budget %d: %d runs; the test means to spill", budget, s.Runs())
		}
		it.Close()
	}
}
