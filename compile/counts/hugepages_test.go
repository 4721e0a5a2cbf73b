package counts

import (
	"slices"
	"testing"
)

// TestHugePagesOfKeepsTheSlice checks that asking for huge pages under a
// slice (a hint to the kernel) leaves it as it was, empty or not, below
// or above one huge page (2 MiB), whatever its element size: only the
// capacity is asked about, and it can be filled after.
func TestHugePagesOfKeepsTheSlice(t *testing.T) {
	hugePagesOf([]uint64(nil))
	hugePagesOf(make([]uint32, 0))
	for _, n := range []int{1, 1000, 3 << 20, 5 << 20} {
		s := make([]uint64, n/2, n)
		for i := range s {
			s[i] = uint64(i) * 7
		}
		want := slices.Clone(s)
		hugePagesOf(s)
		if !slices.Equal(s, want) || cap(s) != n {
			t.Fatalf("%d values: the slice changed", n)
		}
		s = s[:n]
		for i := range s {
			s[i] = uint64(i)
		}
		if s[n-1] != uint64(n-1) {
			t.Fatalf("%d values: written %d, read %d", n, n-1, s[n-1])
		}
	}
}
