package counts

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestSortUint64s: the radix sort gives what the standard library's
// comparison sort gives (slices.Sort), on values that use all 64 bits, a
// few low bits (many duplicates), bits in the middle only, sizes around
// the insertion cut-off, and input already sorted or reversed.
func TestSortUint64s(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 5))
	gens := map[string]func() uint64{
		"all bits":   rng.Uint64,
		"3 low bits": func() uint64 { return rng.Uint64() & 7 },
		"middle":     func() uint64 { return rng.Uint64() & 0x0000_0fff_f000_0000 },
		"37 bits":    func() uint64 { return rng.Uint64() >> 27 },
		"zero":       func() uint64 { return 0 },
	}
	for name, gen := range gens {
		for _, n := range []int{0, 1, 2, insertionMax, insertionMax + 1, 257, 5000, 100000} {
			a := make([]uint64, n)
			for i := range a {
				a[i] = gen()
			}
			for _, shape := range []string{"random", "sorted", "reversed"} {
				in := slices.Clone(a)
				switch shape {
				case "sorted":
					slices.Sort(in)
				case "reversed":
					slices.Sort(in)
					slices.Reverse(in)
				}
				want := slices.Clone(in)
				slices.Sort(want)
				sortUint64s(in)
				if !slices.Equal(in, want) {
					t.Fatalf("%s, %d values, %s: not sorted as slices.Sort sorts them", name, n, shape)
				}
			}
		}
	}
}
