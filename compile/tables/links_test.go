package tables

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// randomLevels returns the sorted word ids of every n-gram of orders 2..N
// of random sequences over a vocabulary of v words, then with some n-grams
// that are no prefix of a longer one removed: prefix-closed, and
// suffix-closed only when drop is false.
func randomLevels(seed uint64, v, N, seqs int, drop bool) [][]uint32 {
	r := rand.New(rand.NewPCG(seed, 1))
	sets := make([]map[[MaxOrder]uint32]bool, N+1)
	for k := range sets {
		sets[k] = map[[MaxOrder]uint32]bool{}
	}
	for range seqs {
		n := 1 + r.IntN(12)
		seq := make([]uint32, n)
		for i := range seq {
			// Skewed, so that some words have many successors.
			seq[i] = uint32(r.IntN(1+r.IntN(v))) % uint32(v)
		}
		for i := range seq {
			for k := 2; k <= N && i+k <= n; k++ {
				var key [MaxOrder]uint32
				copy(key[:], seq[i:i+k])
				sets[k][key] = true
			}
		}
	}
	words := make([][]uint32, N)
	for k := N; k >= 2; k-- {
		var grams [][]uint32
		for key := range sets[k] {
			grams = append(grams, slices.Clone(key[:k]))
		}
		slices.SortFunc(grams, Compare)
		for _, g := range grams {
			if drop && k < N && r.IntN(4) == 0 {
				var key [MaxOrder]uint32
				copy(key[:], g)
				if !hasChild(sets[k+1], g) {
					delete(sets[k], key)
					continue
				}
			}
			words[k-1] = append(words[k-1], g...)
		}
	}
	return words
}

func hasChild(set map[[MaxOrder]uint32]bool, g []uint32) bool {
	for key := range set {
		if Compare(key[:len(g)], g) == 0 {
			return true
		}
	}
	return false
}

// TestLinkMatchesSearch checks every link against a binary search of the
// whole order (Tables.Find), the definition of a parent, a suffix and a
// child start.
func TestLinkMatchesSearch(t *testing.T) {
	for seed := uint64(1); seed <= 6; seed++ {
		drop := seed%2 == 0
		const v, N = 40, 5
		words := randomLevels(seed, v, N, 300, drop)
		tb := &Tables{Vocab: make([]string, v), Levels: make([]Level, N)}
		for k := 2; k <= N; k++ {
			tb.Levels[k-1].Words = words[k-1]
			tb.Levels[k-1].LogProb = make([]float32, len(words[k-1])/k)
		}
		tb.Levels[0].LogProb = make([]float32, v)
		l, err := Link(v, words)
		if err != nil {
			t.Fatal(err)
		}
		// The same links, entry by entry.
		ln := NewLinker(v)
		missing := 0
		for k := 2; k <= N; k++ {
			for i := 0; i < tb.Len(k); i++ {
				g := tb.Gram(k, i)
				if s, ok := ln.Add(g); !ok || s != l.Suffix[k-1][i] {
					t.Fatalf("seed %d: Linker order %d entry %d: suffix %d ok %v, Link says %d", seed, k, i, s, ok, l.Suffix[k-1][i])
				}
				if p := tb.Find(g[:k-1]); int(l.Parent[k-1][i]) != p {
					t.Fatalf("seed %d: order %d entry %d: parent %d, search finds %d", seed, k, i, l.Parent[k-1][i], p)
				}
				s := tb.Find(g[1:])
				if int(l.Suffix[k-1][i]) != s {
					t.Fatalf("seed %d: order %d entry %d %v: suffix %d, search finds %d", seed, k, i, g, l.Suffix[k-1][i], s)
				}
				if s < 0 {
					missing++
				}
			}
		}
		if drop != (missing > 0) {
			t.Fatalf("seed %d: %d suffixes missing with drop %v", seed, missing, drop)
		}
		ll := ln.Finish()
		if !slices.EqualFunc(ll.Starts, l.Starts, slices.Equal) || len(l.Starts) != N-1 {
			t.Fatalf("seed %d: Linker and Link disagree on child starts", seed)
		}
		for k := 1; k < N; k++ {
			for i := 0; i < tb.Len(k); i++ {
				var g []uint32
				if k == 1 {
					g = []uint32{uint32(i)}
				} else {
					g = tb.Gram(k, i)
				}
				// Children: the entries of order k+1 whose prefix is g.
				var first, count uint32
				first = ^uint32(0)
				for j := 0; j < tb.Len(k+1); j++ {
					if Compare(tb.Gram(k+1, j)[:k], g) == 0 {
						first = min(first, uint32(j))
						count++
					}
				}
				lo, hi := l.Starts[k-1][i], l.Starts[k-1][i+1]
				if hi-lo != count || count > 0 && lo != first {
					t.Fatalf("seed %d: order %d entry %d: children [%d, %d), search finds %d from %d", seed, k, i, lo, hi, count, first)
				}
			}
		}
	}
}

// TestLinkMissingPrefix: an entry whose prefix is not stored is reported,
// by Link and by the Linker.
func TestLinkMissingPrefix(t *testing.T) {
	words := [][]uint32{nil, {0, 1, 1, 2}, {0, 1, 2, 1, 3, 0}} // "1 3" is no bigram
	if _, err := Link(4, words); err == nil {
		t.Fatal("Link accepted a trigram whose prefix is not stored")
	}
	ln := NewLinker(4)
	for _, g := range [][]uint32{{0, 1}, {1, 2}, {0, 1, 2}} {
		if _, ok := ln.Add(g); !ok {
			t.Fatalf("%v: prefix reported missing", g)
		}
	}
	if _, ok := ln.Add([]uint32{1, 3, 0}); ok {
		t.Fatal("Linker accepted a trigram whose prefix is not stored")
	}
}
