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
// instead of 32, each with an 8-bit fingerprint of its word beside it.
// Files with plain starts and 32-bit slots (the first version-3 files)
// and with packed slots without fingerprints keep reading.

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
		{Section: Section{Kind: KindWordHash, Encoding: TaggedIDs}, data: encodePackedWordHash(vocab, tagBits)},
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
	return []int64{starts, int64(text), packedWordHashLen(len(vocab), tagBits)}
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

// slotBits returns the width of a packed word-hash slot's id for v words:
// the fewest bits that hold every id below v and one value more, all ones,
// which marks an empty slot.
func slotBits(v int) uint {
	return uint(max(bits.Len(uint(v)), 1))
}

// tagBits is the width of the fingerprint the reference writer stores
// beside each word id of the word hash (encoding TaggedIDs): a wrong slot
// passes the fingerprint compare once in 256, so a lookup reads the start
// and text of its own word only, almost always. BenchmarkID on the
// vocabulary of the bundled 5-gram model (31,299 words, held-out text,
// load 2.3): 188 ns a word with packed ids alone, 92 with 8-bit
// fingerprints, 94 with 6 bits, 99 with 4 bits; the table grows by
// P bytes (39,132) at 8 bits, 9,781 fewer at 6.
const tagBits = 8

// maxTagBits is the widest fingerprint a file may record.
const maxTagBits = 16

// wordHashHeaderLen is the size of the word hash's fixed fields in
// encoding enc: P and one u32 (encodings 0 and 4), or P, B, F and a
// reserved u32 (encoding 5).
func wordHashHeaderLen(enc Encoding) int {
	if enc == TaggedIDs {
		return taggedWordHashHeader
	}
	return wordHashHeader
}

// taggedWordHashHeader is the size of the fixed fields of a word hash with
// fingerprints.
const taggedWordHashHeader = 16

// packedWordHashLen is the length of a word hash for v words in encoding
// PackedIDs (tag 0) or TaggedIDs with tag-bit fingerprints.
func packedWordHashLen(v int, tag uint) int64 {
	head := int64(wordHashHeader)
	if tag > 0 {
		head = taggedWordHashHeader
	}
	return head + int64((wordHashSlots(v)*uint64(slotBits(v)+tag)+7)/8)
}

// wordTag returns the fingerprint of a word whose hash is h: the top tag
// bits of h. The slot is chosen by h mod P, so the fingerprint is nearly
// independent of where the word sits.
func wordTag(h uint64, tag uint) uint64 {
	return h >> (64 - tag)
}

// encodePackedWordHash returns the word hash of a sorted vocabulary in
// encoding PackedIDs (tag 0): the slots of encodeWordHash, each packed at
// slotBits; or in encoding TaggedIDs: each slot's id in its low slotBits
// bits and the word's fingerprint (wordTag) in the tag bits above, an
// empty slot all ones.
func encodePackedWordHash(vocab []string, tag uint) []byte {
	plain := encodeWordHash(vocab)
	p := wordHashSlots(len(vocab))
	b := slotBits(len(vocab))
	out := make([]byte, packedWordHashLen(len(vocab), tag))
	le := binary.LittleEndian
	le.PutUint32(out, uint32(p))
	le.PutUint32(out[4:], uint32(b))
	slots := out[wordHashHeader:]
	if tag > 0 {
		le.PutUint32(out[8:], uint32(tag))
		slots = out[taggedWordHashHeader:]
	}
	width := b + tag
	for i := uint64(0); i < p; i++ {
		id := le.Uint32(plain[wordHashHeader+4*i:])
		v := uint64(1)<<width - 1
		if id != emptySlot {
			v = uint64(id)
			if tag > 0 {
				v |= wordTag(fnv1aString(vocab[id]), tag) << b
			}
		}
		at := i * uint64(width)
		for x := uint(0); x < width; x++ {
			if v>>x&1 != 0 {
				slots[(at+uint64(x))>>3] |= 1 << ((at + uint64(x)) & 7)
			}
		}
	}
	return out
}

// wordHashTable is the word hash of an opened version-3 model: P slots of
// 32-bit ids (encoding Plain), of bits-wide ids (PackedIDs), or of
// bits-wide ids each with a tag-bit fingerprint above it (TaggedIDs).
type wordHashTable struct {
	slots []byte
	p     uint64
	bits  uint // 0: plain 32-bit slots
	tag   uint // 0: no fingerprints
}

// slot returns the id in slot i, or emptySlot.
func (h *wordHashTable) slot(i uint64) uint32 {
	id, _ := h.entry(i)
	return id
}

// entry returns the id in slot i, or emptySlot, and the slot's
// fingerprint bits (0 without fingerprints).
func (h *wordHashTable) entry(i uint64) (uint32, uint64) {
	if h.bits == 0 {
		if 4*i+4 > uint64(len(h.slots)) {
			return emptySlot, 0
		}
		return binary.LittleEndian.Uint32(h.slots[4*i:]), 0
	}
	v := packedAt(h.slots, i, h.bits+h.tag)
	id := v & (1<<h.bits - 1)
	if id == 1<<h.bits-1 {
		return emptySlot, v >> h.bits
	}
	return uint32(id), v >> h.bits
}

// parseWordHash checks the word hash's fields and size for a vocabulary
// of v words.
func parseWordHash(b []byte, enc Encoding, v int) (wordHashTable, error) {
	head := wordHashHeaderLen(enc)
	if len(b) < head {
		return wordHashTable{}, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), head)
	}
	le := binary.LittleEndian
	p, field := uint64(le.Uint32(b)), le.Uint32(b[4:])
	if want := wordHashSlots(v); p != want {
		return wordHashTable{}, fmt.Errorf("table has %d slots; a vocabulary of %d words needs %d", p, v, want)
	}
	if p > 1<<32-1 {
		return wordHashTable{}, fmt.Errorf("table of %d slots is too large", p)
	}
	h := wordHashTable{slots: b[head:], p: p}
	want := int64(wordHashHeader + 4*p)
	switch enc {
	case PackedIDs, TaggedIDs:
		if w := slotBits(v); field != uint32(w) {
			return wordHashTable{}, fmt.Errorf("slot ids are %d bits wide; a vocabulary of %d words needs %d", field, v, w)
		}
		h.bits = uint(field)
		if enc == TaggedIDs {
			tag, reserved := le.Uint32(b[8:]), le.Uint32(b[12:])
			if tag < 1 || tag > maxTagBits {
				return wordHashTable{}, fmt.Errorf("fingerprints are %d bits wide, outside 1 to %d", tag, maxTagBits)
			}
			if reserved != 0 {
				return wordHashTable{}, fmt.Errorf("reserved field is %08x, expected 0", reserved)
			}
			h.tag = uint(tag)
		}
		want = packedWordHashLen(v, h.tag)
	default:
		if field != 0 {
			return wordHashTable{}, fmt.Errorf("reserved field is %08x, expected 0", field)
		}
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
