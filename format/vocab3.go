package format

import (
	"encoding/binary"
	"fmt"
	"math/bits"
)

// The vocabulary of a version-3 file as the reference writer writes it
// (spec/FORMAT.md §4.8.4 and §4.8.5): the word starts as one Elias-Fano
// sequence (Elias 1974; Fano 1971) of V+1 non-decreasing offsets, about
// 2 + log2(average word length) bits a word instead of 32, and the word
// hash's slots packed at the width of a word id, ceil(log2(V+1)) bits,
// instead of 32. Files with plain starts and 32-bit slots (the first
// version-3 files) keep reading.

// vocabularySections3 returns the word starts, word text and word hash of
// a sorted vocabulary, in the encodings the version-3 writer writes.
func vocabularySections3(vocab []string) []section {
	starts := make([]uint64, len(vocab)+1)
	text := make([]byte, 0, wordTextLen(vocab))
	for i, w := range vocab {
		starts[i] = uint64(len(text))
		text = append(text, w...)
	}
	starts[len(vocab)] = uint64(len(text))
	startsSection := section{Section: Section{Kind: KindWordStarts, Encoding: EliasFano}, data: encodeEliasFano(starts)}
	if !startsCodedSmaller(len(vocab), len(text)) {
		plain, _ := vocabularyBytes(vocab)
		startsSection = section{Section: Section{Kind: KindWordStarts}, data: plain}
	}
	return []section{
		startsSection,
		{Section: Section{Kind: KindWordText}, data: text},
		{Section: Section{Kind: KindWordHash, Encoding: PackedIDs}, data: encodePackedWordHash(vocab)},
	}
}

// vocabularyLengths3 returns the lengths of vocabularySections3's
// sections, computed without encoding them.
func vocabularyLengths3(vocab []string) []int64 {
	text := wordTextLen(vocab)
	starts := int64(4 * (len(vocab) + 1))
	if startsCodedSmaller(len(vocab), text) {
		starts = efLength(uint64(len(vocab))+1, uint64(text))
	}
	return []int64{starts, int64(text), packedWordHashLen(len(vocab))}
}

// startsCodedSmaller reports whether the word starts of v words of text
// bytes in all take fewer bytes in Elias-Fano form than as u32 values;
// the writer writes the smaller (a vocabulary of a few words keeps plain
// starts).
func startsCodedSmaller(v, text int) bool {
	return efLength(uint64(v)+1, uint64(text)) < int64(4*(v+1))
}

func wordTextLen(vocab []string) int {
	n := 0
	for _, w := range vocab {
		n += len(w)
	}
	return n
}

// slotBits returns the width of a packed word-hash slot for v words: the
// fewest bits that hold every id below v and one value more, all ones,
// which marks an empty slot.
func slotBits(v int) uint {
	return uint(max(bits.Len(uint(v)), 1))
}

// packedWordHashLen is the length of a packed word hash for v words.
func packedWordHashLen(v int) int64 {
	return wordHashHeader + int64((wordHashSlots(v)*uint64(slotBits(v))+7)/8)
}

// encodePackedWordHash returns the packed word hash of a sorted
// vocabulary: the slots of encodeWordHash, each packed at slotBits.
func encodePackedWordHash(vocab []string) []byte {
	plain := encodeWordHash(vocab)
	p := wordHashSlots(len(vocab))
	b := slotBits(len(vocab))
	out := make([]byte, packedWordHashLen(len(vocab)))
	le := binary.LittleEndian
	le.PutUint32(out, uint32(p))
	le.PutUint32(out[4:], uint32(b))
	slots := out[wordHashHeader:]
	empty := uint64(1)<<b - 1
	for i := uint64(0); i < p; i++ {
		v := uint64(le.Uint32(plain[wordHashHeader+4*i:]))
		if v == uint64(emptySlot) {
			v = empty
		}
		at := i * uint64(b)
		for x := uint(0); x < b; x++ {
			if v>>x&1 != 0 {
				slots[(at+uint64(x))>>3] |= 1 << ((at + uint64(x)) & 7)
			}
		}
	}
	return out
}

// wordHashTable is the word hash of an opened version-3 model: P slots of
// 32-bit ids (encoding Plain) or of bits-wide ids (PackedIDs).
type wordHashTable struct {
	slots []byte
	p     uint64
	bits  uint // 0: plain 32-bit slots
}

// slot returns the id in slot i, or emptySlot.
func (h *wordHashTable) slot(i uint64) uint32 {
	if h.bits == 0 {
		if 4*i+4 > uint64(len(h.slots)) {
			return emptySlot
		}
		return binary.LittleEndian.Uint32(h.slots[4*i:])
	}
	v := packedAt(h.slots, i, h.bits)
	if v == 1<<h.bits-1 {
		return emptySlot
	}
	return uint32(v)
}

// parseWordHash checks the word hash's fields and size for a vocabulary
// of v words.
func parseWordHash(b []byte, enc Encoding, v int) (wordHashTable, error) {
	if len(b) < wordHashHeader {
		return wordHashTable{}, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), wordHashHeader)
	}
	le := binary.LittleEndian
	p, field := uint64(le.Uint32(b)), le.Uint32(b[4:])
	if want := wordHashSlots(v); p != want {
		return wordHashTable{}, fmt.Errorf("table has %d slots; a vocabulary of %d words needs %d", p, v, want)
	}
	if p > 1<<32-1 {
		return wordHashTable{}, fmt.Errorf("table of %d slots is too large", p)
	}
	h := wordHashTable{slots: b[wordHashHeader:], p: p}
	want := int64(wordHashHeader + 4*p)
	if enc == PackedIDs {
		if w := slotBits(v); field != uint32(w) {
			return wordHashTable{}, fmt.Errorf("slots are %d bits wide; a vocabulary of %d words needs %d", field, v, w)
		}
		h.bits = uint(field)
		want = packedWordHashLen(v)
	} else if field != 0 {
		return wordHashTable{}, fmt.Errorf("reserved field is %08x, expected 0", field)
	}
	if int64(len(b)) != want {
		return wordHashTable{}, fmt.Errorf("section is %d bytes, expected %d for %d slots", len(b), want, p)
	}
	return h, nil
}

// wordSpan returns the byte range of word id in the word text, from plain
// or Elias-Fano word starts; ok is false for an id outside the vocabulary
// or a range the stored starts make impossible.
func (m *Model) wordSpan(id uint32) (a, b uint64, ok bool) {
	if uint64(id) >= uint64(m.vocabSize) {
		return 0, 0, false
	}
	if m.startsCoded {
		a, b, ok = m.wordStartsEF.pair(uint64(id))
	} else if i := uint64(id); 4*i+8 <= uint64(len(m.wordStarts)) {
		a, b, ok = uint64(u32(m.wordStarts[4*i:])), uint64(u32(m.wordStarts[4*i+4:])), true
	}
	if !ok || a > b || b > uint64(len(m.wordText)) {
		return a, b, false
	}
	return a, b, true
}
