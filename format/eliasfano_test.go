package format

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// TestNextAtLeastFindsTheFirstValueNotBelow checks the search of an
// Elias-Fano sequence against its definition (the first index in
// [i, limit) whose value is at least want), on sequences shaped like the
// last-word keys: sibling lists of very different densities shifted one
// after the other, so that some lists span many samples and some runs of
// equal high parts are long (the cases the sample jump and the run's
// binary search take).
func TestNextAtLeastFindsTheFirstValueNotBelow(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for round := range 40 {
		var x []uint64
		var base uint64
		for range 1 + rng.IntN(12) {
			// A list of m distinct keys below u: sparse, or a dense block.
			m := 1 + rng.IntN(3000)
			u := uint64(m) + uint64(rng.IntN(1+m*[]int{0, 1, 50}[rng.IntN(3)]))
			keys := map[uint64]bool{}
			for len(keys) < m {
				keys[rng.Uint64N(u)] = true
			}
			list := make([]uint64, 0, m)
			for k := range keys {
				list = append(list, k)
			}
			slices.Sort(list)
			for _, k := range list {
				x = append(x, base+k)
			}
			base = x[len(x)-1]
		}
		if round%3 == 0 { // add far, sparse values so that L grows
			for range 50 {
				base += 1 + rng.Uint64N(1<<20)
				x = append(x, base)
			}
		}
		e, err := parseEliasFano(encodeEliasFano(x), uint64(len(x)))
		if err != nil {
			t.Fatal(err)
		}
		n := uint64(len(x))
		for range 400 {
			i := rng.Uint64N(n)
			limit := i + 1 + rng.Uint64N(n-i)
			want := x[i] + rng.Uint64N(x[limit-1]-x[i]+2)
			if rng.IntN(2) == 0 { // a stored value
				want = x[i+rng.Uint64N(limit-i)]
			}
			c := e.seek(i)
			got := c.nextAtLeast(want, limit)
			j := i
			for j < limit && x[j] < want {
				j++
			}
			switch {
			case got != (j < limit):
				t.Fatalf("round %d: from %d below %d, want %d: found %v, but the first value not below is at %d", round, i, limit, want, got, j)
			case got && (c.i != j || c.value() != x[j]):
				t.Fatalf("round %d: from %d below %d, want %d: cursor at %d (value %d), expected %d (value %d)", round, i, limit, want, c.i, c.value(), j, x[j])
			}
			if got && j+1 < n { // the cursor walks on correctly
				if !c.next() || c.value() != x[j+1] {
					t.Fatalf("round %d: after %d the cursor reads %d, expected %d", round, j, c.value(), x[j+1])
				}
			}
		}
	}
}
