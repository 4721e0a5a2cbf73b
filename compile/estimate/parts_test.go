package estimate

import (
	"runtime"
	"slices"
	"testing"
)

// firstOf and countOfCountsOf, which share a pass over a long column out
// to GOMAXPROCS goroutines, give what one pass gives (the first index
// that holds, the tallies), whatever the number of goroutines and
// wherever the parts fall: the definition, a plain loop.
func TestPartsAsOnePass(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	n := 3<<16 + 7
	cnt := make([]uint64, n)
	for i := range cnt {
		cnt[i] = uint64(i*i%11 + i%3)
	}
	want := make([]float64, 5)
	for _, r := range cnt {
		if r >= 1 && r <= 4 {
			want[r]++
		}
	}
	for _, procs := range []int{1, 2, 3, 5} {
		runtime.GOMAXPROCS(procs)
		if got := countOfCountsOf(cnt, 4); !slices.Equal(got, want) {
			t.Errorf("GOMAXPROCS %d: counts of counts %v, want %v", procs, got, want)
		}
		for _, marks := range [][]int{nil, {n - 1}, {5, n - 1}, {n / 2, n/2 + 1, n - 3}, {n/3 + 1, 2 * n / 3}} {
			is := func(i int) bool { return slices.Contains(marks, i) }
			want := -1
			if len(marks) > 0 {
				want = marks[0]
			}
			if got := firstOf(n, is); got != want {
				t.Errorf("GOMAXPROCS %d, marked %v: first %d, want %d", procs, marks, got, want)
			}
		}
	}
}
