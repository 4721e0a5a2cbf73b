package format

import (
	"fmt"
	"math"

	"ingot/compile/tables"
)

// WordAt returns the last word id of entry i of order k (for order 1, the
// entry's index is its word id), or the reserved id 0xFFFFFFFF when there is
// no such entry.
func (m *Model) WordAt(k, i int) uint32 {
	if i < 0 || i >= m.Count(k) {
		return noNode
	}
	if k == 1 {
		return uint32(i)
	}
	if _, b, _ := m.trie(k); 4*i+4 <= len(b) {
		return u32(b[4*i:])
	}
	return noNode
}

// LogProbAt returns the stored log10 probability of entry i of order k, or
// NaN when there is no such entry.
func (m *Model) LogProbAt(k, i int) float32 {
	if k < 1 || k > m.order {
		return float32(math.NaN())
	}
	return m.levels[k-1].probs.at(i)
}

// LogBackoffAt returns the stored log10 back-off weight of entry i of order
// k: 0 (weight 1) at the highest order, NaN when there is no such entry.
func (m *Model) LogBackoffAt(k, i int) float32 {
	if k == m.order && i >= 0 && i < m.Count(k) {
		return 0
	}
	if k < 1 || k > m.order {
		return float32(math.NaN())
	}
	lv := &m.levels[k-1]
	if m.version >= 3 && k < m.order {
		marked, r := lv.marks.rank(uint64(i))
		switch {
		case i < 0 || i >= m.Count(k):
			return float32(math.NaN())
		case !marked:
			return 0
		}
		return lv.backoffs.at(int(r))
	}
	return lv.backoffs.at(i)
}

func floatAt(b []byte, i int) float32 {
	if i < 0 || i >= len(b)/4 {
		return float32(math.NaN())
	}
	return math.Float32frombits(u32(b[4*i:]))
}

// ChildRange returns the entries of order k+1 that extend entry i of order
// k: [start, end). The range is empty at the highest order, and clipped to
// the entries that exist when the stored values are damaged.
func (m *Model) ChildRange(k, i int) (start, end int) {
	if k < 1 || k >= m.order || i < 0 || i >= m.Count(k) {
		return 0, 0
	}
	if m.version >= 3 {
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
	it := &EntryIterator{m: m, k: k, i: -1}
	if k < 1 || k > m.order {
		it.k = 0
	}
	return it
}

// EntryIterator walks the entries of one order; see Model.Entries.
type EntryIterator struct {
	m      *Model
	k      int
	i      int
	parent [tables.MaxOrder]int // parent[j-1]: current entry of order j < k
	gram   [tables.MaxOrder]uint32
	err    error
}

// Next moves to the next entry and reports whether there is one.
func (it *EntryIterator) Next() bool {
	if it.err != nil || it.k == 0 || it.i+1 >= it.m.Count(it.k) {
		return false
	}
	it.i++
	m, k := it.m, it.k
	// Make parent[j-1] the entry of order j whose children hold the current
	// entry of order j+1, from the longest order down.
	below := it.i
	for j := k - 1; j >= 1; j-- {
		p := it.parent[j-1]
		for p < m.Count(j) {
			if _, end := m.ChildRange(j, p); end > below {
				break
			}
			p++
		}
		if start, end := m.ChildRange(j, p); p >= m.Count(j) || below < start || below >= end {
			name, at := m.sectionOffset(KindChildStarts, j, 4*min(p, m.Count(j)))
			it.err = m.withPath(formatErr(name, at, "entry %d of order %d has no parent: child starts are not ascending", below, j+1))
			return false
		}
		it.parent[j-1] = p
		below = p
	}
	for j := 1; j < k; j++ {
		it.gram[j-1] = m.WordAt(j, it.parent[j-1])
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

// ToTables reads the whole model back into memory, for tools that rewrite
// models. The result passes Tables.Check and can be written again, or an
// error says why not.
func ToTables(m *Model) (*tables.Tables, error) {
	t := &tables.Tables{
		Vocab:  make([]string, m.VocabSize()),
		Levels: make([]tables.Level, m.Order()),
		Info:   m.Info(),
	}
	for id := range t.Vocab {
		t.Vocab[id] = m.Word(uint32(id))
	}
	for k := 1; k <= m.Order(); k++ {
		n := m.Count(k)
		lv := tables.Level{Words: make([]uint32, 0, k*n), LogProb: make([]float32, n)}
		if k < m.Order() {
			lv.LogBackoff = make([]float32, n)
		}
		it := m.Entries(k)
		for it.Next() {
			i := it.Index()
			lv.Words = append(lv.Words, it.Gram()...)
			lv.LogProb[i] = m.LogProbAt(k, i)
			if lv.LogBackoff != nil {
				lv.LogBackoff[i] = m.LogBackoffAt(k, i)
			}
		}
		lv.ProbCodebook = m.Codebook(k, false)
		if k < m.Order() {
			lv.BackoffCodebook = m.Codebook(k, true)
		}
		if err := it.Err(); err != nil {
			return nil, err
		}
		t.Levels[k-1] = lv
	}
	if err := checkWritable(t); err != nil {
		return nil, fmt.Errorf("%s: read back: %w", m.label(), err)
	}
	return t, nil
}

// TrieColumns returns the child starts of order k (n_k+1 values, for k < N)
// and the last words of order k (n_k word ids, for k >= 2), each as
// little-endian uint32 values: the file's own bytes in versions 1 and 2,
// decoded once (and checked: every Elias-Fano sequence well formed, keys
// ascending under each parent, word ids and ranks in range) in version 3.
// The slices are shared; treat them as read-only. The error is a
// *FormatError naming the first damage found.
func (m *Model) TrieColumns(k int) (childStarts, lastWords []byte, err error) {
	s, w, err := m.trie(k)
	if err != nil {
		return nil, nil, m.withPath(err)
	}
	if k >= m.order {
		s = nil
	}
	if k < 2 {
		w = nil
	}
	return s, w, nil
}
