package format

import (
	"encoding/binary"
	"math"
	"math/bits"
	"slices"
)

// packedHeader is the size of the fields before the bits of a Packed
// section: the bit width and a reserved word.
const packedHeader = 8

// column is one order's probabilities or back-off weights, read in place:
// either plain float32 values, or packed indexes into a float32 codebook.
type column struct {
	plain    []byte // n float32, when not quantized
	packed   []byte // the index bits, when quantized (the narrow column when tiered)
	bits     uint   // bits per index (the wide width when tiered)
	codebook []byte // float32 levels
	n        int
	tier     *tiers // a tiered column (encoding Tiered), or nil
}

// at returns value i, or NaN when i is out of range or the index points
// outside the codebook (a damaged file).
func (c *column) at(i int) float32 {
	if i < 0 || i >= c.n {
		return float32(math.NaN())
	}
	if c.packed == nil {
		if 4*i+4 > len(c.plain) {
			return float32(math.NaN())
		}
		noteRead(c.plain, uint64(4*i))
		return math.Float32frombits(binary.LittleEndian.Uint32(c.plain[4*i:]))
	}
	j := c.index(i)
	if 4*j+4 > len(c.codebook) {
		return float32(math.NaN())
	}
	noteRead(c.codebook, uint64(4*j))
	return math.Float32frombits(binary.LittleEndian.Uint32(c.codebook[4*j:]))
}

// index returns the codebook index of entry i of a packed column.
func (c *column) index(i int) int {
	if c.tier != nil {
		return c.tier.index(c.packed, uint64(i), c.bits)
	}
	return int(packedAt(c.packed, uint64(i), c.bits))
}

// packedAt returns value i of a sequence of width-bit values packed from
// the least significant bit of b's first byte on (spec/FORMAT.md, packed
// columns); bytes past b's end read as zero. width is at most 57.
func packedAt(b []byte, i uint64, width uint) uint64 {
	return bitsAt(b, i*uint64(width), width)
}

// Index returns the codebook index stored for entry i of order k, for the
// probabilities (backoff false) or the back-off weights; ok is false when
// that column is not quantized or there is no such entry, and also where
// a damaged file stores no index for it (a context mark past the stored
// weights, or no +0.0 level for an unmarked context's weight 1).
func (m *Model) Index(k, i int, backoff bool) (index int, ok bool) {
	if k < 1 || k > m.order || i < 0 || i >= m.Count(k) {
		return 0, false
	}
	c := &m.levels[k-1].probs
	if backoff {
		c = &m.levels[k-1].backoffs
		if m.version >= 3 && k < m.order {
			marked, r := m.levels[k-1].marks.rank(uint64(i))
			if c.packed == nil {
				return 0, false
			}
			if !marked { // weight 1: the codebook's level +0.0, if it has one
				for j := 0; 4*j+4 <= len(c.codebook); j++ {
					if u32(c.codebook[4*j:]) == 0 {
						return j, true
					}
				}
				return 0, false
			}
			return c.stored(int(r))
		}
	}
	if c.packed == nil {
		return 0, false
	}
	return c.stored(i)
}

// stored returns the codebook index of the column's value i, if it stores
// one (at reads NaN where it does not).
func (c *column) stored(i int) (int, bool) {
	if i < 0 || i >= c.n {
		return 0, false
	}
	return c.index(i), true
}

// Codebook returns the codebook of order k's probabilities (backoff false)
// or back-off weights, or nil when that column is not quantized.
func (m *Model) Codebook(k int, backoff bool) []float32 {
	if k < 1 || k > m.order {
		return nil
	}
	c := &m.levels[k-1].probs
	if backoff {
		c = &m.levels[k-1].backoffs
	}
	if c.packed == nil {
		return nil
	}
	out := make([]float32, len(c.codebook)/4)
	for j := range out {
		out[j] = math.Float32frombits(binary.LittleEndian.Uint32(c.codebook[4*j:]))
	}
	return out
}

// IndexBits returns the width in bits of each stored codebook index of the
// probabilities (backoff false) or back-off weights of order k, or 0 when
// the column holds plain values.
func (m *Model) IndexBits(k int, backoff bool) int {
	if k < 1 || k > m.order {
		return 0
	}
	c := &m.levels[k-1].probs
	if backoff {
		c = &m.levels[k-1].backoffs
	}
	if c.packed == nil {
		return 0
	}
	return int(c.bits)
}

// StoredBits returns what order k's quantized probabilities (backoff
// false) or back-off weights cost in the file: the bytes of their section
// (spec/FORMAT.md §4.5, packed, or §4.8.6, tiered: header, table, counters,
// narrow and escaped indexes), codebook excluded, times 8 over the entries
// the section stores (in version 3 the back-off weights of contexts only).
// For a packed column it is IndexBits plus the header's share; a tiered
// column stores most entries narrower than IndexBits. It is 0 when the
// column holds plain values or no entries.
func (m *Model) StoredBits(k int, backoff bool) float64 {
	if k < 1 || k > m.order {
		return 0
	}
	c, kind := &m.levels[k-1].probs, KindProbabilities
	if backoff {
		c, kind = &m.levels[k-1].backoffs, KindBackoffs
	}
	if c.packed == nil || c.n == 0 {
		return 0
	}
	for _, s := range m.sections {
		if s.Kind == kind && s.Order == k {
			return float64(s.Length) * 8 / float64(c.n)
		}
	}
	return 0
}

// bitsFor returns the index width for a codebook of n levels (at least 1).
func bitsFor(n int) uint {
	if n <= 2 {
		return 1
	}
	return uint(bits.Len(uint(n - 1)))
}

// packedLen is the length of a Packed section of n indexes of b bits.
func packedLen(n int, b uint) int64 {
	return packedHeader + int64((uint64(n)*uint64(b)+7)/8)
}

// codebookIndexes returns the index of each value in codebook, or false
// when a value is not one of its levels.
func codebookIndexes(values, codebook []float32) ([]int, bool) {
	idx := make([]int, len(values))
	for i, v := range values {
		j, ok := slices.BinarySearchFunc(codebook, v, func(c, v float32) int {
			switch {
			case c < v:
				return -1
			case c > v:
				return 1
			}
			return 0
		})
		if !ok {
			return nil, false
		}
		idx[i] = j
	}
	return idx, true
}

// packIndexes encodes codebook indexes into a codebook of L levels in the
// Packed layout.
func packIndexes(idx []int, L int) []byte {
	b := bitsFor(L)
	out := make([]byte, packedHeader, packedLen(len(idx), b))
	binary.LittleEndian.PutUint32(out, uint32(b))
	values := make([]uint64, len(idx))
	for i, j := range idx {
		values[i] = uint64(j)
	}
	return appendPacked(out, values, b)
}

// encodeColumn encodes the values of a quantized column as codebook
// indexes: packed, or tiered when tiered is allowed (version 3) and takes
// fewer bytes. values must all be levels of codebook (checkWritable).
func encodeColumn(values, codebook []float32, tiered bool) ([]byte, Encoding) {
	idx, _ := codebookIndexes(values, codebook)
	if tiered {
		if plan := planTiers(idx, len(codebook)); plan.narrow != 0 {
			return encodeTiers(idx, len(codebook), plan), Tiered
		}
	}
	return packIndexes(idx, len(codebook)), Packed
}

// columnLength is the length of the section encodeColumn writes.
func columnLength(values, codebook []float32, tiered bool) int64 {
	idx, _ := codebookIndexes(values, codebook)
	if tiered {
		return planTiers(idx, len(codebook)).length
	}
	return packedLen(len(idx), bitsFor(len(codebook)))
}
