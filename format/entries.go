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
