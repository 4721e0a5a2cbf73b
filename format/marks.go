package format

import (
	"encoding/binary"
	"fmt"
	"math/bits"
)

// Marks are a bit per entry with a rank directory (spec/FORMAT.md §4.10):
// the back-off weights of version 3 are stored only for marked entries, in
// entry order, so the weight of a marked entry i is value rank(i) of its
// column, rank(i) being the number of marked entries before i. One counter
// per 512 bits makes rank two memory reads: the counter and one cache line
// of bits.
//
// A roaring bitmap (its portable serialization is a published format) was
// considered for the same job, on design grounds only (not measured): where
// almost every entry is a context, as in the 5-gram models tried, its
// bitmap containers would take the same bit per entry, and its
// serialization keeps no running counts, so a rank would have to add up the
// cardinalities of every container before the entry's, a cost that grows
// with the model.

// marksHeader is the size of a marks section's fixed fields.
const marksHeader = 16

// marksBlock is the number of bits one rank counter covers.
const marksBlock = 512

// marksSizes returns the number of 64-bit bit words and of uint32 counters
// of a marks section of n entries.
func marksSizes(n uint64) (words, counters uint64) {
	words = (n + 63) / 64
	counters = (words + marksBlock/64 - 1) / (marksBlock / 64)
	return
}

// encodeMarks returns the section bytes marking the entries i with mark(i).
func encodeMarks(n int, mark func(i int) bool) []byte {
	words, counters := marksSizes(uint64(n))
	out := make([]byte, marksHeader+8*words+4*counters)
	le := binary.LittleEndian
	bitsAt := out[marksHeader:]
	var count uint64
	for i := 0; i < n; i++ {
		if mark(i) {
			bitsAt[i/8] |= 1 << (i % 8)
			count++
		}
	}
	le.PutUint64(out, uint64(n))
	le.PutUint64(out[8:], count)
	var run uint32
	for w := uint64(0); w < words; w++ {
		if w%(marksBlock/64) == 0 {
			le.PutUint32(out[marksHeader+8*words+4*(w/(marksBlock/64)):], run)
		}
		run += uint32(bits.OnesCount64(le.Uint64(bitsAt[8*w:])))
	}
	return out
}

// marks reads a marks section in place.
type marks struct {
	n, count uint64
	words    []byte
	counters []byte
}

// parseMarks checks a marks section's fields and size for n entries.
func parseMarks(b []byte, n uint64) (marks, error) {
	if len(b) < marksHeader {
		return marks{}, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), marksHeader)
	}
	le := binary.LittleEndian
	got, count := le.Uint64(b), le.Uint64(b[8:])
	if got != n {
		return marks{}, fmt.Errorf("marks %d entries, expected %d for the counts in the summary", got, n)
	}
	if count > n {
		return marks{}, fmt.Errorf("records %d marked entries out of %d", count, n)
	}
	words, counters := marksSizes(n)
	if size := marksHeader + 8*words + 4*counters; uint64(len(b)) != size {
		return marks{}, fmt.Errorf("section is %d bytes, expected %d for %d entries", len(b), size, n)
	}
	return marks{n: n, count: count, words: b[marksHeader : marksHeader+8*words], counters: b[marksHeader+8*words:]}, nil
}

// rank returns whether entry i is marked and the number of marked entries
// before it.
func (m *marks) rank(i uint64) (marked bool, before uint64) {
	if i >= m.n {
		return false, 0
	}
	le := binary.LittleEndian
	w := i / 64
	block := w / (marksBlock / 64)
	if 4*block+4 > uint64(len(m.counters)) || 8*w+8 > uint64(len(m.words)) {
		return false, 0
	}
	before = uint64(le.Uint32(m.counters[4*block:]))
	noteRead(m.counters, 4*block)
	noteRead(m.words, 8*block*(marksBlock/64)) // the words of the block up to w:
	noteRead(m.words, 8*w)                     // one 64-byte block, at most two lines
	for j := block * (marksBlock / 64); j < w; j++ {
		before += uint64(bits.OnesCount64(le.Uint64(m.words[8*j:])))
	}
	word := le.Uint64(m.words[8*w:])
	before += uint64(bits.OnesCount64(word & (1<<(i%64) - 1)))
	return word>>(i%64)&1 != 0, before
}

// check verifies the counters, the recorded count and the unused bits.
func (m *marks) check() error {
	le := binary.LittleEndian
	var run uint64
	words := uint64(len(m.words) / 8)
	for w := uint64(0); w < words; w++ {
		if w%(marksBlock/64) == 0 {
			if c := uint64(le.Uint32(m.counters[4*(w/(marksBlock/64)):])); c != run {
				return fmt.Errorf("rank counter %d is %d, but %d entries before it are marked", w/(marksBlock/64), c, run)
			}
		}
		word := le.Uint64(m.words[8*w:])
		if w == words-1 && m.n%64 != 0 && word>>(m.n%64) != 0 {
			return fmt.Errorf("bits past the last entry are set")
		}
		run += uint64(bits.OnesCount64(word))
	}
	if run != m.count {
		return fmt.Errorf("%d entries are marked, %d recorded", run, m.count)
	}
	return nil
}

// touch reads, without using them, the counter and the bit word that
// rank(i) reads, so that the reads of several orders start together.
func (m *marks) touch(i uint64) uint64 {
	var t uint64
	w := i / 64
	if b := 4 * (w / (marksBlock / 64)); b < uint64(len(m.counters)) {
		t = uint64(m.counters[b])
	}
	if 8*w < uint64(len(m.words)) {
		t += uint64(m.words[8*w])
	}
	return t
}
