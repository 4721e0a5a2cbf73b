package counts

import "math/bits"

// sortUint64s sorts a in increasing order in place, with no memory beyond
// a few hundred words of stack per level of recursion: a most-significant-
// digit radix sort that moves the values into their buckets by following
// permutation cycles (the "American flag sort" of P. M. McIlroy, K. Bostic
// and M. D. McIlroy (1993), "Engineering radix sort", Computing Systems
// 6(1), 5-27), small buckets finished by insertion. Digits start at the
// highest bit any value sets, so keys that use only their low bits cost no
// pass for the high ones.
func sortUint64s(a []uint64) {
	var or uint64
	for _, v := range a {
		or |= v
	}
	sortFromBit(a, bits.Len64(or))
}

const (
	// digitBits is the width of one radix digit.
	digitBits = 8
	// insertionMax is the bucket size below which insertion sort is the
	// quicker.
	insertionMax = 32
)

// sortFromBit sorts a, whose values agree on every bit from bit top up.
func sortFromBit(a []uint64, top int) {
	if len(a) <= insertionMax || top == 0 {
		insertionSort(a)
		return
	}
	shift := max(top-digitBits, 0)
	mask := uint64(1)<<(top-shift) - 1
	var count [1 << digitBits]int
	for _, v := range a {
		count[v>>shift&mask]++
	}
	var next, end [1 << digitBits]int
	sum := 0
	for d, c := range count {
		next[d] = sum
		sum += c
		end[d] = sum
	}
	for d := range next {
		for next[d] < end[d] {
			v := a[next[d]]
			for x := int(v >> shift & mask); x != d; x = int(v >> shift & mask) {
				v, a[next[x]] = a[next[x]], v
				next[x]++
			}
			a[next[d]] = v
			next[d]++
		}
	}
	lo := 0
	for _, e := range end {
		if e-lo > 1 {
			sortFromBit(a[lo:e], shift)
		}
		lo = e
	}
}

func insertionSort(a []uint64) {
	for i := 1; i < len(a); i++ {
		v := a[i]
		j := i
		for ; j > 0 && a[j-1] > v; j-- {
			a[j] = a[j-1]
		}
		a[j] = v
	}
}
