package format

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"strings"
	"testing"

	"ingot/compile/fixture"
	"ingot/compile/tables"
)

// The FNV-1a test vectors of its authors' reference page (offset basis
// for the empty string; "a" and "foobar" recalled from memory, and equal
// to Go's hash/fnv New64a).
func TestFNV1aVectors(t *testing.T) {
	for _, c := range []struct {
		in   string
		want uint64
	}{{"", 0xcbf29ce484222325}, {"a", 0xaf63dc4c8601ec8c}, {"foobar", 0x85944171f73967e8}} {
		if got := fnv1aString(c.in); got != c.want {
			t.Errorf("FNV-1a(%q) = %#x, want %#x", c.in, got, c.want)
		}
	}
}

// The worked example of spec/FORMAT.md §4.8.4: V = 11 gives B = 4; with
// F = 4, the word "fog" (hash 0xdcb26d18fed9c7df) at id 3 is the slot
// value 0xd3.
func TestWordHashSpecExample(t *testing.T) {
	if h := fnv1aString("fog"); h != 0xdcb26d18fed9c7df {
		t.Fatalf("FNV-1a(fog) = %#x", h)
	}
	b := slotBits(11)
	if v := 3 | wordTag(fnv1aString("fog"), 4)<<b; b != 4 || v != 0xd3 {
		t.Fatalf("B = %d, slot value %#x, want 4 and 0xd3", b, v)
	}
}

// hashModels returns one model in every word-hash encoding a version-3
// file may hold, for tables t: 32-bit slots, packed ids, and packed ids
// with fingerprints of 1, 8 (what the writer writes) and 16 bits.
func hashModels(t *testing.T, tb *tables.Tables) map[string][]byte {
	t.Helper()
	out := map[string][]byte{}
	for _, c := range []struct {
		enc Encoding
		tag uint
	}{{Plain, 0}, {PackedIDs, 0}, {TaggedIDs, 1}, {TaggedIDs, 8}, {TaggedIDs, 16}} {
		data, err := MarshalWordHash(tb, c.enc, c.tag)
		if err != nil {
			t.Fatal(err)
		}
		out[fmt.Sprintf("%s/%d", c.enc, c.tag)] = data
	}
	return out
}

// Every word-hash encoding reads, verifies and finds every word (and no
// other) as the binary search of version 1 does; the writer writes 8-bit
// fingerprints.
func TestWordHashEncodingsAgree(t *testing.T) {
	tb := fixture.RandomTables(3, 300, []int{400, 300})
	v1 := mustOpen(t, func() []byte {
		d, err := MarshalVersion(tb, 1)
		if err != nil {
			t.Fatal(err)
		}
		return d
	}())
	written := mustMarshal(t, tb)
	models := hashModels(t, tb)
	if !bytes.Equal(written, models["packed word ids with fingerprints/8"]) {
		t.Fatal("the writer does not write 8-bit fingerprints")
	}
	probes := append([]string{"", "zz", "\xff"}, tb.Vocab...)
	for _, w := range tb.Vocab {
		probes = append(probes, w+"x", strings.ToUpper(w))
	}
	for name, data := range models {
		m := mustOpen(t, data)
		if err := m.Verify(); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		for _, w := range probes {
			id, ok := m.ID(w)
			id1, ok1 := v1.ID(w)
			if id != id1 || ok != ok1 {
				t.Fatalf("%s: ID(%q) = %d, %v; version 1 %d, %v", name, w, id, ok, id1, ok1)
			}
		}
	}
}

// Looking every word up, count the wrong slots probed and those whose word
// a lookup reads: all of them without fingerprints, about one in 2^F with
// F-bit fingerprints.
func TestFingerprintsSkipWrongSlots(t *testing.T) {
	tb := fixture.RandomTables(4, 3000, []int{100})
	for name, data := range hashModels(t, tb) {
		m := mustOpen(t, data)
		h := m.wordHash
		probes, reads := 0, 0
		for _, w := range tb.Vocab {
			hash := fnv1aString(w)
			for s := hash % h.p; ; s = (s + 1) % h.p {
				id, _ := h.entry(s)
				if id == emptySlot {
					t.Fatalf("%s: %q not found", name, w)
				}
				probes++
				if m.Word(id) == w {
					break
				}
			}
			id, ok, r := m.hashLookup(w)
			if !ok || m.Word(id) != w {
				t.Fatalf("%s: %q not found", name, w)
			}
			reads += r
		}
		wrong, wrongReads := probes-len(tb.Vocab), reads-len(tb.Vocab)
		t.Logf("%s: %d words, %d wrong probes, %d of them read", name, len(tb.Vocab), wrong, wrongReads)
		// At four slots in five used, linear probing with random hashes
		// makes about (1 + 1/(1-0.8))/2 - 1 = 2 wrong probes a word (D. E.
		// Knuth, The Art of Computer Programming, vol. 3, §6.4, algorithm
		// L; recalled from memory); these words give 1.3.
		if wrong < len(tb.Vocab) {
			t.Fatalf("%s: only %d wrong probes for %d words: the table is not loaded as specified", name, wrong, len(tb.Vocab))
		}
		if h.tag == 0 && wrongReads != wrong {
			t.Fatalf("%s: %d of %d wrong probes read the word, without fingerprints", name, wrongReads, wrong)
		}
		if h.tag >= 8 && wrongReads > wrong/64 {
			t.Fatalf("%s: %d of %d wrong probes read the word; fingerprints of %d bits should pass about 1 in %d", name, wrongReads, wrong, h.tag, 1<<h.tag)
		}
	}
}

// patchHash rewrites the word hash of a model file with edit (which gets
// the section's bytes) and repairs every checksum, as a careless writer
// would, so that only the structural check can notice.
func patchHash(t *testing.T, data []byte, edit func(b []byte)) []byte {
	t.Helper()
	b := bytes.Clone(data)
	e := entryAt(t, b, KindWordHash, 0)
	off, n := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
	edit(b[off : off+n])
	binary.LittleEndian.PutUint32(e[12:], checksum(b[off:off+n]))
	reseal(b)
	m, err := FromBytes(b)
	if err != nil {
		return b
	}
	d := contentDigest(m)
	copy(b[offDigest:], d[:])
	reseal(b)
	return b
}

// setBits writes v into width bits of a packed stream at bit position at.
func setBits(b []byte, at uint64, width uint, v uint64) {
	for x := uint(0); x < width; x++ {
		p := at + uint64(x)
		if v>>x&1 != 0 {
			b[p>>3] |= 1 << (p & 7)
		} else {
			b[p>>3] &^= 1 << (p & 7)
		}
	}
}

// The checks of spec/FORMAT.md §6.1 and §6.3 on a word hash with
// fingerprints, each on a file whose checksums were repaired.
func TestWordHashDamage(t *testing.T) {
	// A vocabulary whose last slot leaves bits of its last byte unused.
	var tb *tables.Tables
	for v := 12; ; v++ {
		tb = fixture.RandomTables(5, v, []int{20})
		if wordHashSlots(len(tb.Vocab))*uint64(slotBits(len(tb.Vocab))+tagBits)%8 != 0 {
			break
		}
	}
	good := mustMarshal(t, tb)
	m := mustOpen(t, good)
	h := m.wordHash
	width := h.bits + h.tag
	var used, empty uint64
	for i := uint64(0); i < h.p; i++ {
		if id, _ := h.entry(i); id == emptySlot {
			empty = i
		} else {
			used = i
		}
	}
	usedID, usedTag := h.entry(used)
	field := func(at int, v uint32) func([]byte) {
		return func(b []byte) { binary.LittleEndian.PutUint32(b[at:], v) }
	}
	for _, c := range []struct {
		name   string
		edit   func([]byte)
		atOpen bool
		want   string
	}{
		{"fingerprint of a used slot", func(b []byte) {
			setBits(b[taggedWordHashHeader:], used*uint64(width)+uint64(h.bits), h.tag, usedTag^1)
		}, false, "fingerprint"},
		{"fingerprint of an empty slot", func(b []byte) {
			setBits(b[taggedWordHashHeader:], empty*uint64(width)+uint64(h.bits), h.tag, 0)
		}, false, "not all ones"},
		{"bits after the last slot", func(b []byte) { b[len(b)-1] |= 0x80 }, false, "unused bits"},
		{"id of a used slot", func(b []byte) {
			setBits(b[taggedWordHashHeader:], used*uint64(width), h.bits, uint64(usedID+1)%uint64(len(tb.Vocab)))
		}, false, "word"},
		{"fingerprint width 0", field(8, 0), true, "fingerprints are 0 bits"},
		{"fingerprint width 17", field(8, 17), true, "fingerprints are 17 bits"},
		{"fingerprint width 7", field(8, 7), true, "expected"},
		{"reserved field", field(12, 1), true, "reserved field"},
		{"id width", field(4, uint32(h.bits+1)), true, "slot ids are"},
	} {
		t.Run(c.name, func(t *testing.T) {
			b := patchHash(t, good, c.edit)
			m, err := FromBytes(b)
			if c.atOpen {
				if err == nil || !strings.Contains(err.Error(), c.want) {
					t.Fatalf("open: %v, want a message with %q", err, c.want)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if err := m.Verify(); err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("Verify = %v, want a message with %q", err, c.want)
			}
			for _, w := range tb.Vocab {
				m.ID(w)
			}
		})
	}
}
