package tables

import "fmt"

// Links are the trie's links between the sorted orders of a prefix-closed
// set of n-grams (counts or a model, in the conventions of this package:
// order 1 dense over the vocabulary, order k >= 2 sorted): for each entry
// of order k >= 2, the index at order k-1 of its prefix (its parent) and
// of its suffix (the n-gram without its first word), and for each order
// k < N where each entry's children begin at order k+1.
//
// Finding them does not search a whole order per look-up: parents come in
// order, so one merge pass finds them, and the suffix h'w of an entry hw is
// a child of the suffix h' of its parent h, so it is found by a binary
// search within that one sibling list (the walk of a backward-linked
// trie: G. E. Pibiri and R. Venturini, "Efficient data structures for
// massive n-gram datasets", SIGIR 2017).
type Links struct {
	// Parent[k-1][i] is the index at order k-1 of entry i's prefix (k >= 2).
	Parent [][]int32
	// Suffix[k-1][i] is the index at order k-1 of entry i's suffix, or -1
	// when that suffix is not stored (k >= 2).
	Suffix [][]int32
	// Starts[k-1] holds n_k+1 values for each order k below the highest
	// linked: entry i of order k has children [Starts[k-1][i],
	// Starts[k-1][i+1]) at order k+1.
	Starts [][]uint32
}

// Lowest returns the links of orders 1..n (n at most the orders linked),
// sharing l's slices.
func (l *Links) Lowest(n int) *Links {
	if len(l.Parent) == n {
		return l
	}
	return &Links{Parent: l.Parent[:n], Suffix: l.Suffix[:n], Starts: l.Starts[:n-1]}
}

// Linker links n-grams given one at a time, as a merge or a reader yields
// them: order by order from order 2, each order in increasing order. It
// keeps the word ids of each order it was given (Words).
type Linker struct {
	// Words[k-1] holds the entries of order k >= 2 added so far, k ids
	// each. Words[0] is nil: order 1 is dense.
	Words [][]uint32
	Links
	vocab int
	cur   cursor
}

// NewLinker starts linking n-grams over a vocabulary of n words (order 1
// holds entry i for word i).
func NewLinker(n int) *Linker {
	return &Linker{vocab: n, Words: [][]uint32{nil}, Links: Links{Parent: [][]int32{nil}, Suffix: [][]int32{nil}}}
}

// Order returns the highest order added so far (1 before any Add).
func (l *Linker) Order() int { return len(l.Words) }

// Add appends g, an entry of order len(g) >= 2 that must follow every
// entry added before it (a longer order, or the same order and greater),
// and links it. It returns ok false when g's prefix is not stored (then
// the Linker must not be used further), and its suffix index, -1 when the
// suffix is not stored. Word ids must be below the vocabulary's size.
func (l *Linker) Add(g []uint32) (suffix int32, ok bool) {
	k := len(g)
	if k != len(l.Words) {
		if k != len(l.Words)+1 {
			panic(fmt.Sprintf("tables: Linker given a %d-gram after order %d", k, len(l.Words)))
		}
		l.endOrder()
	}
	l.Words[k-1] = append(Grow(l.Words[k-1], k), g...)
	parent, suffix, ok := l.link(g, l.Words[k-2], &l.cur)
	if !ok {
		return -1, false
	}
	l.Parent[k-1] = append(Grow(l.Parent[k-1], 1), parent)
	l.Suffix[k-1] = append(Grow(l.Suffix[k-1], 1), suffix)
	return suffix, true
}

// Grow makes room for n more elements, growing the capacity by half when
// it runs out (append grows large slices by a quarter, copying them more
// often).
func Grow[E any](s []E, n int) []E {
	if len(s)+n <= cap(s) {
		return s
	}
	return append(make([]E, 0, max(cap(s)+cap(s)/2, len(s)+n, 1024)), s...)
}

// cursor is where linking one order stands.
type cursor struct {
	parent int32 // no greater than the next entry's parent
	last   int32 // the last entry's parent (-1: none yet)
	suffix int32 // the last entry's suffix
	// lists[2p], lists[2p+1] bound, at the order below, the children of
	// the suffix of parent p (empty when that suffix is not stored): the
	// suffix of each child of p is among them.
	lists []uint32
}

// newCursor starts linking order k, the links of the orders below it
// known.
func (l *Links) newCursor(k int) cursor {
	cur := cursor{last: -1, suffix: -1}
	if k >= 3 {
		// Looked up for every parent at once, in one loop whose reads do
		// not wait for each other, rather than one cache miss per entry.
		suffixes, starts := l.Suffix[k-2], l.Starts[k-3]
		cur.lists = make([]uint32, 2*len(suffixes))
		for p, h := range suffixes {
			if h >= 0 {
				cur.lists[2*p], cur.lists[2*p+1] = starts[h], starts[h+1]
			}
		}
	}
	return cur
}

// link finds the parent and the suffix of g (order k = len(g) >= 2), given
// lower, the entries of order k-1, the links of the orders below k, and
// cur, where linking g's order stands (moved to g).
func (l *Links) link(g, lower []uint32, cur *cursor) (parent, suffix int32, ok bool) {
	k := len(g)
	if k == 2 {
		return int32(g[0]), int32(g[1]), true
	}
	n := int32(len(lower) / (k - 1))
	p := cur.parent
	for p < n && Compare(lower[int(p)*(k-1):int(p)*(k-1)+k-1], g[:k-1]) < 0 {
		p++
	}
	cur.parent = p
	if p == n || Compare(lower[int(p)*(k-1):int(p)*(k-1)+k-1], g[:k-1]) != 0 {
		return -1, -1, false
	}
	lo, hi := int32(cur.lists[2*p]), int32(cur.lists[2*p+1])
	if p == cur.last && cur.suffix >= lo {
		// A sibling of the entry before, with a greater last word: the
		// suffix lies after that entry's.
		lo = cur.suffix + 1
	}
	suffix = searchLast(lower, k-1, lo, hi, g[k-1])
	cur.last = p
	if suffix >= 0 {
		cur.suffix = suffix
	}
	return p, suffix, true
}

// SearchLast is searchLast for a reader that holds an order's entries
// elsewhere (the streamed estimator holds only their last words: k = 1).
func SearchLast(words []uint32, k int, lo, hi int32, w uint32) int32 {
	return searchLast(words, k, lo, hi, w)
}

// searchLast returns the index in [lo, hi) of the entry of words (k ids
// each, sorted, those in [lo, hi) sharing their first k-1 ids) whose last
// id is w, or -1. It gallops from lo (J. L. Bentley and A. C.-C. Yao, "An
// almost optimal algorithm for unbounded searching", IPL 5(3), 1976): the
// successors of one context are looked up in increasing order, each from
// the one found before, so most searches end within a few entries.
func searchLast(words []uint32, k int, lo, hi int32, w uint32) int32 {
	end := hi
	bound, step := lo, int32(1)
	for bound < end && words[int(bound)*k+k-1] < w {
		lo = bound + 1
		bound = lo + step
		step <<= 1
	}
	hi = min(bound, end)
	for lo < hi {
		m := int32(uint32(lo+hi) >> 1)
		if words[int(m)*k+k-1] < w {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo < end && words[int(lo)*k+k-1] == w {
		return lo
	}
	return -1
}

// endOrder completes the order being added: the child starts of the order
// below it.
func (l *Linker) endOrder() {
	l.finishOrder()
	l.Words = append(l.Words, nil)
	l.Parent = append(l.Parent, nil)
	l.Suffix = append(l.Suffix, nil)
	l.cur = l.newCursor(len(l.Words))
}

// finishOrder computes the child starts of the order below the highest
// added.
func (l *Linker) finishOrder() {
	k := len(l.Words)
	if k >= 2 && len(l.Starts) < k-1 {
		below := l.vocab
		if k > 2 {
			below = len(l.Words[k-2]) / (k - 1)
		}
		l.Starts = append(l.Starts, startsOf(l.Parent[k-1], below))
	}
}

// startsOf returns the n+1 child starts of n parents from the sorted parent
// index of each child.
func startsOf(parent []int32, n int) []uint32 {
	starts := make([]uint32, n+1)
	for _, p := range parent {
		starts[p+1]++
	}
	for i := 1; i <= n; i++ {
		starts[i] += starts[i-1]
	}
	return starts
}

// Finish returns the links of every order added (Starts for every order
// but the highest).
func (l *Linker) Finish() *Links {
	l.finishOrder()
	return &l.Links
}

// PrefixError reports an entry whose prefix is not stored.
type PrefixError struct{ Order, Index int }

func (e *PrefixError) Error() string {
	return fmt.Sprintf("tables: order %d entry %d: its prefix is not stored", e.Order, e.Index)
}

// Link returns the links of the orders whose word ids are words[k-1] (k
// ids per entry, sorted; words[0] is not read, order 1 being dense over a
// vocabulary of vocab words). It reports the first entry whose prefix is
// not stored.
func Link(vocab int, words [][]uint32) (*Links, error) {
	N := len(words)
	size := func(j int) int { // entries of order j
		if j == 1 {
			return vocab
		}
		return len(words[j-1]) / j
	}
	l := &Links{Parent: make([][]int32, N), Suffix: make([][]int32, N), Starts: make([][]uint32, 0, N)}
	for k := 2; k <= N; k++ {
		if k > 2 {
			l.Starts = append(l.Starts, startsOf(l.Parent[k-2], size(k-2)))
		}
		w, lower := words[k-1], words[k-2]
		n := len(w) / k
		parent, suffix := make([]int32, n), make([]int32, n)
		cur := l.newCursor(k)
		for i := 0; i < n; i++ {
			p, s, ok := l.link(w[k*i:k*i+k], lower, &cur)
			if !ok {
				return nil, &PrefixError{Order: k, Index: i}
			}
			parent[i], suffix[i] = p, s
		}
		l.Parent[k-1], l.Suffix[k-1] = parent, suffix
	}
	if N >= 2 {
		l.Starts = append(l.Starts, startsOf(l.Parent[N-1], size(N-1)))
	}
	return l, nil
}

// OrderLinker links the entries of one order k >= 3 in ranges that may be
// linked in any order and at the same time (on several goroutines), once
// the orders below k are linked: their Parent and Suffix, and the Starts
// of order k-2. Each range finds its first parent by a binary search, then
// walks as Link does, so that the links are Link's whatever the ranges.
type OrderLinker struct {
	k     int
	lower []uint32 // the entries of order k-1
	lists []uint32 // as cursor.lists
}

// OrderLinker prepares the linking of order k >= 3 whose order below holds
// the entries lower (k-1 ids each).
func (l *Links) OrderLinker(k int, lower []uint32) *OrderLinker {
	if k < 3 {
		panic(fmt.Sprintf("tables: OrderLinker of order %d", k))
	}
	return &OrderLinker{k: k, lower: lower, lists: l.newCursor(k).lists}
}

// Link links the entries words (k ids each, sorted), writing the parent
// and the suffix (-1: not stored) of entry i to parent[i] and suffix[i].
// It returns the index within words of the first entry whose prefix is
// not stored, whose links and those of the entries after it are not
// written, or -1 when every prefix is stored.
func (o *OrderLinker) Link(words []uint32, parent, suffix []int32) int {
	k := o.k
	n := len(words) / k
	if n == 0 {
		return -1
	}
	cur := cursor{last: -1, suffix: -1, lists: o.lists}
	// The first entry's parent: the first entry of the order below not
	// less than its prefix.
	lo, hi := 0, len(o.lower)/(k-1)
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if Compare(o.lower[m*(k-1):m*(k-1)+k-1], words[:k-1]) < 0 {
			lo = m + 1
		} else {
			hi = m
		}
	}
	cur.parent = int32(lo)
	var l *Links
	for i := range n {
		p, s, ok := l.link(words[k*i:k*i+k], o.lower, &cur)
		if !ok {
			return i
		}
		parent[i], suffix[i] = p, s
	}
	return -1
}

// StartsOf returns the n+1 child starts of the n entries of an order from
// the parent index of each entry of the order above, in order (Links.Starts).
func StartsOf(parent []int32, n int) []uint32 { return startsOf(parent, n) }
