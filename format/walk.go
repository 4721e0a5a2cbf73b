package format

import "ingot/compile/tables"

// The trie walks. Every reader of the trie's shape (queries, Find, the
// entry iterators, the structural checks, the tools that dump or compare
// models) goes through the functions of this file, which go through one
// child-range step per format version: findChild (versions 1 and 2) and
// extensions3 (version 3).

// Find returns the index of the stored n-gram gram at order len(gram).
//
// In versions 1 and 2 it walks from the first word down the trie, one child
// search per word. In version 3 the keys of orders 3 and up are ranks
// among the successors of the parent's suffix, so it reads the words as
// running text with the step of Model.Next, which finds each prefix's
// suffixes on the way; once a whole-trie tool (Entries, WordAt, Verify)
// has decoded the trie, it walks the decoded columns like version 2.
func (m *Model) Find(gram []uint32) (int, bool) {
	k := len(gram)
	if k == 0 || k > m.order || uint64(gram[0]) >= uint64(m.vocabSize) {
		return -1, false
	}
	if m.version >= 3 {
		return m.find3(gram)
	}
	node := gram[0]
	for j := 1; j < k; j++ {
		if node = m.findChild(j, node, gram[j]); node == noNode {
			return -1, false
		}
	}
	return int(node), true
}

// find3 is Find on a version-3 trie: the words are fed one at a time to
// extensions3, the step Next takes, which looks up every stored suffix of
// the words so far; a prefix that is not stored ends the walk (no stored
// n-gram extends it).
func (m *Model) find3(gram []uint32) (int, bool) {
	if d := m.decoded; d != nil && d.ready.Load() {
		node := gram[0]
		for j := 1; j < len(gram); j++ {
			if node = plainChild(d.starts[j-1], d.words[j], node, gram[j]); node == noNode {
				return -1, false
			}
		}
		return int(node), true
	}
	var s State
	var child [tables.MaxOrder]uint32
	last := len(gram) - 1
	for j, w := range gram {
		n := m.extensions3(&s, w, &child)
		if n < j || child[j] == noNode {
			return -1, false
		}
		if j == last {
			break
		}
		keep := min(n+1, max(m.order-1, 0))
		copy(s.node[:keep], child[:keep])
		s.n = keep
	}
	return int(child[last]), true
}

// plainChild is the child search of versions 1 and 2 (and of a decoded
// version-3 trie): a binary search for w among the last words of the
// children of entry parent, whose range the child starts give. It trusts no
// stored value.
func plainChild(starts, words []byte, parent, w uint32) uint32 {
	p := int(parent)
	if uint64(parent) >= uint64(len(starts)/4) || 4*p+8 > len(starts) {
		return noNode
	}
	noteRead(starts, uint64(4*p))
	noteRead(starts, uint64(4*p+4))
	lo, hi := uint64(u32(starts[4*p:])), uint64(u32(starts[4*p+4:]))
	hi = min(hi, uint64(len(words)/4))
	if lo >= hi {
		return noNode
	}
	return findIn(words, lo, hi, w)
}

// ChildRange returns the entries of order k+1 that extend entry i of order
// k: [start, end). The range is empty at the highest order, and clipped to
// the entries that exist when the stored values are damaged. An entry with
// no children gets the empty range where its children would be, so the
// children of a run of entries are the entries from the first one's start
// to the last one's end.
func (m *Model) ChildRange(k, i int) (start, end int) {
	if k < 1 || k >= m.order || i < 0 || i >= m.Count(k) {
		return 0, 0
	}
	if m.version >= 3 {
		if d := m.decoded; d != nil && d.ready.Load() {
			// A whole-trie tool decoded the child starts: read them plain.
			b := d.starts[k-1]
			if 4*i+8 > len(b) {
				return 0, 0
			}
			start, end = int(u32(b[4*i:])), int(u32(b[4*i+4:]))
			return min(start, end), end
		}
		lv := &m.levels[k-1]
		marked, r := lv.marks.rank(uint64(i))
		if !marked {
			// Not a context: the children of the next context start here.
			a, ok := lv.childStarts.get(r)
			a = min(a, uint64(m.counts[k]))
			if !ok {
				return 0, 0
			}
			return int(a), int(a)
		}
		a, b := m.childRange3(k, uint32(i))
		return int(a), int(b)
	}
	b := m.levels[k-1].starts
	if 4*i+8 > len(b) {
		return 0, 0
	}
	start, end = int(u32(b[4*i:])), int(u32(b[4*i+4:]))
	end = min(end, m.Count(k+1))
	if start > end {
		return end, end
	}
	return start, end
}

// Gram returns the words of entry i of order k, oldest first, appended to
// dst[:0]; nil when there is no such entry or the trie is damaged. Parents
// are not stored: each is found by a binary search of the child starts of
// the order below (for version 3, of the decoded trie).
func (m *Model) Gram(k, i int, dst []uint32) []uint32 {
	if k < 1 || k > m.order || i < 0 || i >= m.Count(k) {
		return nil
	}
	g := append(dst[:0], make([]uint32, k)...)
	for j := k; j >= 1; j-- {
		if j == 1 {
			g[0] = uint32(i)
			break
		}
		g[j-1] = m.WordAt(j, i)
		starts, _, err := m.trie(j - 1)
		if err != nil || len(starts) < 4 {
			return nil
		}
		// The parent is the last entry whose children start at or before i.
		n := len(starts)/4 - 1
		lo, hi := 0, n
		for lo < hi {
			mid := int(uint(lo+hi) >> 1)
			if int64(u32(starts[4*mid+4:])) > int64(i) {
				hi = mid
			} else {
				lo = mid + 1
			}
		}
		if lo >= n || int64(u32(starts[4*lo:])) > int64(i) {
			return nil
		}
		i = lo
	}
	return g
}

// Entries returns an iterator over the entries of order k in stored
// (lexicographic) order, yielding each entry's full n-gram:
//
//	it := m.Entries(3)
//	for it.Next() {
//		use(it.Index(), it.Gram())
//	}
//	if err := it.Err(); err != nil { ... }
//
// Parents are not stored; the iterator walks every lower order alongside,
// so a full pass costs time linear in the entries of orders 1..k.
func (m *Model) Entries(k int) *EntryIterator {
	return m.EntriesUnder(nil, k)
}

// EntriesUnder is Entries restricted to the n-grams of order k that start
// with prefix (the prefix itself, when k is its length and it is stored).
// The entries under one stored n-gram form one contiguous run per order,
// found by one walk down the trie, so the cost is that of the subtree. A
// prefix that is not stored, or longer than k, selects nothing.
func (m *Model) EntriesUnder(prefix []uint32, k int) *EntryIterator {
	it := &EntryIterator{m: m, k: k}
	if k < 1 || k > m.order || len(prefix) > k {
		it.k = 0
		return it
	}
	b := len(prefix)
	it.first = max(b, 1)
	if b == 0 {
		for j := 1; j <= k; j++ {
			it.lo[j], it.hi[j] = 0, m.Count(j)
		}
	} else {
		node, ok := m.Find(prefix)
		if !ok {
			it.k = 0
			return it
		}
		copy(it.gram[:], prefix)
		it.lo[b], it.hi[b] = node, node+1
		for j := b; j < k; j++ {
			if it.lo[j] < it.hi[j] {
				it.lo[j+1], _ = m.ChildRange(j, it.lo[j])
				_, it.hi[j+1] = m.ChildRange(j, it.hi[j]-1)
			}
			it.hi[j+1] = max(it.hi[j+1], it.lo[j+1])
		}
	}
	for j := it.first; j < k; j++ {
		it.parent[j] = it.lo[j]
	}
	it.i = it.lo[k] - 1
	return it
}

// EntryIterator walks the entries of one order; see Model.Entries.
type EntryIterator struct {
	m      *Model
	k      int
	first  int // the shortest order whose entry is walked (the prefix's order, or 1)
	i      int
	lo, hi [tables.MaxOrder + 1]int // [j]: entries [lo, hi) of order j are selected
	parent [tables.MaxOrder + 1]int // [j]: current ancestor of order j < k
	gram   [tables.MaxOrder]uint32
	err    error
}

// Next moves to the next entry and reports whether there is one.
func (it *EntryIterator) Next() bool {
	if it.err != nil || it.k == 0 || it.i+1 >= it.hi[it.k] {
		return false
	}
	it.i++
	m, k := it.m, it.k
	// Make parent[j] the entry of order j whose children hold the current
	// entry of order j+1, from the longest order down.
	below := it.i
	for j := k - 1; j >= it.first; j-- {
		p := it.parent[j]
		for p < it.hi[j] {
			if _, end := m.ChildRange(j, p); end > below {
				break
			}
			p++
		}
		if start, end := m.ChildRange(j, p); p >= it.hi[j] || below < start || below >= end {
			name, at := m.sectionOffset(KindChildStarts, j, 4*min(p, m.Count(j)))
			it.err = m.withPath(formatErr(name, at, "entry %d of order %d has no parent: child starts are not ascending", below, j+1))
			return false
		}
		it.parent[j] = p
		below = p
	}
	for j := it.first; j < k; j++ {
		it.gram[j-1] = m.WordAt(j, it.parent[j])
	}
	it.gram[k-1] = m.WordAt(k, it.i)
	return true
}

// Index returns the current entry's index within its order.
func (it *EntryIterator) Index() int { return it.i }

// Gram returns the current entry's word ids, oldest first. The slice is
// reused by the next call to Next.
func (it *EntryIterator) Gram() []uint32 { return it.gram[:it.k] }

// Err returns the damage that stopped the iteration, if any.
func (it *EntryIterator) Err() error { return it.err }
