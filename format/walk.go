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
	lo, hi := uint64(u32(starts[4*p:])), uint64(u32(starts[4*p+4:]))
	hi = min(hi, uint64(len(words)/4))
	if lo >= hi {
		return noNode
	}
	return findIn(words, lo, hi, w)
}
