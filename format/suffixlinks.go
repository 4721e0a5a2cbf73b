package format

import (
	"sync"

	"ingot/compile/tables"
)

// suffixTable holds the suffix link of every entry of orders 2..N: the
// entry of the order below that stores the entry's suffix (its last k-1
// words), or noNode. It is built once per model, on first use, by the
// whole-trie tools (the suffix rule of CheckStructure, verify's
// normalisation); queries never need it.
type suffixTable struct {
	once sync.Once
	link [tables.MaxOrder][]uint32 // [k-1]: the links of the entries of order k >= 2
	ok   bool                      // built: the trie decodes
}

// SuffixLink returns the index of the entry of order k-1 that stores the
// suffix (the last k-1 words) of entry i of order k, for k >= 2; ok is
// false when that suffix is not stored (which a model flagged
// suffix-closed never has) or the trie is damaged. A bigram's suffix is
// the unigram of its last word.
//
// The links of all orders are found together on the first call, in time
// linear in the model: a version-3 trie finds them while it decodes (its
// keys are ranks among the successors of the parent's suffix); for
// versions 1 and 2 the children of each entry are merged with those of
// the entry's own suffix, which ascend alike. They cost 4 bytes per entry
// of orders 2 and up, kept until the model is closed.
func (m *Model) SuffixLink(k, i int) (int, bool) {
	t := m.suffixes()
	if t == nil || k < 2 || k > m.order {
		return -1, false
	}
	links := t.link[k-1]
	if i < 0 || i >= len(links) || links[i] == noNode {
		return -1, false
	}
	return int(links[i]), true
}

// suffixes returns the model's suffix links, building them on first use;
// nil when the trie is damaged.
func (m *Model) suffixes() *suffixTable {
	t := m.links
	if t == nil {
		return nil
	}
	t.once.Do(func() { t.ok = m.buildSuffixLinks(t) })
	if !t.ok {
		return nil
	}
	return t
}

// buildSuffixLinks fills t, reporting whether the trie allowed it.
func (m *Model) buildSuffixLinks(t *suffixTable) bool {
	if m.order < 2 {
		return true
	}
	if d := m.decoded; d != nil {
		if _, _, err := m.trie(1); err != nil {
			return false
		}
		for k := 2; k <= m.order; k++ {
			t.link[k-1] = d.suffix[k-1]
		}
		return true
	}
	// Order 2: the suffix of a bigram is the unigram of its last word.
	_, words2, _ := m.trie(2)
	link := make([]uint32, m.Count(2))
	for i := range link {
		link[i] = noNode
		if 4*i+4 <= len(words2) {
			if w := u32(words2[4*i:]); uint64(w) < uint64(m.vocabSize) {
				link[i] = w
			}
		}
	}
	t.link[1] = link
	for k := 2; k < m.order; k++ {
		parents, _, _ := m.trie(k)
		lowerStarts, _, _ := m.trie(k - 1)
		_, lowerWords, _ := m.trie(k)
		_, words, _ := m.trie(k + 1)
		nLower, nWords := uint64(len(lowerWords)/4), uint64(len(words)/4)
		next := make([]uint32, m.Count(k+1))
		for e := range next {
			next[e] = noNode
		}
		for p := 0; p < m.Count(k) && 4*p+8 <= len(parents); p++ {
			a, b := uint64(u32(parents[4*p:])), uint64(u32(parents[4*p+4:]))
			b = min(b, nWords, uint64(len(next)))
			// The children of p and of its suffix h both ascend by word:
			// each search starts where the last one ended.
			var lo, hi uint64
			if h := link[p]; h != noNode && 4*int(h)+8 <= len(lowerStarts) {
				lo, hi = uint64(u32(lowerStarts[4*h:])), uint64(u32(lowerStarts[4*h+4:]))
				hi = min(hi, nLower)
			}
			for e := a; e < b; e++ {
				if lo >= hi {
					break
				}
				w := u32(words[4*e:])
				lo = gallop(lowerWords, lo, hi, w)
				if lo < hi && u32(lowerWords[4*lo:]) == w {
					next[e] = uint32(lo)
				}
			}
		}
		t.link[k] = next
		link = next
	}
	return true
}
