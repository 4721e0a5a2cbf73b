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

// TestSelectInWordFindsTheRthSetBit checks selectInWord against its
// definition (the position of the r-th set bit, counting from 0), bit by
// bit, on words of every density: all ones, single bits at each end,
// bytes full or empty in turn, and random words thinned to various
// densities.
func TestSelectInWordFindsTheRthSetBit(t *testing.T) {
	words := []uint64{1, 1 << 63, ^uint64(0), 0xff00ff00ff00ff00, 0x00ff00ff00ff00ff, 0x8000000000000001}
	rng := rand.New(rand.NewPCG(7, 8))
	for range 4000 {
		w := rng.Uint64()
		for range rng.IntN(4) {
			w &= rng.Uint64()
		}
		if rng.IntN(2) == 0 {
			w |= rng.Uint64()
		}
		words = append(words, w)
	}
	for _, w := range words {
		r := uint(0)
		for b := uint(0); b < 64; b++ {
			if w>>b&1 == 0 {
				continue
			}
			if got := selectInWord(w, r); got != b {
				t.Fatalf("selectInWord(%#x, %d) = %d, want %d", w, r, got, b)
			}
			r++
		}
	}
}

// TestPairReadsTwoAdjacentValues checks pair and get against the values
// encoded, for every index, on sequences whose gaps range from none (runs
// of equal values) to very long (high bits with many empty cache lines
// between two values, as after a frequent context's child start, which
// the scans pass a line at a time) and whose low bits range from none to
// 30 (where two values' low bits no longer fit one read). Each sequence
// is read at every alignment of its high bits to a cache line.
func TestPairReadsTwoAdjacentValues(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	for round := range 60 {
		n := 1 + rng.IntN(2000)
		scale := uint64(1) << rng.IntN(24)
		x := make([]uint64, n)
		var v uint64
		for i := range x {
			switch rng.IntN(10) {
			case 0: // a long jump
				v += uint64(rng.IntN(5000)) * scale
			case 1: // a repeat
			default:
				v += uint64(rng.IntN(3)) * scale / 2
			}
			x[i] = v
		}
		if round%3 == 0 {
			// Dense values but for one to three jumps as long as the
			// rest together: each leaves about n/jumps empty high bits.
			n = 1000 + rng.IntN(20000)
			x = make([]uint64, n)
			jumps := map[int]bool{}
			for range 1 + rng.IntN(3) {
				jumps[rng.IntN(n)] = true
			}
			v = 0
			for i := range x {
				v += uint64(rng.IntN(3))
				if jumps[i] {
					v += 1 << 20
				}
				x[i] = v
			}
		}
		enc := encodeEliasFano(x)
		for shift := range 8 {
			buf := make([]byte, len(enc)+64)
			e, err := parseEliasFano(buf[8*shift:copy(buf[8*shift:], enc)+8*shift], uint64(n))
			if err != nil {
				t.Fatal(err)
			}
			for i := 0; i+1 < n; i++ {
				a, b, ok := e.pair(uint64(i))
				if !ok || a != x[i] || b != x[i+1] {
					t.Fatalf("round %d (L %d, shift %d): pair(%d) = %d, %d, %v; want %d, %d", round, e.l, shift, i, a, b, ok, x[i], x[i+1])
				}
				if a, ok := e.get(uint64(i + 1)); !ok || a != x[i+1] {
					t.Fatalf("round %d (L %d, shift %d): get(%d) = %d, %v; want %d", round, e.l, shift, i+1, a, ok, x[i+1])
				}
			}
			if _, _, ok := e.pair(uint64(n - 1)); ok {
				t.Fatalf("round %d: pair of the last value reports a pair", round)
			}
		}
	}
}
