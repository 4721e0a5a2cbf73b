package format

import (
	"encoding/binary"
	"fmt"
	"math/bits"
	"unsafe"
)

// Elias-Fano coding of a non-decreasing sequence of n integers
// x_0 <= ... <= x_{n-1} (P. Elias, "Efficient storage and retrieval by
// content and address of static files", J. ACM 21(2), 1974; R. M. Fano,
// "On the number of bits required to implement an associative memory",
// MIT Project MAC memo 61, 1971). Each value is split into L low bits,
// stored verbatim, and a high part x_i >> L, stored in unary: bit
// (x_i >> L) + i of the high bit vector is set. The whole sequence takes
// about n (2 + log2(U/n)) bits for a largest value U, whatever the
// distribution. Every efSample-th set bit's position is sampled, so value i
// is found by one sample and a short scan (spec/FORMAT.md §4.9).

// efHeader is the size of an Elias-Fano section's fixed fields.
const efHeader = 24

// efSample is the distance, in values, between two samples of the high bit
// vector.
const efSample = 256

// efMaxLow is the largest low-bit width a file may use: values are below
// 2^64 and a writer's sequences keep U/n below 2^32.
const efMaxLow = 32

// efLowBits returns L for n values whose largest is last: the largest L
// with 2^L <= (last+1)/n, or 0 when that quotient is 0.
func efLowBits(n, last uint64) uint {
	if n == 0 {
		return 0
	}
	q := last/n + boolU64((last%n)+1 == n) // (last+1)/n without overflow
	if q == 0 {
		return 0
	}
	return uint(bits.Len64(q) - 1)
}

func boolU64(b bool) uint64 {
	if b {
		return 1
	}
	return 0
}

// efSizes returns the 64-bit word counts of the low bits, the high bits and
// the samples of an Elias-Fano section.
func efSizes(n, last uint64, l uint) (low, high, samples uint64) {
	low = (n*uint64(l) + 63) / 64
	high = ((last >> l) + n + 63) / 64
	samples = (n + efSample - 1) / efSample
	return
}

// encodeEliasFano returns the section bytes of the non-decreasing values.
func encodeEliasFano[V uint32 | uint64](x []V) []byte {
	n := uint64(len(x))
	var last uint64
	if n > 0 {
		last = uint64(x[n-1])
	}
	out := make([]byte, efLength(n, last))
	w := newEFWriter(out, n, last)
	for _, v := range x {
		w.add(uint64(v))
	}
	return out
}

// efWriter writes an Elias-Fano section of n non-decreasing values whose
// largest is last straight into its bytes, one value at a time, so that a
// writer need not hold the values first.
type efWriter struct {
	low, high, samples []byte
	l                  uint
	i                  uint64 // values added
}

// newEFWriter starts the section of n values whose largest is last in out,
// efLength(n, last) zeroed bytes. The n values must then be added.
func newEFWriter(out []byte, n, last uint64) *efWriter {
	l := efLowBits(n, last)
	lowW, highW, _ := efSizes(n, last, l)
	le := binary.LittleEndian
	le.PutUint64(out[0:], n)
	le.PutUint64(out[8:], last)
	le.PutUint32(out[16:], uint32(l))
	high := efHeader + 8*lowW
	samples := high + 8*highW
	return &efWriter{low: out[efHeader:high], high: out[high:samples], samples: out[samples:], l: l}
}

// add adds the next value, no smaller than the one before.
func (w *efWriter) add(v uint64) {
	if l := uint64(w.l); l > 0 {
		lo, bit := v&(1<<l-1), w.i*l
		orWord(w.low, bit/64, lo<<(bit%64))
		if bit%64+l > 64 {
			orWord(w.low, bit/64+1, lo>>(64-bit%64))
		}
	}
	p := v>>w.l + w.i
	orWord(w.high, p/64, 1<<(p%64))
	if w.i%efSample == 0 {
		binary.LittleEndian.PutUint64(w.samples[8*(w.i/efSample):], p)
	}
	w.i++
}

// orWord ORs x into little-endian 64-bit word i of b.
func orWord(b []byte, i, x uint64) {
	word := b[8*i : 8*i+8]
	binary.LittleEndian.PutUint64(word, binary.LittleEndian.Uint64(word)|x)
}

// eliasFano reads an Elias-Fano section in place. Its methods bounds-check
// every stored value: a damaged section gives wrong values, never a panic.
type eliasFano struct {
	n       uint64
	last    uint64
	l       uint
	low     []byte
	high    []byte
	samples []byte
	// lineWord is the place (0-7) of the first high word in its 64-byte
	// cache line: word w starts a line when (w+lineWord)%8 is 0.
	lineWord uint64
}

// parseEliasFano checks an Elias-Fano section's fixed fields and sizes
// against the value count the summary implies (want), and returns a reader.
// It reads nothing proportional to n.
func parseEliasFano(b []byte, want uint64) (eliasFano, error) {
	if len(b) < efHeader {
		return eliasFano{}, fmt.Errorf("section is %d bytes, shorter than its %d-byte header", len(b), efHeader)
	}
	le := binary.LittleEndian
	n, last, l := le.Uint64(b), le.Uint64(b[8:]), le.Uint32(b[16:])
	if n != want {
		return eliasFano{}, fmt.Errorf("holds %d values, expected %d for the counts in the summary", n, want)
	}
	if r := le.Uint32(b[20:]); r != 0 {
		return eliasFano{}, fmt.Errorf("reserved field is %08x, expected 0", r)
	}
	if n > 0 && last/n >= 1<<efMaxLow {
		return eliasFano{}, fmt.Errorf("largest value %d is too large for %d values", last, n)
	}
	if wantL := efLowBits(n, last); uint(l) != wantL {
		return eliasFano{}, fmt.Errorf("low bits are %d wide; %d values up to %d need %d", l, n, last, wantL)
	}
	lowW, highW, sampW := efSizes(n, last, uint(l))
	if size := efHeader + 8*(lowW+highW+sampW); uint64(len(b)) != size {
		return eliasFano{}, fmt.Errorf("section is %d bytes, expected %d for %d values up to %d", len(b), size, n, last)
	}
	at := uint64(efHeader)
	e := eliasFano{n: n, last: last, l: uint(l)}
	e.low = b[at : at+8*lowW]
	at += 8 * lowW
	e.high = b[at : at+8*highW]
	if highW > 0 {
		// Which word of its cache line the high bits start at (the file is
		// mapped at a page boundary; a copy in memory may sit anywhere).
		e.lineWord = uint64(uintptr(unsafe.Pointer(&e.high[0]))/8) % 8
	}
	at += 8 * highW
	e.samples = b[at : at+8*sampW]
	return e, nil
}

// highWord returns 64-bit word w of the high bit vector, 0 past its end.
func (e *eliasFano) highWord(w uint64) uint64 {
	if w >= uint64(len(e.high)/8) {
		return 0
	}
	noteRead(e.high, 8*w)
	return binary.LittleEndian.Uint64(e.high[8*w:])
}

// lowAt returns the low bits of value i.
func (e *eliasFano) lowAt(i uint64) uint64 {
	if e.l == 0 {
		return 0
	}
	return packedAt(e.low, i, e.l)
}

// efCursor walks an Elias-Fano sequence from one position onwards.
type efCursor struct {
	e    *eliasFano
	i    uint64 // index of the current value
	pos  uint64 // its set bit in the high vector
	word uint64 // the high word holding pos, bits up to pos cleared
	ok   bool
}

// seek returns a cursor on value i: the sampled set bit at or before it,
// then a scan. ok is false when i is out of range or the bits are damaged.
func (e *eliasFano) seek(i uint64) efCursor {
	c := efCursor{e: e}
	if i >= e.n {
		return c
	}
	w, word, ok := e.selectOne(i)
	if !ok {
		return c
	}
	c.i, c.pos, c.ok = i, 64*w+uint64(bits.TrailingZeros64(word)), true
	c.word = word & (word - 1)
	return c
}

// selectOne finds the set bit of value i (below n) from its sample: the
// high word w holding it and that word with the bits below it cleared (so
// its lowest set bit is value i's). ok is false when the bits are damaged.
func (e *eliasFano) selectOne(i uint64) (w, word uint64, ok bool) {
	s := i / efSample
	if 8*s+8 > uint64(len(e.samples)) {
		return 0, 0, false
	}
	noteRead(e.samples, 8*s)
	pos := binary.LittleEndian.Uint64(e.samples[8*s:])
	w, limit := pos/64, uint64(len(e.high)/8)
	if w >= limit {
		return 0, 0, false
	}
	word = e.highWord(w) &^ (1<<(pos%64) - 1) // set bits from pos on
	r := i % efSample                         // set bits to skip after the sampled one
	for {
		cnt := uint64(bits.OnesCount64(word))
		if r < cnt {
			break
		}
		r -= cnt
		if w++; (w+e.lineWord)%8 == 0 {
			w, r = e.skipOnes(w, r)
		}
		if w >= limit {
			return 0, 0, false
		}
		word = e.highWord(w)
	}
	return w, word &^ (1<<selectInWord(word, uint(r)) - 1), true
}

// nextOne returns the high word holding the first set bit after those of
// word (high word w, its bits up to the current one cleared) and that
// word; ok is false past the end.
func (e *eliasFano) nextOne(w, word uint64) (uint64, uint64, bool) {
	limit := uint64(len(e.high) / 8)
	for word == 0 {
		if w++; (w+e.lineWord)%8 == 0 {
			w = e.skipZeros(w)
		}
		if w >= limit {
			return 0, 0, false
		}
		word = e.highWord(w)
	}
	return w, word, true
}

// skipOnes passes, from high word w on, whole cache lines of high words
// holding at most r set bits, and returns the first word not passed and r
// less the set bits passed; w starts a line. A
// context with many children leaves a long run of zeros in the child
// starts' high bits (one per 2^L children), which a word-by-word scan
// crosses at one branch a word: this takes a line, eight words, a step.
func (e *eliasFano) skipOnes(w, r uint64) (uint64, uint64) {
	for 8*w+64 <= uint64(len(e.high)) {
		noteReadRange(e.high, 8*w, 8*w+64)
		b := e.high[8*w : 8*w+64]
		le := binary.LittleEndian
		cnt := uint64(bits.OnesCount64(le.Uint64(b)) + bits.OnesCount64(le.Uint64(b[8:])) +
			bits.OnesCount64(le.Uint64(b[16:])) + bits.OnesCount64(le.Uint64(b[24:])) +
			bits.OnesCount64(le.Uint64(b[32:])) + bits.OnesCount64(le.Uint64(b[40:])) +
			bits.OnesCount64(le.Uint64(b[48:])) + bits.OnesCount64(le.Uint64(b[56:])))
		if r < cnt {
			break
		}
		r -= cnt
		w += 8
	}
	return w, r
}

// skipZeros is skipOnes for the first set bit: it passes, from high word
// w on (which starts a line), whole cache lines without a set bit.
func (e *eliasFano) skipZeros(w uint64) uint64 {
	for 8*w+64 <= uint64(len(e.high)) {
		noteReadRange(e.high, 8*w, 8*w+64)
		b := e.high[8*w : 8*w+64]
		le := binary.LittleEndian
		if le.Uint64(b)|le.Uint64(b[8:])|le.Uint64(b[16:])|le.Uint64(b[24:])|
			le.Uint64(b[32:])|le.Uint64(b[40:])|le.Uint64(b[48:])|le.Uint64(b[56:]) != 0 {
			break
		}
		w += 8
	}
	return w
}

// value returns the cursor's current value.
func (c *efCursor) value() uint64 {
	return (c.pos-c.i)<<c.e.l | c.e.lowAt(c.i)
}

// next moves the cursor to the following value; false at the end.
func (c *efCursor) next() bool {
	if !c.ok || c.i+1 >= c.e.n {
		c.ok = false
		return false
	}
	w, word, ok := c.e.nextOne(c.pos/64, c.word)
	if !ok {
		c.ok = false
		return false
	}
	c.i++
	c.pos = 64*w + uint64(bits.TrailingZeros64(word))
	c.word = word & (word - 1)
	return true
}

// touch reads, without using them, the words that seek(i) and lowAt(i)
// will read first (the sample and the low bits), so that the memory reads
// of several sequences can be started together.
func (e *eliasFano) touch(i uint64) uint64 {
	var t uint64
	if s := 8 * (i / efSample); s < uint64(len(e.samples)) {
		t = uint64(e.samples[s])
	}
	if at := i * uint64(e.l) >> 3; at < uint64(len(e.low)) {
		t += uint64(e.low[at])
	}
	return t
}

// get returns value i, or false when it cannot be read.
func (e *eliasFano) get(i uint64) (uint64, bool) {
	c := e.seek(i)
	if !c.ok {
		return 0, false
	}
	return c.value(), true
}

// pair returns values i and i+1 (a child range, a list's bits), read in
// one scan of the high bits: the select of i from its sample, then the
// next set bit; their low bits, adjacent, in one read.
func (e *eliasFano) pair(i uint64) (a, b uint64, ok bool) {
	if i+1 >= e.n {
		return 0, 0, false
	}
	w, word, ok := e.selectOne(i)
	if !ok {
		return 0, 0, false
	}
	p := 64*w + uint64(bits.TrailingZeros64(word))
	w, rest, ok := e.nextOne(w, word&(word-1)) // the set bits after p
	if !ok {
		return 0, 0, false
	}
	q := 64*w + uint64(bits.TrailingZeros64(rest))
	var la, lb uint64
	if l := e.l; l > 0 && 2*l <= 56 {
		v := bitsAt(e.low, i*uint64(l), 2*l)
		la, lb = v&(1<<l-1), v>>l
	} else if l > 0 {
		la, lb = e.lowAt(i), e.lowAt(i+1)
	}
	return (p-i)<<e.l | la, (q-i-1)<<e.l | lb, true
}

// decodeAll decodes every value into out (len n) and checks the section's
// structure: exactly n set bits, every sample pointing at the right one, no
// bits past the last value, values not above the recorded largest. It
// returns a description of the first defect.
func (e *eliasFano) decodeAll(out []uint64) error {
	var i uint64
	words := uint64(len(e.high) / 8)
	for w := uint64(0); w < words; w++ {
		word := e.highWord(w)
		for word != 0 {
			pos := 64*w + uint64(bits.TrailingZeros64(word))
			word &= word - 1
			if i >= e.n {
				return fmt.Errorf("high bits hold more than the %d values recorded (extra bit %d)", e.n, pos)
			}
			if i%efSample == 0 {
				if s := binary.LittleEndian.Uint64(e.samples[8*(i/efSample):]); s != pos {
					return fmt.Errorf("sample %d records bit %d, but value %d is at bit %d", i/efSample, s, i, pos)
				}
			}
			if pos < i {
				return fmt.Errorf("value %d: high bit %d is impossible", i, pos)
			}
			out[i] = (pos-i)<<e.l | e.lowAt(i)
			if i > 0 && out[i] < out[i-1] {
				return fmt.Errorf("value %d (%d) is below value %d (%d)", i, out[i], i-1, out[i-1])
			}
			i++
		}
	}
	if i != e.n {
		return fmt.Errorf("high bits hold %d values, %d recorded", i, e.n)
	}
	if e.n > 0 && out[e.n-1] != e.last {
		return fmt.Errorf("last value is %d, %d recorded", out[e.n-1], e.last)
	}
	if e.l > 0 {
		if used := e.n * uint64(e.l); used%64 != 0 {
			if tail := binary.LittleEndian.Uint64(e.low[len(e.low)-8:]) >> (used % 64); tail != 0 {
				return fmt.Errorf("unused low bits are not zero")
			}
		}
	}
	return nil
}

// selectInByte[b*8+r] is the position of the r-th set bit (from 0) of the
// byte b.
var selectInByte = func() (t [256 * 8]uint8) {
	for b := 0; b < 256; b++ {
		r := 0
		for i := 0; i < 8; i++ {
			if b>>i&1 != 0 {
				t[b*8+r] = uint8(i)
				r++
			}
		}
	}
	return t
}()

// selectInWord returns the position of the r-th set bit (from 0) of word,
// which has more than r set bits, without a loop: the running counts of
// set bits per byte, made in one multiplication, are compared with r all
// at once, the bytes whose running count is at most r are counted, and the
// byte found is finished in selectInByte (S. Vigna, "Broadword
// implementation of rank/select queries", WEA 2008, selects the same way).
func selectInWord(word uint64, r uint) uint {
	const ones, highs = 0x0101010101010101, 0x8080808080808080
	c := word - word>>1&0x5555555555555555
	c = c&0x3333333333333333 + c>>2&0x3333333333333333
	c = (c + c>>4) & 0x0f0f0f0f0f0f0f0f
	c *= ones // byte i: the set bits of bytes 0..i, at most 64
	// Bit 7 of byte i of below is set when that count is at most r.
	below := ((uint64(r)*ones | highs) - c) & highs
	k := uint(bits.OnesCount64(below)) * 8 // the byte holding the bit
	before := uint((c << 8) >> k & 0xff)   // set bits of the bytes before it
	if k >= 64 || r < before {
		return 64
	}
	return k + uint(selectInByte[uint(word>>k&0xff)*8+(r-before)&7])
}

// nextAtLeast moves the cursor forward, at most to the value before index
// limit, to the first value >= want, and reports whether it found one
// below limit. Its cost does not grow with the number of values passed:
//
//   - when the range spans samples, a binary search of the samples (whose
//     high parts ascend) jumps to the last sampled value whose high part is
//     below want's, so that at most efSample values and their zeros are
//     skipped (the samples of a sequence take 1/32 bit per value and stay in
//     cache);
//   - the zeros up to want's high part are skipped 64 high bits at a time by
//     counting them;
//   - the values sharing want's high part are consecutive set bits whose low
//     bits ascend: a long run is binary-searched on the low bits.
//
// A long sibling list under a frequent context (order 2: thousands of word
// ids) is the case this is for: a linear scan took most of a word's
// scoring time there.
func (c *efCursor) nextAtLeast(want, limit uint64) bool {
	if !c.ok || c.i >= limit {
		return false
	}
	e := c.e
	hw := want >> e.l
	if limit-c.i > efSample {
		c.jump(hw, limit)
	}
	if high := c.pos - c.i; high < hw {
		// Pass need more zeros (each raises the high part by one); the
		// values after them have high parts of at least hw.
		need := hw - high
		w := c.pos / 64
		word := ^e.highWord(w) &^ (2<<(c.pos%64) - 1)
		limitW := uint64(len(e.high) / 8)
		for {
			z := uint64(bits.OnesCount64(word))
			if need <= z {
				break
			}
			need -= z
			w++
			if w >= limitW {
				c.ok = false
				return false
			}
			word = ^e.highWord(w)
		}
		zpos := 64*w + uint64(selectInWord(word, uint(need-1)))
		// The ones between the cursor and that zero are the values passed.
		i := c.i + (zpos - c.pos) - (hw - high) + 1
		if i >= limit || i >= e.n {
			c.ok = false
			return false
		}
		// The value i is the first set bit after zpos.
		word = e.highWord(zpos/64) &^ (2<<(zpos%64) - 1)
		w = zpos / 64
		for word == 0 {
			w++
			if w >= limitW {
				c.ok = false
				return false
			}
			word = e.highWord(w)
		}
		c.i, c.pos = i, 64*w+uint64(bits.TrailingZeros64(word))
		c.word = word & (word - 1)
	}
	if c.pos-c.i == hw {
		c.inBucket(want, limit)
	}
	for c.value() < want {
		if c.i+1 >= limit || !c.next() {
			c.ok = false
			return false
		}
	}
	return true
}

// jump moves the cursor, inside [c.i, limit), to the last sampled value
// whose high part is below hw, when that is past the cursor. A damaged
// sample is never followed.
func (c *efCursor) jump(hw, limit uint64) {
	e := c.e
	if len(e.samples) < 8 {
		return
	}
	first, last := c.i/efSample+1, (limit-1)/efSample // samples inside (c.i, limit)
	last = min(last, uint64(len(e.samples)/8)-1)
	high := func(s uint64) uint64 { // high part of value s*efSample; ^0 when damaged
		noteRead(e.samples, 8*s)
		pos := binary.LittleEndian.Uint64(e.samples[8*s:])
		if pos < s*efSample || pos/64 >= uint64(len(e.high)/8) {
			return ^uint64(0)
		}
		return pos - s*efSample
	}
	// The first sample in [first, last] whose high part is at least hw.
	lo, hi := first, last+1
	for lo < hi {
		mid := lo + (hi-lo)/2
		if high(mid) < hw {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	if lo == first {
		return
	}
	s := lo - 1
	pos := binary.LittleEndian.Uint64(e.samples[8*s:])
	if pos <= c.pos { // a damaged sample
		return
	}
	c.i, c.pos = s*efSample, pos
	c.word = e.highWord(pos/64) &^ (2<<(pos%64) - 1)
}

// inBucket moves the cursor, standing on a value whose high part is
// want's, to the first value of that run of equal high parts (before index
// limit) whose low bits reach want's, or to the run's last value when none
// does. Long runs are binary-searched.
func (c *efCursor) inBucket(want, limit uint64) {
	e := c.e
	// The run: the set bits from c.pos on without a zero between, counted
	// word by word.
	var run uint64
	bit := c.pos
	limitW := uint64(len(e.high) / 8)
	for {
		w := bit / 64
		if w >= limitW {
			break
		}
		rest := e.highWord(w) >> (bit % 64)
		t := uint64(bits.TrailingZeros64(^rest))
		if avail := 64 - bit%64; t >= avail {
			run += avail
			bit += avail
			continue
		}
		run += t
		break
	}
	end := min(c.i+run, limit, e.n)
	if end-c.i <= 8 {
		return
	}
	lw := want & (1<<e.l - 1)
	lo, hi := c.i, end
	lo, hi = interpolate(lo, hi, lw, e.l, e.lowAt)
	for lo < hi {
		mid := lo + (hi-lo)/2
		if e.lowAt(mid) < lw {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	j := min(lo, end-1)
	pos := c.pos + (j - c.i)
	c.i, c.pos = j, pos
	c.word = e.highWord(pos/64) &^ (2<<(pos%64) - 1)
}

// interpolate narrows [lo, hi), a run of ascending values below 2^width
// (read by at), to a range that holds the first value at least want (or
// its end, hi, when none is). It starts where want would sit if the
// values spread evenly, then steps outwards 1, 2, 4, ... values until it
// passes want: the reads fall near one point instead of bisecting the
// whole run, so a long run costs one or two cache lines instead of one per
// halving (Y. Perl, A. Itai and H. Avni, "Interpolation search: a log log N
// search", CACM 21(7), 1978, for the guess; J. L. Bentley and A. C. Yao, "An
// almost optimal algorithm for unbounded searching", IPL 5(3), 1976, for the
// doubling steps).
func interpolate(lo, hi, want uint64, width uint, at func(uint64) uint64) (uint64, uint64) {
	n := hi - lo
	if n <= 16 || width >= 32 {
		return lo, hi
	}
	g := lo + min(want*n>>width, n-1) // want < 2^width, n < 2^32: no overflow
	if at(g) >= want {
		hi = g
		for step := uint64(1); step <= hi-lo; step *= 2 {
			if at(hi-step) < want {
				return hi - step + 1, hi
			}
			hi -= step
		}
		return lo, hi
	}
	lo = g + 1
	for step := uint64(1); lo+step-1 < hi; step *= 2 {
		if at(lo+step-1) >= want {
			return lo, lo + step - 1
		}
		lo += step
	}
	return lo, hi
}
