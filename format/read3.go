package format

import (
	"encoding/binary"
	"sync"
	"sync/atomic"

	"ingot/compile/tables"
)

// readLevels3 finds the sections of a version-3 model and checks their
// fixed fields and sizes against the summary, reading nothing proportional
// to the number of n-grams.
func (m *Model) readLevels3() error {
	s, b, err := m.needEncoded(KindWordHash, 0, -1, Plain, PackedIDs, TaggedIDs)
	if err != nil {
		return err
	}
	h, err := parseWordHash(b, s.Encoding, m.vocabSize)
	if err != nil {
		return formatErr(s.Name(), s.Offset, "%v", err)
	}
	m.wordHash = &h
	for k := 1; k <= m.order; k++ {
		n := uint64(m.counts[k-1])
		lv := &m.levels[k-1]
		if k >= 2 {
			encodings := []Encoding{EliasFano, ListIDs, CodedListIDs}
			if k >= 3 {
				encodings = append(encodings, EliasFanoRanks, ListRanks, CodedListRanks)
			}
			s, b, err := m.needEncoded(KindLastWords, k, -1, encodings...)
			if err != nil {
				return err
			}
			lv.coded = s.Encoding == CodedListIDs || s.Encoding == CodedListRanks
			lv.listed = s.Encoding == ListIDs || s.Encoding == ListRanks || lv.coded
			if lv.listed {
				lv.lists, err = parseKeyLists(b, m.levels[k-2].marks.count)
			} else {
				lv.keys, err = parseEliasFano(b, n)
			}
			if err != nil {
				return formatErr(s.Name(), s.Offset, "%v", err)
			}
			lv.ranked = s.Encoding == EliasFanoRanks || s.Encoding == ListRanks || s.Encoding == CodedListRanks
		}
		if lv.probs, err = m.readColumn(KindProbabilities, KindProbCodebook, k, int64(n)); err != nil {
			return err
		}
		if k == m.order {
			break
		}
		s, b, err := m.needEncoded(KindContexts, k, -1, Plain)
		if err != nil {
			return err
		}
		if lv.marks, err = parseMarks(b, n); err != nil {
			return formatErr(s.Name(), s.Offset, "%v", err)
		}
		if lv.backoffs, err = m.readColumn(KindBackoffs, KindBackoffCodebook, k, int64(lv.marks.count)); err != nil {
			return err
		}
		if s, b, err = m.needEncoded(KindChildStarts, k, -1, EliasFano); err != nil {
			return err
		}
		if lv.childStarts, err = parseEliasFano(b, lv.marks.count+1); err != nil {
			return formatErr(s.Name(), s.Offset, "%v", err)
		}
		if first, ok := lv.childStarts.get(0); !ok || first != 0 {
			return formatErr(s.Name(), s.Offset, "first child start is %d, expected 0", first)
		}
		if last := lv.childStarts.last; last != uint64(m.counts[k]) {
			return formatErr(s.Name(), s.Offset, "last child start is %d, expected the %d entries of order %d", last, m.counts[k], k+1)
		}
	}
	for _, s := range m.sections {
		if !m.expected(s) {
			return formatErr(s.Name(), s.Offset, "section has no place in a model of order %d", m.order)
		}
	}
	return nil
}

// childRange3 returns the children [lo, hi) at order k+1 of entry i of
// order k, clipped to the entries that exist.
func (m *Model) childRange3(k int, i uint32) (lo, hi uint64) {
	if k < 1 || k >= m.order {
		return 0, 0
	}
	lv := &m.levels[k-1]
	marked, r := lv.marks.rank(uint64(i))
	if !marked {
		return 0, 0
	}
	return m.childRangeAt(k, r)
}

// childRangeAt returns the children [lo, hi) at order k+1 of the context
// of rank r among the contexts of order k, clipped to the entries that
// exist.
func (m *Model) childRangeAt(k int, r uint64) (lo, hi uint64) {
	a, b, ok := m.levels[k-1].childStarts.pair(r)
	if !ok {
		return 0, 0
	}
	b = min(b, uint64(m.counts[k]))
	return min(a, b), b
}

// searchKeys returns the entry in [lo, hi) of order k whose key is key, or
// noNode. Keys ascend within the range, each stored as the range's base
// (the value before lo) plus the key.
func (m *Model) searchKeys(k int, lo, hi uint64, key uint64) uint32 {
	if lo >= hi || k < 2 || k > m.order {
		return noNode
	}
	e := &m.levels[k-1].keys
	var base uint64
	var c efCursor
	if lo > 0 {
		c = e.seek(lo - 1)
		if !c.ok {
			return noNode
		}
		base = c.value()
		if !c.next() {
			return noNode
		}
	} else if c = e.seek(0); !c.ok {
		return noNode
	}
	if !c.nextAtLeast(base+key, hi) || c.value() != base+key {
		return noNode
	}
	return uint32(c.i)
}

// extensions3 is extensions for version 3. Child ranges depend only on the
// state, so they are looked up first, independently of each other; at a
// ranked order the key of w under h_j is the position of h_{j-1} w among
// the successors of h_{j-1}, found one order below.
func (m *Model) extensions3(s *State, w uint32, child *[tables.MaxOrder]uint32) int {
	n := min(max(s.n, 0), max(m.order-1, 0))
	child[0] = noNode
	if uint64(w) < uint64(m.vocabSize) {
		child[0] = w
	}
	// The child range of every stored suffix depends only on the state.
	// Each takes a chain of reads (the context's mark and rank counter, the
	// sample and bits of its child start, then the keys before its first
	// child); the passes below run one link of every order's chain before
	// the next link of any, and touch (read without using) the words the
	// next pass needs, so that the memory system fetches them together.
	var lo, hi, r [tables.MaxOrder]uint64
	var marked [tables.MaxOrder]bool
	var touched uint64
	for j := 1; j <= n; j++ {
		if p := s.node[j-1]; p != noNode {
			touched += m.levels[j-1].marks.touch(uint64(p))
		}
	}
	for j := 1; j <= n; j++ {
		if p := s.node[j-1]; p != noNode {
			lv := &m.levels[j-1]
			marked[j], r[j] = lv.marks.rank(uint64(p))
			touched += lv.childStarts.touch(r[j])
		}
	}
	// With key lists, the list's start is found by the same rank as the
	// child start: its first words are touched with the child start's.
	for j := 1; j <= n; j++ {
		if marked[j] && m.levels[j].listed {
			touched += m.levels[j].lists.touch(r[j])
		}
	}
	for j := 1; j <= n; j++ {
		if marked[j] {
			lo[j], hi[j] = m.childRangeAt(j, r[j])
			if lo[j] < hi[j] && !m.levels[j].listed {
				touched += m.levels[j].keys.touch(lo[j] - min(lo[j], 1))
			}
		}
	}
	if touched == ^uint64(0) { // never (a sum of a few bytes): keeps the touches
		return 0
	}
	for j := 1; j <= n; j++ {
		child[j] = noNode
		if s.node[j-1] == noNode || lo[j] >= hi[j] {
			continue
		}
		key := uint64(w)
		if m.levels[j].ranked {
			below := child[j-1]
			if below == noNode || j < 2 || s.node[j-2] == noNode {
				continue // h_{j-1} w is not stored, so neither is h_j w
			}
			key = uint64(below) - lo[j-1]
		} else if child[0] == noNode {
			continue
		}
		if next := &m.levels[j]; next.coded {
			a, b, ok := next.lists.starts.pair(r[j])
			if !ok {
				continue
			}
			if i, ok := next.lists.codedFind(a, b, hi[j]-lo[j], key); ok {
				child[j] = uint32(lo[j] + i)
			}
			continue
		} else if next.listed {
			start, width, ok := next.lists.list(r[j], hi[j]-lo[j])
			if !ok {
				continue
			}
			if i, ok := next.lists.find(start, width, hi[j]-lo[j], key); ok {
				child[j] = uint32(lo[j] + i)
			}
			continue
		}
		child[j] = m.searchKeys(j+1, lo[j], hi[j], key)
	}
	return n
}

// decodedTrie holds, for a version-3 model, the child starts and last
// words of every order as plain little-endian uint32 columns (the layout of
// versions 1 and 2), decoded on first use by the tools that walk the whole
// trie: Entries, WordAt, ToTables, Verify. Queries never need it.
type decodedTrie struct {
	once   sync.Once
	starts [tables.MaxOrder][]byte   // [k-1]: n_k+1 child starts of order k < N
	words  [tables.MaxOrder][]byte   // [k-1]: last word ids of order k >= 2
	suffix [tables.MaxOrder][]uint32 // [k-1]: suffix links of order k >= 2 (see SuffixLink)
	err    error
	ready  atomic.Bool // decoded without error: Find may walk the plain columns
}

// trie returns the child starts of order k and the last words of order k,
// as plain uint32 columns: in place for versions 1 and 2, decoded once for
// version 3 (nil with an error when the file is damaged).
func (m *Model) trie(k int) (starts, words []byte, err error) {
	if k < 1 || k > m.order {
		return nil, nil, nil
	}
	if m.decoded == nil {
		return m.levels[k-1].starts, m.levels[k-1].lastWords, nil
	}
	d := m.decoded
	d.once.Do(func() {
		d.err = m.decodeTrie(d)
		d.ready.Store(d.err == nil)
	})
	if d.err != nil {
		return nil, nil, d.err
	}
	return d.starts[k-1], d.words[k-1], nil
}

// decodeTrie decodes every Elias-Fano section into plain columns, checking
// the structure as it goes: each sequence well formed, child starts
// ascending from 0 to the next order's count, keys strictly ascending under
// each parent, word ids inside the vocabulary, ranks inside the successors
// of the parent's suffix. The first defect is returned.
func (m *Model) decodeTrie(d *decodedTrie) error {
	le := binary.LittleEndian
	// suffix[e]: the entry of order k-1 storing the suffix of entry e of
	// order k (or noNode), for the previous order k; for order 1 the
	// suffix is the empty context.
	var suffix []uint32
	var startsVals [tables.MaxOrder][]uint64
	for k := 1; k <= m.order; k++ {
		n := uint64(m.counts[k-1])
		lv := &m.levels[k-1]
		if k < m.order {
			if err := lv.marks.check(); err != nil {
				name, at := m.sectionOffset(KindContexts, k, 0)
				return formatErr(name, at, "%v", err)
			}
			ctx := make([]uint64, lv.marks.count+1)
			if err := lv.childStarts.decodeAll(ctx); err != nil {
				name, at := m.sectionOffset(KindChildStarts, k, 0)
				return formatErr(name, at, "%v", err)
			}
			if ctx[0] != 0 || ctx[len(ctx)-1] != uint64(m.counts[k]) {
				name, at := m.sectionOffset(KindChildStarts, k, 0)
				return formatErr(name, at, "child starts run from %d to %d, expected 0 to %d", ctx[0], ctx[len(ctx)-1], m.counts[k])
			}
			// Every entry's start is that of the first context at or after it.
			vals := make([]uint64, n+1)
			var r uint64
			for i := uint64(0); i < n; i++ {
				vals[i] = ctx[r]
				if marked, _ := lv.marks.rank(i); marked {
					r++
				}
			}
			vals[n] = ctx[r]
			startsVals[k-1] = vals
			b := make([]byte, 4*(n+1))
			for i, v := range vals {
				le.PutUint32(b[4*i:], uint32(v))
			}
			d.starts[k-1] = b
		}
		if k == 1 {
			continue
		}
		// keys[e]: the key of entry e under its parent.
		keys := make([]uint64, n)
		parents := startsVals[k-2]
		if lv.listed {
			// Lists by the rank of their parent among the contexts.
			ctxStarts := make([]uint64, 0, m.levels[k-2].marks.count+1)
			for p := 0; p+1 < len(parents); p++ {
				if marked, _ := m.levels[k-2].marks.rank(uint64(p)); marked {
					ctxStarts = append(ctxStarts, parents[p])
				}
			}
			ctxStarts = append(ctxStarts, parents[len(parents)-1])
			decode := lv.lists.decodeLists
			if lv.coded {
				decode = lv.lists.decodeCodedLists
			}
			if err := decode(keys, func(r uint64) (a, b uint64) { return ctxStarts[r], ctxStarts[r+1] }); err != nil {
				name, at := m.sectionOffset(KindLastWords, k, 0)
				return formatErr(name, at, "%v", err)
			}
		} else {
			x := make([]uint64, n)
			if err := lv.keys.decodeAll(x); err != nil {
				name, at := m.sectionOffset(KindLastWords, k, 0)
				return formatErr(name, at, "%v", err)
			}
			for p := 0; p+1 < len(parents); p++ {
				lo, hi := parents[p], parents[p+1]
				var base uint64
				if lo > 0 {
					base = x[lo-1]
				}
				for e := lo; e < hi; e++ {
					if e > lo && x[e] == x[e-1] {
						name, at := m.sectionOffset(KindLastWords, k, 0)
						return formatErr(name, at, "entry %d repeats the key of its sibling", e)
					}
					keys[e] = x[e] - base
				}
			}
		}
		words := make([]byte, 4*n)
		next := make([]uint32, n)
		var prevWords []byte
		if k >= 3 {
			prevWords = d.words[k-2]
		}
		for p := 0; p+1 < len(parents); p++ {
			lo, hi := parents[p], parents[p+1]
			for e := lo; e < hi; e++ {
				key := keys[e]
				var word, suf uint32
				switch {
				case lv.ranked:
					// The successors of the parent's suffix h' at order k-1.
					h := suffix[p]
					if h == noNode {
						name, at := m.sectionOffset(KindLastWords, k, 0)
						return formatErr(name, at, "entry %d is keyed by rank, but its parent's suffix is not stored", e)
					}
					a, b := startsVals[k-3][h], startsVals[k-3][h+1]
					if key >= b-a {
						name, at := m.sectionOffset(KindLastWords, k, 0)
						return formatErr(name, at, "entry %d holds rank %d, but its parent's suffix has %d successors", e, key, b-a)
					}
					suf = uint32(a + key)
					word = le.Uint32(prevWords[4*suf:])
				default:
					if key >= uint64(m.vocabSize) {
						name, at := m.sectionOffset(KindLastWords, k, 0)
						return formatErr(name, at, "entry %d holds word id %d, outside the vocabulary of %d words", e, key, m.vocabSize)
					}
					word = uint32(key)
					suf = word // order 2: the suffix is the unigram
					if k >= 3 {
						suf = noNode
						if h := suffix[p]; h != noNode {
							suf = findIn(prevWords, startsVals[k-3][h], startsVals[k-3][h+1], word)
						}
					}
				}
				le.PutUint32(words[4*e:], word)
				next[e] = suf
			}
		}
		d.words[k-1] = words
		d.suffix[k-1] = next
		suffix = next
	}
	return nil
}

// findIn binary-searches word among the uint32 words [lo, hi) of a plain
// column, returning its index or noNode.
func findIn(words []byte, lo, hi uint64, word uint32) uint32 {
	end := hi
	for lo < hi {
		mid := lo + (hi-lo)/2
		noteRead(words, 4*mid)
		if binary.LittleEndian.Uint32(words[4*mid:]) < word {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	if lo < end && 4*lo+4 <= uint64(len(words)) && binary.LittleEndian.Uint32(words[4*lo:]) == word {
		return uint32(lo)
	}
	return noNode
}

// decodeErr reports the damage found by the first decode of a version-3
// trie, or nil.
func (m *Model) decodeErr() error {
	if m.decoded == nil {
		return nil
	}
	_, _, err := m.trie(1)
	if err != nil {
		return m.withPath(err)
	}
	return nil
}
