package format

import (
	"encoding/binary"
	"fmt"
	"math/bits"
)

// Key lists (encodings ListIDs and ListRanks, spec/FORMAT.md §4.8.7) store
// the last-word keys of an order one sibling list at a time: the keys under
// one parent, ascending, each at the width of the list's largest key, the
// lists one after another in a bit stream. Where the list of the parent of
// context rank r starts is value r of an Elias-Fano sequence of m+1 bit
// starts (m contexts at the order below), read with the same rank as the
// parent's child start; a list's width is its length in bits over its
// number of keys. A search reads the list in place, one or two cache lines
// for the short lists of the higher orders, instead of selecting the key
// before the list in a sequence of the whole order; and a list costs only
// the bits of its own largest key (Pibiri and Venturini, SIGIR 2017, code
// the keys per sibling list for the same reason).

// keyListsMaxWidth is the widest key a file may store: keys are word ids or
// ranks, below 2^32.
const keyListsMaxWidth = 32

// keyWidth is the width of a list whose largest key is last.
func keyWidth(last uint64) uint { return uint(bits.Len64(last)) }

// key is the type of an order's keys: the writer's own are 32-bit (word
// ids and ranks), a stream's 64-bit.
type key interface{ ~uint32 | ~uint64 }

// keyListsBits returns the bit start of each context's list (m+1 values,
// the last one the stream's length) for the keys of one order: starts are
// the child starts of the order below, one per entry plus one, and
// isContext marks its contexts (every entry with children is one).
func keyListsBits[K key](keys []K, starts []uint32, isContext func(int) bool) []uint64 {
	return listStarts(keys, starts, isContext, false)
}

// listBits is the length in bits of a list of keys (ascending) in coded
// key lists (coded) or in key lists (the width of its largest key per
// key).
func listBits[K key](list []K, coded bool) uint64 {
	if coded {
		return codedListBits(list)
	}
	if len(list) == 0 {
		return 0
	}
	return uint64(len(list)) * uint64(keyWidth(uint64(list[len(list)-1])))
}

// listTotals returns, for the keys of one order, the number m of contexts
// below and the length in bits of all their lists in key lists (lists) and
// in coded key lists (coded), in one pass and without holding a list
// start; keys, starts and isContext are those of keyListsBits.
func listTotals[K key](keys []K, starts []uint32, isContext func(int) bool) (m, lists, coded uint64) {
	for p := 0; p+1 < len(starts); p++ {
		if isContext(p) {
			list := keys[starts[p]:starts[p+1]]
			m, lists, coded = m+1, lists+listBits(list, false), coded+listBits(list, true)
		}
	}
	return m, lists, coded
}

// listStarts returns the bit start of each context's list (m+1 values, the
// last one the stream's length) in coded key lists (coded) or key lists;
// keys, starts and isContext are those of keyListsBits.
func listStarts[K key](keys []K, starts []uint32, isContext func(int) bool, coded bool) []uint64 {
	out := make([]uint64, 0, len(starts))
	var bit uint64
	for p := 0; p+1 < len(starts); p++ {
		if isContext(p) {
			out = append(out, bit)
			bit += listBits(keys[starts[p]:starts[p+1]], coded)
		}
	}
	return append(out, bit)
}

// listsSection returns the section bytes of an order's keys stored list
// by list, in coded key lists (coded) or key lists: the Elias-Fano
// sequence of the m+1 lists' bit starts (one per context, then the
// stream's length, total bits: listTotals), then the stream of lists.
// keys, starts and isContext are those of keyListsBits.
func listsSection[K key](keys []K, starts []uint32, isContext func(int) bool, coded bool, m, total uint64) []byte {
	efLen := efLength(m+1, total)
	out := make([]byte, efLen+8*int64((total+63)/64))
	ef := newEFWriter(out[:efLen], m+1, total)
	stream := out[efLen:]
	var bit uint64
	put := func(v uint64, w uint) error {
		putBits(stream, bit, v, w)
		bit += uint64(w)
		return nil
	}
	for p := 0; p+1 < len(starts); p++ {
		if isContext(p) {
			ef.add(bit)
		}
		list := keys[starts[p]:starts[p+1]] // empty under an entry that is no context
		switch {
		case coded:
			putCodedList(list, put)
		case len(list) > 0:
			w := keyWidth(uint64(list[len(list)-1]))
			for _, k := range list {
				putBits(stream, bit, uint64(k), w)
				bit += uint64(w)
			}
		}
	}
	ef.add(bit)
	return out
}

// encodeKeyLists returns the section bytes of an order's keys (keys[e]
// under the parent of entry e) as sibling lists; starts and isContext are
// those of keyListsBits.
func encodeKeyLists[K key](keys []K, starts []uint32, isContext func(int) bool) []byte {
	m, lists, _ := listTotals(keys, starts, isContext)
	return listsSection(keys, starts, isContext, false, m, lists)
}

// putBits ORs the w low bits of v into the bit stream b at bit: with one
// 64-bit load and store where the eight bytes at bit's byte lie in b and
// hold the w bits, byte by byte otherwise.
func putBits(b []byte, bit, v uint64, w uint) {
	if at := bit >> 3; w <= 56 && at+8 <= uint64(len(b)) {
		x := binary.LittleEndian.Uint64(b[at:])
		binary.LittleEndian.PutUint64(b[at:], x|(v&(1<<w-1))<<(bit&7))
		return
	}
	for w > 0 {
		at, off := bit>>3, uint(bit&7)
		take := min(8-off, w)
		b[at] |= byte((v & (1<<take - 1)) << off)
		v >>= take
		bit += uint64(take)
		w -= take
	}
}

// keyListsLength is the length of a key-lists section of m contexts' lists
// holding total bits of keys.
func keyListsLength(m, total uint64) int64 {
	return efLength(m+1, total) + 8*int64((total+63)/64)
}

// keyLists reads a key-lists section in place. Its methods bounds-check
// every stored value: a damaged section gives wrong keys, never a panic.
type keyLists struct {
	starts eliasFano // m+1 bit starts
	stream []byte    // the keys' bit stream
}

// parseKeyLists checks a key-lists section's sizes against the m contexts
// of the order below and returns a reader. It reads nothing proportional
// to the number of keys.
func parseKeyLists(b []byte, m uint64) (keyLists, error) {
	if len(b) < efHeader {
		return keyLists{}, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), efHeader)
	}
	le := binary.LittleEndian
	n, last := le.Uint64(b), le.Uint64(b[8:])
	if n != m+1 {
		return keyLists{}, fmt.Errorf("holds %d list starts, expected %d for the %d contexts of the order below", n, m+1, m)
	}
	if last/n >= 1<<efMaxLow || last > 1<<58 {
		return keyLists{}, fmt.Errorf("key bits %d are too many for %d lists", last, m)
	}
	efLen := efLength(n, last)
	if size := efLen + 8*int64((last+63)/64); int64(len(b)) != size {
		return keyLists{}, fmt.Errorf("section is %d bytes, expected %d for %d lists of %d key bits", len(b), size, m, last)
	}
	e, err := parseEliasFano(b[:efLen], n)
	if err != nil {
		return keyLists{}, err
	}
	if first, ok := e.get(0); !ok || first != 0 {
		return keyLists{}, fmt.Errorf("first list starts at bit %d, expected 0", first)
	}
	return keyLists{starts: e, stream: b[efLen:]}, nil
}

// list returns where the list of the context of rank r, holding cnt keys,
// starts in the stream and its keys' width; ok is false for an empty list
// or damaged starts.
func (kl *keyLists) list(r, cnt uint64) (start uint64, width uint, ok bool) {
	a, b, ok := kl.starts.pair(r)
	if !ok || b < a || cnt == 0 {
		return 0, 0, false
	}
	w := (b - a) / cnt
	if w*cnt != b-a || w > keyListsMaxWidth {
		return 0, 0, false
	}
	return a, uint(w), true
}

// keyAt returns the width-bit key at bit of the stream (0 past its end).
func (kl *keyLists) keyAt(bit uint64, width uint) uint64 {
	if width == 0 {
		return 0
	}
	return bitsAt(kl.stream, bit, width)
}

// bitsAt returns the width (at most 57) bits of the stream b at bit; bits
// past the end read as 0.
func bitsAt(b []byte, bit uint64, width uint) uint64 {
	at := bit >> 3
	noteRead(b, at)
	var word uint64
	if at+8 <= uint64(len(b)) {
		word = binary.LittleEndian.Uint64(b[at:])
	} else {
		for j := uint64(0); at+j < uint64(len(b)) && j < 8; j++ {
			word |= uint64(b[at+j]) << (8 * j)
		}
	}
	return (word >> (bit & 7)) & (1<<width - 1)
}

// find returns the position in its list of key in the list of cnt keys
// at start of the given width, or false. A long list is entered where
// the key would sit if the keys spread evenly below 2^width, then searched
// outwards in doubling steps and by bisection, so that a search reads the
// lines near that point rather than those of a bisection of the whole
// list.
func (kl *keyLists) find(start uint64, width uint, cnt, key uint64) (uint64, bool) {
	if width < keyWidth(key) || cnt == 0 {
		return 0, false // the list's keys are all smaller
	}
	at := func(i uint64) uint64 { return kl.keyAt(start+i*uint64(width), width) }
	// The first position whose key is at least key lies in [lo, hi]
	// (hi = cnt: none).
	lo, hi := uint64(0), cnt
	if cnt > 16 {
		g := min(key*cnt>>width, cnt-1) // key < 2^width, so no overflow for cnt < 2^32
		if at(g) >= key {
			hi = g
			for step := uint64(1); ; step *= 2 {
				if step > hi-lo {
					break
				}
				if at(hi-step) < key {
					lo = hi - step + 1
					break
				}
				hi -= step
			}
		} else {
			lo = g + 1
			for step := uint64(1); ; step *= 2 {
				if lo+step-1 >= hi {
					break
				}
				if at(lo+step-1) >= key {
					hi = lo + step - 1
					break
				}
				lo += step
			}
		}
	}
	for hi-lo > 8 {
		mid := lo + (hi-lo)/2
		if at(mid) < key {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	for i := lo; i < hi; i++ {
		if v := at(i); v >= key {
			return i, v == key
		}
	}
	if hi < cnt && at(hi) == key {
		return hi, true
	}
	return 0, false
}

// touch reads, without using them, the words that list(r) reads first.
func (kl *keyLists) touch(r uint64) uint64 { return kl.starts.touch(r) }

// touchAt reads, without using it, the stream's byte at bit.
func (kl *keyLists) touchAt(bit uint64) uint64 {
	if at := bit >> 3; at < uint64(len(kl.stream)) {
		return uint64(kl.stream[at])
	}
	return 0
}

// decodeLists decodes every key into keys (n values) and checks the
// section's structure: the starts well formed, every list's length a
// multiple of its number of keys at the width of its largest key, keys
// ascending strictly within a list, unused bits zero. lists gives, for each
// context rank r of the order below, the entries [a, b) of its children.
// It returns a description of the first defect.
func (kl *keyLists) decodeLists(keys []uint64, lists func(r uint64) (a, b uint64)) error {
	return kl.decodeEach(lists, func(r, s, t, a, b uint64) error {
		cnt := b - a
		if cnt == 0 {
			if t != s {
				return fmt.Errorf("list %d has no keys but %d bits", r, t-s)
			}
			return nil
		}
		w := (t - s) / cnt
		if w*cnt != t-s || w > keyListsMaxWidth {
			return fmt.Errorf("list %d of %d keys takes %d bits, not a whole width of at most %d per key", r, cnt, t-s, keyListsMaxWidth)
		}
		for i := uint64(0); i < cnt; i++ {
			keys[a+i] = kl.keyAt(s+i*w, uint(w))
			if i > 0 && keys[a+i] <= keys[a+i-1] {
				return fmt.Errorf("entry %d repeats or precedes the key of its sibling", a+i)
			}
		}
		if keyWidth(keys[b-1]) != uint(w) {
			return fmt.Errorf("list %d is %d bits wide; its largest key %d needs %d", r, w, keys[b-1], keyWidth(keys[b-1]))
		}
		return nil
	})
}

// decodeEach decodes the list starts, calls decode for each context rank
// r of the order below with its list's bits [s, t) and its children's
// entries [a, b) (from lists), and ends with the stream's tail check. The
// one walk of both list forms' checks (decodeLists, decodeCodedLists).
func (kl *keyLists) decodeEach(lists func(r uint64) (a, b uint64), decode func(r, s, t, a, b uint64) error) error {
	starts := make([]uint64, kl.starts.n)
	if err := kl.starts.decodeAll(starts); err != nil {
		return fmt.Errorf("list starts: %v", err)
	}
	for r := uint64(0); r+1 < uint64(len(starts)); r++ {
		a, b := lists(r)
		if err := decode(r, starts[r], starts[r+1], a, b); err != nil {
			return err
		}
	}
	return kl.checkTail(starts[len(starts)-1])
}
