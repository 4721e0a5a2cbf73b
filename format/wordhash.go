package format

import (
	"encoding/binary"
)

// The word hash (version 3, spec/FORMAT.md §4.11) maps a word to its id in
// a few memory reads, where a binary search over the word list costs about
// 2 log2 V string comparisons: a table of P slots, P a power of two, each
// holding a word id or 0xFFFFFFFF (empty). A word is looked up at slot
// FNV-1a(word) mod P and the slots after it, wrapping around, until its id
// or an empty slot. P = V + V/4 + 1 keeps at most four slots in five used,
// so a lookup probes about three slots, usually in one cache line. The table lives in the file, so opening a model still
// reads nothing proportional to its size.

// wordHashHeader is the size of the word hash's fixed fields.
const wordHashHeader = 8

// emptySlot marks an unused slot of the word hash.
const emptySlot = ^uint32(0)

// wordHashSlots returns P for a vocabulary of v words: v + v/4 + 1.
func wordHashSlots(v int) uint64 {
	return uint64(v) + uint64(v)/4 + 1
}

// fnv1aString is the 64-bit FNV-1a hash of a string's bytes (offset basis
// 14695981039346656037, prime 1099511628211; G. Fowler, L. C. Noll, K.-P.
// Vo).
func fnv1aString(s string) uint64 {
	h := uint64(14695981039346656037)
	for i := 0; i < len(s); i++ {
		h ^= uint64(s[i])
		h *= 1099511628211
	}
	return h
}

// encodeWordHash returns the word hash section of a sorted vocabulary.
func encodeWordHash(vocab []string) []byte {
	p := wordHashSlots(len(vocab))
	out := make([]byte, wordHashHeader+4*p)
	le := binary.LittleEndian
	le.PutUint32(out, uint32(p))
	slots := out[wordHashHeader:]
	for i := uint64(0); i < p; i++ {
		le.PutUint32(slots[4*i:], emptySlot)
	}
	for id, w := range vocab {
		s := fnv1aString(w) % p
		for le.Uint32(slots[4*s:]) != emptySlot {
			if s++; s == p {
				s = 0
			}
		}
		le.PutUint32(slots[4*s:], uint32(id))
	}
	return out
}

// hashID looks word up in the word hash; it probes at most every slot once.
func (m *Model) hashID(word string) (uint32, bool) {
	h := m.wordHash
	p := h.p
	if p == 0 {
		return 0, false
	}
	s := fnv1aString(word) % p
	for range p {
		id := h.slot(s)
		if id == emptySlot {
			return 0, false
		}
		if string(m.wordBytes(id)) == word {
			return id, true
		}
		if s++; s == p {
			s = 0
		}
	}
	return 0, false
}

// checkWordHash checks that the table holds every word exactly once, where
// a lookup finds it, and nothing else.
func (m *Model) checkWordHash() error {
	h := m.wordHash
	used := 0
	for i := uint64(0); i < h.p; i++ {
		id := h.slot(i)
		if id == emptySlot {
			continue
		}
		used++
		if uint64(id) >= uint64(m.vocabSize) {
			width := uint64(32)
			if h.bits != 0 {
				width = uint64(h.bits)
			}
			name, at := m.sectionOffset(KindWordHash, 0, wordHashHeader+int(i*width/8))
			return formatErr(name, at, "slot %d holds word id %d, outside the vocabulary of %d words", i, id, m.vocabSize)
		}
	}
	if used != m.vocabSize {
		name, at := m.sectionOffset(KindWordHash, 0, 0)
		return formatErr(name, at, "table holds %d words, the vocabulary %d", used, m.vocabSize)
	}
	for id := 0; id < m.vocabSize; id++ {
		if got, ok := m.hashID(m.Word(uint32(id))); !ok || got != uint32(id) {
			name, at := m.sectionOffset(KindWordHash, 0, 0)
			return formatErr(name, at, "looking up word id %d (%q) does not find it", id, m.Word(uint32(id)))
		}
	}
	return nil
}
