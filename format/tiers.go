package format

import (
	"encoding/binary"
	"fmt"
	"math/bits"
	"slices"
)

// A tiered column (encoding Tiered, version 3, spec/FORMAT.md §4.8.6)
// stores the codebook indexes of a quantized column in two tiers: a
// narrow column of b bits per entry holding the 2^b - 1 most frequent
// levels through a small table, its all-ones value meaning "escaped", and
// a wide column holding the full index of every escaped entry, in entry
// order. An escaped entry's place in the wide column is its rank among the
// escaped entries: a counter per block of tierBlock entries gives the
// escapes before the block, and the narrow values of the block before the
// entry give the rest. It is a storage encoding only: every entry reads
// the same codebook index as in a packed column.
//
// Measured on the 8-bit 5-gram Kneser-Ney model of the bundled corpus, the
// back-off weights' 12- and 14-bit codebooks have their 255 most frequent
// levels covering 90-95% of the weights at orders 3 and 4, so an 8-bit
// narrow column with escapes takes 8.8-9.5 bits a weight instead of 12-14.

// tierHeader is the size of a tiered section's fixed fields: the wide
// width B, the narrow width b and the escape count E.
const tierHeader = 16

// tierBlock is how many entries one escape counter covers.
const tierBlock = 256

// tiers is the layout of a tiered column beyond its narrow column (held in
// column.packed).
type tiers struct {
	bits     uint   // narrow width b, 1 <= b < the wide width
	table    []byte // 2^b - 1 u16 codebook indexes, one per narrow value
	counters []byte // u32 per tierBlock entries: escapes before the block
	wide     []byte // the escaped entries' indexes at the wide width
	escapes  uint64
}

// escape is the narrow value of an escaped entry: all ones.
func (t *tiers) escape() uint64 { return 1<<t.bits - 1 }

// badIndex is what index returns for a damaged tiered column: no codebook
// holds that many levels, so the value reads as NaN.
const badIndex = 1 << 17

// index returns the codebook index of entry i (below the column's length)
// of a tiered column whose wide width is wide.
func (t *tiers) index(narrow []byte, i uint64, wide uint) int {
	s := packedAt(narrow, i, t.bits)
	if s != t.escape() {
		if 2*s+2 > uint64(len(t.table)) {
			return badIndex
		}
		noteRead(t.table, 2*s)
		return int(binary.LittleEndian.Uint16(t.table[2*s:]))
	}
	r, ok := t.rank(narrow, i)
	if !ok || r >= t.escapes {
		return badIndex
	}
	return int(packedAt(t.wide, r, wide))
}

// rank returns the number of escaped entries before entry i: the block's
// counter plus the escapes among the block's entries before i.
func (t *tiers) rank(narrow []byte, i uint64) (uint64, bool) {
	at := 4 * (i / tierBlock)
	if at+4 > uint64(len(t.counters)) {
		return 0, false
	}
	noteRead(t.counters, at)
	noteReadRange(narrow, (i&^(tierBlock-1))*uint64(t.bits)>>3, (i*uint64(t.bits)+7)>>3)
	return uint64(u32(t.counters[at:])) + countEscapes(narrow, i&^(tierBlock-1), i, t.bits), true
}

// countEscapes counts the all-ones values among values [from, to) of a
// column of width-bit values.
func countEscapes(narrow []byte, from, to uint64, width uint) uint64 {
	var n uint64
	if width == 8 && to <= uint64(len(narrow)) {
		b := narrow[from:to]
		// Eight bytes at a time: a byte is 0xFF exactly when its
		// complement is zero.
		const low, high = 0x0101010101010101, 0x8080808080808080
		for len(b) >= 8 {
			x := ^binary.LittleEndian.Uint64(b)
			// The high bit of each byte of y is clear exactly when
			// that byte of x is zero (the low seven bits of each byte
			// are added to 0x7F alone, so no carry crosses bytes).
			y := ((x &^ high) + ^uint64(high)) | x
			n += uint64(bits.OnesCount64(^y & high))
			b = b[8:]
		}
		for _, c := range b {
			if c == 0xFF {
				n++
			}
		}
		return n
	}
	// Any width: a window of fields at a time, read as one word from the
	// byte holding the first one (56 bits or more after the shift). A
	// field is all ones exactly when the AND of its bits, gathered at its
	// lowest bit by shifted ANDs (doubling windows, then one shift to the
	// width), is one.
	if width >= 2 && width <= 28 {
		per := uint64(56 / width)
		var low uint64
		for f := uint64(0); f < per; f++ {
			low |= 1 << (f * uint64(width))
		}
		span := uint(1)
		for span*2 <= width {
			span *= 2
		}
		for ; from+per <= to; from += per {
			bit := from * uint64(width)
			x := wordAt(narrow, bit>>3) >> (bit & 7)
			y := x
			for s := uint(1); s < span; s *= 2 {
				y &= y >> s
			}
			if span < width {
				y &= y >> (width - span)
			}
			n += uint64(bits.OnesCount64(y & low))
		}
	}
	esc := uint64(1)<<width - 1
	for j := from; j < to; j++ {
		if packedAt(narrow, j, width) == esc {
			n++
		}
	}
	return n
}

// wordAt reads the 8 bytes of b from byte at as a little-endian word,
// bytes past b's end reading as zero.
func wordAt(b []byte, at uint64) uint64 {
	if at+8 <= uint64(len(b)) {
		return binary.LittleEndian.Uint64(b[at:])
	}
	var w uint64
	for j := uint64(0); at+j < uint64(len(b)) && j < 8; j++ {
		w |= uint64(b[at+j]) << (8 * j)
	}
	return w
}

// tieredLen is the length of a tiered section of n entries with wide
// width wide, narrow width narrow and e escapes.
func tieredLen(n int, wide, narrow uint, e int) int64 {
	blocks := (int64(n) + tierBlock - 1) / tierBlock
	return tierHeader + 2*(int64(1)<<narrow-1) + 4*blocks +
		int64((uint64(n)*uint64(narrow)+7)/8) + int64((uint64(e)*uint64(wide)+7)/8)
}

// tierPlan is the narrow width that gives a column its shortest tiered
// section, and the levels its table holds (ascending); narrow 0 means the
// packed layout is as short or shorter.
type tierPlan struct {
	narrow uint
	levels []int
	length int64
}

// planTiers chooses, from the codebook indexes of a column whose codebook
// has L levels, the narrow width whose tiered section is shortest, if it is
// shorter than the packed section: for each width b the table takes the
// 2^b - 1 most frequent levels (ties to the lower level), then levels no
// entry uses, lowest first, to fill it.
func planTiers(idx []int, L int) tierPlan {
	wide := bitsFor(L)
	best := tierPlan{length: packedLen(len(idx), wide)}
	if wide < 2 || len(idx) == 0 {
		return best
	}
	freq := make([]int, L)
	for _, j := range idx {
		freq[j]++
	}
	byFreq := make([]int, L)
	for j := range byFreq {
		byFreq[j] = j
	}
	slices.SortStableFunc(byFreq, func(a, b int) int { return freq[b] - freq[a] })
	covered := 0
	next := 0 // levels of byFreq counted in covered
	for b := uint(1); b < wide; b++ {
		slots := 1<<b - 1
		for ; next < slots; next++ {
			covered += freq[byFreq[next]]
		}
		if l := tieredLen(len(idx), wide, b, len(idx)-covered); l < best.length {
			best = tierPlan{narrow: b, length: l}
		}
	}
	if best.narrow == 0 {
		return best
	}
	// Levels nobody uses have frequency 0 and sort after the used ones
	// in level order, so the first 2^b - 1 of byFreq are the table.
	best.levels = slices.Clone(byFreq[:1<<best.narrow-1])
	slices.Sort(best.levels)
	return best
}

// encodeTiers writes the tiered section of a column of codebook indexes
// (idx) into a codebook of L levels, with the plan's narrow width.
func encodeTiers(idx []int, L int, plan tierPlan) []byte {
	wide, narrow := bitsFor(L), plan.narrow
	slot := make(map[int]uint64, len(plan.levels))
	for s, j := range plan.levels {
		slot[j] = uint64(s)
	}
	esc := uint64(1)<<narrow - 1
	var escaped []uint64
	narrowValues := make([]uint64, len(idx))
	counters := make([]uint32, 0, (len(idx)+tierBlock-1)/tierBlock)
	for i, j := range idx {
		if i%tierBlock == 0 {
			counters = append(counters, uint32(len(escaped)))
		}
		s, ok := slot[j]
		if !ok {
			s = esc
			escaped = append(escaped, uint64(j))
		}
		narrowValues[i] = s
	}
	out := make([]byte, 0, tieredLen(len(idx), wide, narrow, len(escaped)))
	out = binary.LittleEndian.AppendUint32(out, uint32(wide))
	out = binary.LittleEndian.AppendUint32(out, uint32(narrow))
	out = binary.LittleEndian.AppendUint64(out, uint64(len(escaped)))
	for _, j := range plan.levels {
		out = binary.LittleEndian.AppendUint16(out, uint16(j))
	}
	for _, c := range counters {
		out = binary.LittleEndian.AppendUint32(out, c)
	}
	out = appendPacked(out, narrowValues, narrow)
	return appendPacked(out, escaped, wide)
}

// appendPacked appends values packed at width bits each, least significant
// bit first (the packed layout), the last byte's unused bits zero.
func appendPacked(out []byte, values []uint64, width uint) []byte {
	at := len(out)
	out = append(out, make([]byte, (uint64(len(values))*uint64(width)+7)/8)...)
	b := out[at:]
	for i, v := range values {
		bit := uint64(i) * uint64(width)
		for x := uint(0); x < width; x++ {
			if v>>x&1 != 0 {
				p := bit + uint64(x)
				b[p>>3] |= 1 << (p & 7)
			}
		}
	}
	return out
}

// parseTiers reads a tiered section of n entries whose codebook has L
// levels, checking its fixed fields and length; it returns the narrow
// column and the tiers.
func parseTiers(b []byte, n int64, L int) ([]byte, *tiers, error) {
	if len(b) < tierHeader {
		return nil, nil, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), tierHeader)
	}
	wide, narrow, escapes := u32(b), u32(b[4:]), binary.LittleEndian.Uint64(b[8:])
	if wide != uint32(bitsFor(L)) {
		return nil, nil, fmt.Errorf("indexes are %d bits wide; a codebook of %d values needs %d", wide, L, bitsFor(L))
	}
	if narrow < 1 || narrow >= wide {
		return nil, nil, fmt.Errorf("narrow indexes are %d bits wide; expected 1 to %d", narrow, wide-1)
	}
	if escapes > uint64(n) {
		return nil, nil, fmt.Errorf("%d escaped entries in a column of %d", escapes, n)
	}
	if want := tieredLen(int(n), uint(wide), uint(narrow), int(escapes)); int64(len(b)) != want {
		return nil, nil, fmt.Errorf("section is %d bytes, expected %d for %d indexes of %d bits with %d escaped at %d bits", len(b), want, n, narrow, escapes, wide)
	}
	t := &tiers{bits: uint(narrow), escapes: escapes}
	at := int64(tierHeader)
	take := func(l int64) []byte {
		s := b[at : at+l : at+l]
		at += l
		return s
	}
	t.table = take(2 * (int64(1)<<narrow - 1))
	t.counters = take(4 * ((n + tierBlock - 1) / tierBlock))
	column := take(int64((uint64(n)*uint64(narrow) + 7) / 8))
	t.wide = take(int64(len(b)) - at)
	return column, t, nil
}

// checkTiers returns the problems of a tiered column of n entries beyond
// its fixed fields, with their offsets in the section: table levels that
// do not ascend or lie outside the codebook of L levels, counters that do
// not count the escapes before their block, and an escape count that is
// not the number of escaped entries.
func checkTiers(t *tiers, narrow []byte, n, L int) []Problem {
	var out []Problem
	for s := 0; 2*s+2 <= len(t.table); s++ {
		j := int(binary.LittleEndian.Uint16(t.table[2*s:]))
		switch {
		case j >= L:
			out = append(out, Problem{Offset: int64(tierHeader + 2*s), Msg: fmt.Sprintf("narrow value %d stands for level %d, outside the %d values of its codebook", s, j, L)})
		case s > 0 && int(binary.LittleEndian.Uint16(t.table[2*s-2:])) >= j:
			out = append(out, Problem{Offset: int64(tierHeader + 2*s), Msg: fmt.Sprintf("narrow value %d stands for level %d, which does not ascend after %d", s, j, binary.LittleEndian.Uint16(t.table[2*s-2:]))})
		}
	}
	counted := uint64(0)
	for i := 0; i < n; i += tierBlock {
		at := 4 * (i / tierBlock)
		if c := uint64(u32(t.counters[at:])); c != counted {
			out = append(out, Problem{Offset: int64(tierHeader+len(t.table)) + int64(at), Msg: fmt.Sprintf("escape counter %d says %d entries before entry %d are escaped; %d are", i/tierBlock, c, i, counted)})
		}
		counted += countEscapes(narrow, uint64(i), uint64(min(i+tierBlock, n)), t.bits)
	}
	if counted != t.escapes {
		out = append(out, Problem{Offset: 8, Msg: fmt.Sprintf("the header says %d entries are escaped; %d are", t.escapes, counted)})
	}
	return out
}
