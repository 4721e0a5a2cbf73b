package format

import (
	"fmt"
	"math/bits"
)

// Coded key lists (encodings CodedListIDs and CodedListRanks,
// spec/FORMAT.md §4.8.8) are key lists (§4.8.7: the same list starts, one
// per context of the order below, and the same bit stream) whose lists of
// two keys or more each say how they are coded, in a 2-bit kind at their
// start:
//
//   - listFixed: every key at one width, the list's remaining bits over its
//     keys (the width of its largest key, as in key lists);
//   - listEF: an Elias-Fano list (Elias 1974; Fano 1971): a 5-bit low-bit
//     width L, the keys' L low bits, then their high parts in unary, each
//     key i setting bit (key >> L) + i, the list ending at its last set bit;
//   - listRun: the keys 0, 1, ..., d-1, which take no bits.
//
// A list of one key is its key at the width of its bits, as in key lists.
// A long list of sparse word ids (order 2) codes in Elias-Fano at about
// 2 + log2(range/d) bits a key where key lists pay the width of its largest
// key; at the higher orders a list of ranks 0 .. d-1, every successor of the
// parent's suffix, costs two bits.

// The kinds of a coded list of two keys or more.
const (
	listFixed = 0
	listEF    = 1
	listRun   = 2

	listKindBits = 2 // the kind field
	listLowBits  = 5 // an Elias-Fano list's L field

	// An Elias-Fano list of d keys samples the high-bit position of key
	// listSample·j, j = 1 .. (d-1)/listSample, in listSampleBits bits each,
	// so that a search of a long list (the word ids of order 2 under a
	// frequent word: thousands) skips to the key's neighbourhood instead of
	// scanning the high bits from the list's start.
	listSample     = 128
	listSampleBits = 32
)

// listSamples is the number of samples of an Elias-Fano list of d keys.
func listSamples(d uint64) uint64 { return (d - 1) / listSample }

// codedList returns how the writer codes a list of d >= 2 ascending keys
// whose largest is last: its kind, its width (listFixed) or low-bit width
// L (listEF), and its length in bits. Elias-Fano is chosen only when
// shorter than fixed width.
func codedList(d, last uint64) (kind int, w uint, size uint64) {
	if last == d-1 {
		return listRun, 0, listKindBits
	}
	fixed := listKindBits + d*uint64(keyWidth(last))
	l := efLowBits(d, last)
	ef := listKindBits + listLowBits + listSampleBits*listSamples(d) + d*uint64(l) + last>>l + d
	if ef < fixed {
		return listEF, l, ef
	}
	return listFixed, keyWidth(last), fixed
}

// codedListBits is the length in bits of the list of keys (ascending) as
// the writer codes it.
func codedListBits[K key](keys []K) uint64 {
	d := uint64(len(keys))
	switch d {
	case 0:
		return 0
	case 1:
		return uint64(keyWidth(uint64(keys[0])))
	}
	_, _, size := codedList(d, uint64(keys[d-1]))
	return size
}

// putCodedList writes the list of keys (ascending), coded as codedList
// says, through put, which appends the w low bits of v to a bit stream.
func putCodedList[K key](keys []K, put func(v uint64, w uint) error) error {
	d := uint64(len(keys))
	switch d {
	case 0:
		return nil
	case 1:
		return put(uint64(keys[0]), keyWidth(uint64(keys[0])))
	}
	kind, w, _ := codedList(d, uint64(keys[d-1]))
	if err := put(uint64(kind), listKindBits); err != nil {
		return err
	}
	switch kind {
	case listFixed:
		for _, k := range keys {
			if err := put(uint64(k), w); err != nil {
				return err
			}
		}
	case listEF:
		if err := put(uint64(w), listLowBits); err != nil {
			return err
		}
		for j := uint64(1); j <= listSamples(d); j++ {
			i := j * listSample // its one is at (key >> L) + i
			if err := put(uint64(keys[i])>>w+i, listSampleBits); err != nil {
				return err
			}
		}
		for _, k := range keys {
			if err := put(uint64(k)&(1<<w-1), w); err != nil {
				return err
			}
		}
		// High parts in unary: before key i's one, (key_i >> L) - (key_{i-1}
		// >> L) zeros.
		var prev uint64
		for _, key := range keys {
			k := uint64(key)
			for z := k>>w - prev; z > 0; {
				step := min(z, 32)
				if err := put(0, uint(step)); err != nil {
					return err
				}
				z -= step
			}
			if err := put(1, 1); err != nil {
				return err
			}
			prev = k >> w
		}
	}
	return nil
}

// codedListsBits returns the bit start of each context's coded list (m+1
// values), as keyListsBits does for key lists.
func codedListsBits[K key](keys []K, starts []uint32, isContext func(int) bool) []uint64 {
	return listStarts(keys, starts, isContext, true)
}

// encodeCodedLists returns the section bytes of an order's keys as coded
// lists; keys, starts and isContext are those of encodeKeyLists.
func encodeCodedLists[K key](keys []K, starts []uint32, isContext func(int) bool) []byte {
	m, _, coded := listTotals(keys, starts, isContext)
	return listsSection(keys, starts, isContext, true, m, coded)
}

// codedFind returns the position of key in the coded list of cnt keys in
// bits [s, t) of the stream, or false: not there, or the list is damaged.
func (kl *keyLists) codedFind(s, t, cnt, key uint64) (uint64, bool) {
	if cnt == 0 || t < s || t-s > 1<<40 {
		return 0, false
	}
	size := t - s
	if cnt == 1 {
		if size > keyListsMaxWidth {
			return 0, false
		}
		return 0, kl.keyAt(s, uint(size)) == key
	}
	if size < listKindBits {
		return 0, false
	}
	body := size - listKindBits
	switch kl.keyAt(s, listKindBits) {
	case listRun:
		return key, body == 0 && key < cnt
	case listFixed:
		w := body / cnt
		if w*cnt != body || w > keyListsMaxWidth {
			return 0, false
		}
		return kl.find(s+listKindBits, uint(w), cnt, key)
	case listEF:
		if body < listLowBits {
			return 0, false
		}
		l := uint(kl.keyAt(s+listKindBits, listLowBits))
		smp := s + listKindBits + listLowBits
		low := smp + listSampleBits*listSamples(cnt)
		if l > keyListsMaxWidth || low > t || (t-low)/cnt < uint64(l)+1 {
			return 0, false
		}
		high := low + cnt*uint64(l)
		return kl.efFind(smp, low, high, t, l, cnt, key)
	}
	return 0, false
}

// efFind searches key in the Elias-Fano list of cnt keys whose low bits
// start at low and whose high bits are [high, end) of the stream: it skips
// key >> l zeros of the high bits, 56 bits at a time, then compares the
// low bits of the keys sharing key's high part.
func (kl *keyLists) efFind(smp, low, high, end uint64, l uint, cnt, key uint64) (uint64, bool) {
	const chunk = 56
	hx := key >> l
	need := hx // zeros to pass
	pos := high
	// The last sampled key whose high part is below key's: start after its
	// one, its zeros passed. A sample out of order is never followed.
	lo, hi := uint64(1), listSamples(cnt)+1
	for lo < hi {
		mid := lo + (hi-lo)/2
		p := kl.keyAt(smp+(mid-1)*listSampleBits, listSampleBits)
		if p >= mid*listSample && p-mid*listSample < hx {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	if j := lo - 1; j > 0 {
		p := kl.keyAt(smp+(j-1)*listSampleBits, listSampleBits)
		if h := p - j*listSample; p >= j*listSample && h < hx && high+p < end {
			pos, need = high+p+1, hx-h
		}
	}
	for need > 0 {
		if pos >= end {
			return 0, false
		}
		n := min(chunk, end-pos)
		word := kl.keyAt(pos, uint(n))
		zeros := n - uint64(bits.OnesCount64(word))
		if zeros < need {
			need -= zeros
			pos += n
			continue
		}
		// The need-th zero of this chunk.
		pos += uint64(selectInWord(^word&(1<<n-1), uint(need-1))) + 1
		need = 0
	}
	// Ones before pos: pos - high - (key >> l) zeros passed.
	i := pos - high - key>>l
	mask := uint64(1)<<l - 1
	for ; i < cnt && pos < end; i, pos = i+1, pos+1 {
		if kl.keyAt(pos, 1) == 0 {
			return 0, false // the run of key's high part ended
		}
		lowBits := kl.keyAt(low+i*uint64(l), l)
		if lowBits == key&mask {
			return i, true
		}
		if lowBits > key&mask {
			return 0, false
		}
	}
	return 0, false
}

// decodeCoded decodes the coded list of cnt keys in bits [s, t) into keys
// and checks that it is coded as the writer codes it.
func (kl *keyLists) decodeCoded(s, t uint64, keys []uint64) error {
	cnt := uint64(len(keys))
	size := t - s
	switch {
	case cnt == 0:
		if size != 0 {
			return fmt.Errorf("has no keys but %d bits", size)
		}
		return nil
	case cnt == 1:
		if size > keyListsMaxWidth {
			return fmt.Errorf("of one key takes %d bits, more than %d", size, keyListsMaxWidth)
		}
		keys[0] = kl.keyAt(s, uint(size))
		if keyWidth(keys[0]) != uint(size) {
			return fmt.Errorf("is %d bits wide; its key %d needs %d", size, keys[0], keyWidth(keys[0]))
		}
		return nil
	}
	if size < listKindBits {
		return fmt.Errorf("of %d keys takes %d bits, fewer than its kind", cnt, size)
	}
	kind := kl.keyAt(s, listKindBits)
	body := size - listKindBits
	switch kind {
	case listRun:
		for i := range keys {
			keys[i] = uint64(i)
		}
	case listFixed:
		w := body / cnt
		if w*cnt != body || w > keyListsMaxWidth {
			return fmt.Errorf("of %d keys takes %d bits, not a whole width of at most %d per key", cnt, body, keyListsMaxWidth)
		}
		for i := range keys {
			keys[i] = kl.keyAt(s+listKindBits+uint64(i)*w, uint(w))
		}
	case listEF:
		if body < listLowBits {
			return fmt.Errorf("is too short for its low-bit width")
		}
		l := uint(kl.keyAt(s+listKindBits, listLowBits))
		smp := s + listKindBits + listLowBits
		low := smp + listSampleBits*listSamples(cnt)
		if l > keyListsMaxWidth || low > t || (t-low)/cnt < uint64(l)+1 {
			return fmt.Errorf("of %d keys in %d bits cannot have %d low bits", cnt, t-s, l)
		}
		pos, i := low+cnt*uint64(l), uint64(0)
		var zeros uint64
		for ; pos < t; pos++ {
			if kl.keyAt(pos, 1) == 0 {
				zeros++
				continue
			}
			if i == cnt {
				return fmt.Errorf("holds more than its %d keys", cnt)
			}
			if i > 0 && i%listSample == 0 {
				if p := kl.keyAt(smp+(i/listSample-1)*listSampleBits, listSampleBits); p != pos-(low+cnt*uint64(l)) {
					return fmt.Errorf("samples key %d's high bit at %d; it is at %d", i, p, pos-(low+cnt*uint64(l)))
				}
			}
			keys[i] = zeros<<l | kl.keyAt(low+i*uint64(l), l)
			i++
		}
		if i != cnt || kl.keyAt(t-1, 1) != 1 {
			return fmt.Errorf("holds %d keys, not %d ending at its last bit", i, cnt)
		}
	default:
		return fmt.Errorf("is of kind %d, not a kind the format defines", kind)
	}
	for i := 1; i < len(keys); i++ {
		if keys[i] <= keys[i-1] {
			return fmt.Errorf("repeats or lowers key %d (%d after %d)", i, keys[i], keys[i-1])
		}
	}
	if wk, ww, wsize := codedList(cnt, keys[cnt-1]); uint64(wk) != kind || wsize != size || (kind != listRun && kl.keyAtWidth(s, kind, body, cnt) != ww) {
		return fmt.Errorf("is coded as kind %d in %d bits; the writer codes its keys as kind %d in %d bits", kind, size, wk, wsize)
	}
	return nil
}

// keyAtWidth returns the width a fixed list stores its keys at, or the low
// bits of an Elias-Fano list.
func (kl *keyLists) keyAtWidth(s, kind, body, cnt uint64) uint {
	if kind == listEF {
		return uint(kl.keyAt(s+listKindBits, listLowBits))
	}
	return uint(body / cnt)
}

// decodeCodedLists is decodeLists for coded lists.
func (kl *keyLists) decodeCodedLists(keys []uint64, lists func(r uint64) (a, b uint64)) error {
	return kl.decodeEach(lists, func(r, s, t, a, b uint64) error {
		if err := kl.decodeCoded(s, t, keys[a:b]); err != nil {
			return fmt.Errorf("list %d %v", r, err)
		}
		return nil
	})
}

// checkTail checks that the stream is as long as its total bits need and
// that its unused bits are zero.
func (kl *keyLists) checkTail(total uint64) error {
	if uint64(len(kl.stream)) != 8*((total+63)/64) {
		return fmt.Errorf("key stream is %d bytes for %d bits", len(kl.stream), total)
	}
	for bit := total; bit < 8*uint64(len(kl.stream)); bit++ {
		if kl.stream[bit>>3]>>(bit&7)&1 != 0 {
			return fmt.Errorf("unused key bits are not zero")
		}
	}
	return nil
}
