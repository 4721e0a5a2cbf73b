package format

import (
	"encoding/binary"
)

// The word hash (version 3, spec/FORMAT.md §4.8.4) maps a word to its id in
// a few memory reads, where a binary search over the word list costs about
// 2 log2 V string comparisons: a table of P = V + V/4 + 1 slots, each
// holding a word id or the empty marker. A word is looked up at slot
// FNV-1a(word) mod P and the slots after it, wrapping around, until its id
// or an empty slot. At most four slots in five are used, so a lookup
// probes about three slots, usually in one cache line. The writer stores
// beside each id a fingerprint of its word, the top bits of its hash, in
// the way of the fingerprints of cuckoo filters (B. Fan, D. G. Andersen,
// M. Kaminsky, M. D. Mitzenmacher, "Cuckoo Filter: Practically Better Than
// Bloom", CoNEXT 2014): a probe reads a word's Elias-Fano start and its
// text only when the fingerprints agree. The table lives in the file, so
// opening a model still reads nothing proportional to its size.

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
// With fingerprints (TaggedIDs) a slot whose fingerprint differs from the
// word's is passed over without reading its word's start and text: the
// word starts are Elias-Fano coded, so reading one costs a sample and a
// scan, which made each wrong probe cost more than the hash itself.
func (m *Model) hashID(word string) (uint32, bool) {
	id, ok, _ := m.hashLookup(word)
	return id, ok
}

// hashLookup is hashID that also counts the slots whose word it read.
func (m *Model) hashLookup(word string) (id uint32, ok bool, reads int) {
	h := m.wordHash
	p := h.p
	if p == 0 {
		return 0, false, 0
	}
	hash := fnv1aString(word)
	s := hash % p
	if h.tag > 0 {
		want := wordTag(hash, h.tag)
		width, mask := h.bits+h.tag, uint64(1)<<h.bits-1
		for range p {
			v := packedAt(h.slots, s, width)
			id := v & mask
			if id == mask {
				return 0, false, reads
			}
			if v>>h.bits == want {
				reads++
				if string(m.wordBytes(uint32(id))) == word {
					return uint32(id), true, reads
				}
			}
			if s++; s == p {
				s = 0
			}
		}
		return 0, false, reads
	}
	for range p {
		id := h.slot(s)
		if id == emptySlot {
			return 0, false, reads
		}
		reads++
		if string(m.wordBytes(id)) == word {
			return id, true, reads
		}
		if s++; s == p {
			s = 0
		}
	}
	return 0, false, reads
}

// checkWordHash checks that the table holds every word exactly once, where
// a lookup finds it, and nothing else; with fingerprints, that each used
// slot's fingerprint is its word's, each empty slot all ones, and the bits
// after the last slot 0.
func (m *Model) checkWordHash() error {
	h := m.wordHash
	enc := PackedIDs
	if h.tag > 0 {
		enc = TaggedIDs
	}
	head := wordHashHeaderLen(enc)
	slotAt := func(i uint64) (string, int64) {
		width := uint64(32)
		if h.bits != 0 {
			width = uint64(h.bits + h.tag)
		}
		return m.sectionOffset(KindWordHash, 0, head+int(i*width/8))
	}
	used := 0
	for i := uint64(0); i < h.p; i++ {
		id, tag := h.entry(i)
		if id == emptySlot {
			if h.tag > 0 && tag != 1<<h.tag-1 {
				name, at := slotAt(i)
				return formatErr(name, at, "slot %d is empty but its fingerprint bits are %#x, not all ones", i, tag)
			}
			continue
		}
		used++
		if uint64(id) >= uint64(m.vocabSize) {
			name, at := slotAt(i)
			return formatErr(name, at, "slot %d holds word id %d, outside the vocabulary of %d words", i, id, m.vocabSize)
		}
		if h.tag > 0 {
			if want := wordTag(fnv1aString(m.Word(id)), h.tag); tag != want {
				name, at := slotAt(i)
				return formatErr(name, at, "slot %d holds word id %d (%q) with fingerprint %#x; the word's is %#x", i, id, m.Word(id), tag, want)
			}
		}
	}
	if used != m.vocabSize {
		name, at := m.sectionOffset(KindWordHash, 0, 0)
		return formatErr(name, at, "table holds %d words, the vocabulary %d", used, m.vocabSize)
	}
	if h.bits != 0 {
		if end := h.p * uint64(h.bits+h.tag); end%8 != 0 && len(h.slots) > 0 {
			if last := h.slots[len(h.slots)-1]; last>>(end%8) != 0 {
				name, at := m.sectionOffset(KindWordHash, 0, head+len(h.slots)-1)
				return formatErr(name, at, "unused bits after the last slot are %#x, not 0", last>>(end%8))
			}
		}
	}
	for id := 0; id < m.vocabSize; id++ {
		if got, ok := m.hashID(m.Word(uint32(id))); !ok || got != uint32(id) {
			name, at := m.sectionOffset(KindWordHash, 0, 0)
			return formatErr(name, at, "looking up word id %d (%q) does not find it", id, m.Word(uint32(id)))
		}
	}
	return nil
}
