package format_test

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"hash/crc32"
	"math"
	"math/bits"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/quantize"
)

// TestSpecificationAloneVersion3 reads the version-3 golden models the way
// spec/FORMAT.md (§3, §4.8, §7) tells a reader in another language to,
// using nothing of this package: container, Elias-Fano sequences, contexts
// and their ranks, successor-rank keys, packed values and the word hash;
// it rebuilds every n-gram and applies the back-off rule literally.
func TestSpecificationAloneVersion3(t *testing.T) {
	for _, c := range []struct {
		model, expected string
		tolerance       float64 // of the sums of the laws of probability; 0: not normalised
		hash            uint32  // the word hash's encoding
	}{
		{"tiny.v3.ingot", "tiny.expected.jsonl", floatTolerance, 5},
		// Cut without renormalising: it tests reading, not sums.
		{"tiny-cut.v3.ingot", "tiny-cut.expected.jsonl", 0, 5},
		{"marrowfen.v3.ingot", "marrowfen.expected.jsonl", floatTolerance, 5},
		{"marrowfen.q8.v3.ingot", "marrowfen.q8.expected.jsonl", quantizedTolerance, 5},
		{"marrowfen.q4.v3.ingot", "marrowfen.q4.expected.jsonl", quantizedTolerance, 5},
		// The word hashes of older writers.
		{"tiny.v3-hash0.ingot", "tiny.expected.jsonl", floatTolerance, 0},
		{"tiny.v3-hash4.ingot", "tiny.expected.jsonl", floatTolerance, 4},
		// Key lists (§4.8.7) at every order.
		{"tiny.v3-lists.ingot", "tiny.expected.jsonl", floatTolerance, 5},
		{"tiny-cut.v3-lists.ingot", "tiny-cut.expected.jsonl", 0, 5},
		// Coded key lists (§4.8.8) at every order.
		{"tiny.v3-coded.ingot", "tiny.expected.jsonl", floatTolerance, 5},
		{"tiny-cut.v3-coded.ingot", "tiny-cut.expected.jsonl", 0, 5},
		{"marrowfen.q8.v3-coded.ingot", "marrowfen.q8.expected.jsonl", quantizedTolerance, 5},
	} {
		t.Run(c.model, func(t *testing.T) {
			enc, F := specAlone3(t, c.model, c.expected, c.tolerance)
			if enc != c.hash || (enc == 5) != (F == 8) {
				t.Fatalf("word hash: encoding %d, F = %d; want encoding %d (and F = 8 with encoding 5, what the reference writer writes)", enc, F, c.hash)
			}
		})
	}
}

type secKey struct{ kind, order uint32 }

type specSection struct {
	enc  uint32
	data []byte
}

func specAlone3(t *testing.T, model, expected string, tolerance float64) (hashEncoding uint32, F uint64) {
	f, err := os.ReadFile(filepath.Join("..", "spec", "golden", model))
	if err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(filepath.Join("..", "spec", "golden", expected))
	if err != nil {
		t.Fatal(err)
	}
	var queries []specQuery
	sc := bufio.NewScanner(bytes.NewReader(data))
	for sc.Scan() {
		var q specQuery
		if err := json.Unmarshal(sc.Bytes(), &q); err != nil {
			t.Fatal(err)
		}
		queries = append(queries, q)
	}
	if len(queries) < 100 {
		t.Fatalf("only %d expected answers", len(queries))
	}
	enc, F, tiered := specDecode3(t, f, queries, tolerance)
	// The 8-bit golden holds tiered columns of both kinds: the decoding
	// of §4.8.6 is exercised.
	if strings.Contains(model, ".q8.") && !(tiered[6] && tiered[7]) {
		t.Errorf("%s: tiered probabilities read %v, tiered back-offs %v; expected both", model, tiered[6], tiered[7])
	}
	return enc, F
}

type specQuery struct {
	Context []string `json:"context"`
	Word    string   `json:"word"`
	Log10   float64  `json:"log10"`
}

// TestSpecificationAloneVersion3Large decodes, by the document alone, a
// model large enough for several Elias-Fano samples and rank counters per
// section (the golden models fit in one of each), and compares every
// n-gram's answer with the estimator's tables.
func TestSpecificationAloneVersion3Large(t *testing.T) {
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	tb := fixture.Estimate(t, all[:1500], 3, estimate.Options{Method: estimate.KneserNey})
	if tb.Len(3) < 4*512 {
		t.Fatalf("only %d trigrams", tb.Len(3))
	}
	// Quantized to 8 bits with 12-bit back-off weights (the width the
	// quantizer widens to when contexts need it), its back-off weights are
	// stored tiered, over several escape counters.
	q8, _, err := quantize.Model(tb, quantize.Options{Bits: 8, BackoffBits: 12, Trainer: quantize.LeastSquares})
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range []*tables.Tables{tb, q8} {
		f, err := format.Marshal(m)
		if err != nil {
			t.Fatal(err)
		}
		var queries []specQuery
		for k := 1; k <= 3; k++ {
			for i := 0; i < m.Len(k); i += 7 {
				g := m.Gram(k, i)
				q := specQuery{Log10: m.LogProb(g)}
				for _, id := range g[:k-1] {
					q.Context = append(q.Context, m.Vocab[id])
				}
				q.Word = m.Vocab[g[k-1]]
				queries = append(queries, q)
			}
		}
		enc, F, tiered := specDecode3(t, f, queries, 0)
		if enc != 5 || F != 8 {
			t.Fatalf("word hash: encoding %d, F = %d; the reference writer writes encoding 5 with F = 8", enc, F)
		}
		if m == q8 && !tiered[7] {
			t.Error("the 8-bit model's back-off weights were not read tiered")
		}
	}
}

// specDecode3 decodes a version-3 file by the document, compares the
// queries' answers exactly and, when tolerance > 0, checks the sums of
// every context (specSums). It returns the word hash's encoding and
// fingerprint width, and the kinds of the columns it read tiered.
func specDecode3(t *testing.T, f []byte, queries []specQuery, tolerance float64) (hashEncoding uint32, fingerprintBits uint64, tieredSeen map[int]bool) {
	le := binary.LittleEndian
	castagnoli := crc32.MakeTable(crc32.Castagnoli)
	if string(f[:8]) != "\x89INGOT\r\n" || le.Uint32(f[8:]) != 3 || le.Uint64(f[16:]) != uint64(len(f)) {
		t.Fatalf("magic, version or length wrong: % x", f[:24])
	}
	count := int(le.Uint32(f[12:]))
	dirEnd := 64 + 32*count
	if crc32.Update(crc32.Checksum(f[:60], castagnoli), castagnoli, f[64:dirEnd]) != le.Uint32(f[60:]) {
		t.Fatal("header checksum")
	}
	sections := map[secKey]specSection{}
	digest := sha256.New()
	for i := 0; i < count; i++ {
		e := f[64+32*i:]
		kind, enc, order, sum := le.Uint32(e), le.Uint32(e[4:]), le.Uint32(e[8:]), le.Uint32(e[12:])
		off, n := le.Uint64(e[16:]), le.Uint64(e[24:])
		b := f[off : off+n]
		if off%8 != 0 || crc32.Checksum(b, castagnoli) != sum {
			t.Fatalf("entry %d: offset %d or checksum wrong", i, off)
		}
		var rec [20]byte
		le.PutUint32(rec[0:], kind)
		le.PutUint32(rec[4:], enc)
		le.PutUint32(rec[8:], order)
		le.PutUint64(rec[12:], n)
		digest.Write(rec[:])
		digest.Write(b)
		sections[secKey{kind, order}] = specSection{enc, b}
	}
	if !bytes.Equal(digest.Sum(nil), f[24:56]) {
		t.Fatal("content digest")
	}
	sec := func(kind, order int) specSection {
		s, ok := sections[secKey{uint32(kind), uint32(order)}]
		if !ok {
			t.Fatalf("no section of kind %d order %d", kind, order)
		}
		return s
	}

	// Summary and vocabulary (§4.1, §4.3); the word hash (§4.8.4).
	sum := sec(1, 0).data
	order, V := int(le.Uint32(sum)), int(le.Uint32(sum[4:]))
	unk := le.Uint32(sum[16:])
	counts := make([]uint64, order+1)
	for k := 1; k <= order; k++ {
		counts[k] = le.Uint64(sum[24+8*(k-1):])
	}
	// Elias-Fano (§4.8.1), decoded value by value through the samples.
	ef := func(b []byte) []uint64 {
		n, last, L := le.Uint64(b), le.Uint64(b[8:]), uint64(le.Uint32(b[16:]))
		lowW := (n*L + 63) / 64
		highW := ((last >> L) + n + 63) / 64
		if uint64(len(b)) != 24+8*(lowW+highW+(n+255)/256) {
			t.Fatalf("Elias-Fano section is %d bytes, the specification says %d", len(b), 24+8*(lowW+highW+(n+255)/256))
		}
		low, high, samples := b[24:], b[24+8*lowW:], b[24+8*(lowW+highW):]
		bit := func(stream []byte, j uint64) uint64 { return uint64(stream[j/8]>>(j%8)) & 1 }
		out := make([]uint64, n)
		for i := uint64(0); i < n; i++ {
			p := le.Uint64(samples[8*(i/256):])
			for skip := i % 256; skip > 0; {
				p++
				if bit(high, p) == 1 {
					skip--
				}
			}
			var lo uint64
			for j := uint64(0); j < L; j++ {
				lo |= bit(low, i*L+j) << j
			}
			out[i] = (p-i)<<L | lo
		}
		if n > 0 && out[n-1] != last {
			t.Fatalf("Elias-Fano: last value %d, recorded %d", out[n-1], last)
		}
		return out
	}
	// The vocabulary (§4.3): word starts plain (u32) or Elias-Fano
	// (§4.8.4); the word hash with 32-bit slots, slots packed at
	// B = bits.Len(V) bits, all ones empty, or B-bit ids with F-bit
	// fingerprints above them (§4.8.4).
	text := sec(4, 0).data
	var starts []uint64
	if s := sec(3, 0); s.enc == 2 {
		starts = ef(s.data)
	} else {
		for i := 0; i+4 <= len(s.data); i += 4 {
			starts = append(starts, uint64(le.Uint32(s.data[i:])))
		}
	}
	if len(starts) != V+1 || starts[0] != 0 || starts[V] != uint64(len(text)) {
		t.Fatalf("word starts: %d values", len(starts))
	}
	vocab := make([]string, V)
	for i := range vocab {
		vocab[i] = string(text[starts[i]:starts[i+1]])
	}
	hs := sec(13, 0)
	hash := hs.data
	P := uint64(le.Uint32(hash))
	if P != uint64(V+V/4+1) {
		t.Fatalf("word hash has %d slots", P)
	}
	// slot returns the id in slot s (0xFFFFFFFF: empty) and its
	// fingerprint (encoding 5; 0 otherwise).
	slot := func(s uint64) (uint32, uint64) { return le.Uint32(hash[8+4*s:]), 0 }
	var F uint64
	if hs.enc == 4 || hs.enc == 5 {
		B, head := uint64(le.Uint32(hash[4:])), uint64(8)
		if hs.enc == 5 {
			F, head = uint64(le.Uint32(hash[8:])), 16
			if F < 1 || F > 16 || le.Uint32(hash[12:]) != 0 {
				t.Fatalf("word hash: F = %d, reserved %d", F, le.Uint32(hash[12:]))
			}
		}
		W := B + F
		if B != uint64(bits.Len(uint(V))) || uint64(len(hash)) != head+(P*W+7)/8 {
			t.Fatalf("packed word hash: B = %d, F = %d, %d bytes", B, F, len(hash))
		}
		slot = func(s uint64) (uint32, uint64) {
			var v uint64
			for j := uint64(0); j < W; j++ {
				p := s*W + j
				v |= uint64(hash[head+p/8]>>(p%8)) & 1 << j
			}
			id, f := v&(1<<B-1), v>>B
			if id == 1<<B-1 {
				if f != 1<<F-1 {
					t.Fatalf("word hash: empty slot %d has fingerprint bits %x", s, f)
				}
				return 0xFFFFFFFF, f
			}
			return uint32(id), f
		}
	}
	fnv := func(w string) uint64 {
		h := uint64(14695981039346656037)
		for i := 0; i < len(w); i++ {
			h = (h ^ uint64(w[i])) * 1099511628211
		}
		return h
	}
	// lookup also counts the words it reads: with fingerprints, only
	// those whose fingerprint matched.
	reads := 0
	lookup := func(w string) (uint32, bool) {
		h := fnv(w)
		for s, probes := h%P, uint64(0); probes < P; s, probes = (s+1)%P, probes+1 {
			id, f := slot(s)
			if id == 0xFFFFFFFF {
				return 0, false
			}
			if F > 0 && f != h>>(64-F) {
				continue
			}
			reads++
			if vocab[id] == w {
				return id, true
			}
		}
		return 0, false
	}
	used := 0
	for s := uint64(0); s < P; s++ {
		if id, f := slot(s); id != 0xFFFFFFFF {
			used++
			if F > 0 && f != fnv(vocab[id])>>(64-F) {
				t.Fatalf("word hash: slot %d holds %q with fingerprint %x, its hash gives %x", s, vocab[id], f, fnv(vocab[id])>>(64-F))
			}
		}
	}
	if used != V {
		t.Fatalf("word hash: %d slots used for %d words", used, V)
	}
	for id, w := range vocab {
		if got, ok := lookup(w); !ok || got != uint32(id) {
			t.Fatalf("word hash: %q -> %d, %v", w, got, ok)
		}
	}
	// With 8-bit fingerprints a lookup of a stored word reads its own
	// word and, once in 256 wrong probes, another (§4.8.4).
	if F >= 8 && reads > V+V/8 {
		t.Fatalf("word hash: looking up the %d words read %d of them", V, reads)
	}
	hashEncoding, fingerprintBits = hs.enc, F

	// A column value (§4.5): plain f32, or packed index into a codebook,
	// read bit by bit, or (§4.8.6) tiered: a narrow value, through the
	// table or, when it is the escape, the wide index at the entry's rank
	// among the escaped entries.
	bitsAt := func(stream []byte, i, w uint64) uint64 {
		var v uint64
		for j := uint64(0); j < w; j++ {
			p := i*w + j
			if p/8 < uint64(len(stream)) {
				v |= uint64(stream[p/8]>>(p%8)) & 1 << j
			}
		}
		return v
	}
	tieredSeen = map[int]bool{}
	value := func(kind, cbKind, k int, i uint64) float64 {
		s := sec(kind, k)
		if s.enc == 0 {
			return float64(math.Float32frombits(le.Uint32(s.data[4*i:])))
		}
		B := uint64(le.Uint32(s.data))
		L := uint64(len(sec(cbKind, k).data) / 4)
		if L < 1 || 1<<B < L || (B > 1 && 1<<(B-1) >= L) || (s.enc == 1 && le.Uint32(s.data[4:]) != 0) {
			t.Fatalf("kind %d order %d: B = %d for a codebook of %d levels", kind, k, B, L)
		}
		var idx uint64
		switch s.enc {
		case 1:
			idx = bitsAt(s.data[8:], i, B)
		case 6:
			tieredSeen[kind] = true
			b := uint64(le.Uint32(s.data[4:]))
			E := le.Uint64(s.data[8:])
			n := counts[k]
			if kind == 7 {
				n = le.Uint64(sec(12, k).data[8:]) // m_k
			}
			T, C := uint64(1)<<b-1, (n+255)/256
			narrowAt := 16 + 2*T + 4*C
			wideAt := narrowAt + (n*b+7)/8
			if b < 1 || b >= B || E > n || uint64(len(s.data)) != wideAt+(E*B+7)/8 {
				t.Fatalf("kind %d order %d: tiered section of %d bytes with B %d, b %d, E %d, n %d", kind, k, len(s.data), B, b, E, n)
			}
			narrow, wide := s.data[narrowAt:wideAt], s.data[wideAt:]
			if v := bitsAt(narrow, i, b); v != T {
				idx = uint64(le.Uint16(s.data[16+2*v:]))
				break
			}
			r := uint64(le.Uint32(s.data[16+2*T+4*(i/256):]))
			for j := i / 256 * 256; j < i; j++ {
				if bitsAt(narrow, j, b) == T {
					r++
				}
			}
			if r >= E {
				t.Fatalf("kind %d order %d entry %d: escape rank %d of %d", kind, k, i, r, E)
			}
			idx = bitsAt(wide, r, B)
		default:
			t.Fatalf("kind %d order %d: encoding %d", kind, k, s.enc)
		}
		if idx >= L {
			t.Fatalf("kind %d order %d entry %d: index %d of %d levels", kind, k, i, idx, L)
		}
		return float64(math.Float32frombits(le.Uint32(sec(cbKind, k).data[4*idx:])))
	}

	// The trie (§4.8.2, §4.8.3): for each order, every entry's words, and
	// each entry's children range.
	type node struct {
		words    []string
		lo, hi   uint64 // children at the order above
		backoff  float64
		isParent bool
	}
	levels := make([][]node, order+1)
	levels[1] = make([]node, V)
	for i := range levels[1] {
		levels[1][i].words = []string{vocab[i]}
	}
	index := map[string]uint64{} // n-gram -> entry index in its order
	for k := 1; k <= order; k++ {
		if k < order {
			ctx := sec(12, k).data
			m := le.Uint64(ctx[8:])
			W := (counts[k] + 63) / 64
			if uint64(len(ctx)) != 16+8*W+4*((W+7)/8) {
				t.Fatalf("contexts of order %d: %d bytes, the specification says %d", k, len(ctx), 16+8*W+4*((W+7)/8))
			}
			counters := ctx[16+8*W:]
			c := ef(sec(8, k).data)
			if uint64(len(c)) != m+1 || c[0] != 0 || c[m] != counts[k+1] {
				t.Fatalf("child starts of order %d", k)
			}
			for i := uint64(0); i < counts[k]; i++ {
				r := uint64(le.Uint32(counters[4*(i/512):]))
				for w := 8 * (i / 512); w < i/64; w++ {
					r += uint64(bits.OnesCount64(le.Uint64(ctx[16+8*w:])))
				}
				word := le.Uint64(ctx[16+8*(i/64):])
				r += uint64(bits.OnesCount64(word & (1<<(i%64) - 1)))
				nd := &levels[k][i]
				nd.backoff = 0
				if word>>(i%64)&1 == 1 {
					nd.lo, nd.hi, nd.isParent = c[r], c[r+1], true
					nd.backoff = value(7, 11, k, r)
				}
			}
		}
		for i := range levels[k] {
			index[fmt.Sprint(levels[k][i].words)] = uint64(i)
		}
		if k == order {
			break
		}
		s := sec(5, k+1)
		// keyOf(r, parent, e): the key of entry e, a child of the parent
		// of rank r among the contexts of order k.
		var keyOf func(r uint64, parent node, e uint64) uint64
		switch s.enc {
		case 2, 3:
			x := ef(s.data)
			keyOf = func(_ uint64, parent node, e uint64) uint64 {
				var base uint64
				if parent.lo > 0 {
					base = x[parent.lo-1]
				}
				return x[e] - base
			}
		case 7, 8:
			// §4.8.7: the Elias-Fano list starts, then the key stream.
			n, last, L := le.Uint64(s.data), le.Uint64(s.data[8:]), uint64(le.Uint32(s.data[16:]))
			size := 24 + 8*((n*L+63)/64+((last>>L)+n+63)/64+(n+255)/256)
			if uint64(len(s.data)) != size+8*((last+63)/64) {
				t.Fatalf("key lists of order %d: %d bytes, the specification says %d", k+1, len(s.data), size+8*((last+63)/64))
			}
			b := ef(s.data[:size])
			stream := s.data[size:]
			keyOf = func(r uint64, parent node, e uint64) uint64 {
				w := (b[r+1] - b[r]) / (parent.hi - parent.lo)
				if w*(parent.hi-parent.lo) != b[r+1]-b[r] {
					t.Fatalf("order %d list %d: %d bits for %d keys", k+1, r, b[r+1]-b[r], parent.hi-parent.lo)
				}
				var key uint64
				for j := uint64(0); j < w; j++ {
					p := b[r] + (e-parent.lo)*w + j
					key |= uint64(stream[p/8]>>(p%8)) & 1 << j
				}
				return key
			}
		case 9, 10:
			// §4.8.8: as §4.8.7, each list of two keys or more coded as its
			// kind says.
			n, last, L := le.Uint64(s.data), le.Uint64(s.data[8:]), uint64(le.Uint32(s.data[16:]))
			size := 24 + 8*((n*L+63)/64+((last>>L)+n+63)/64+(n+255)/256)
			if uint64(len(s.data)) != size+8*((last+63)/64) {
				t.Fatalf("coded key lists of order %d: %d bytes, the specification says %d", k+1, len(s.data), size+8*((last+63)/64))
			}
			b := ef(s.data[:size])
			stream := s.data[size:]
			field := func(p, w uint64) uint64 { // w bits at bit p, least significant first
				var v uint64
				for j := uint64(0); j < w; j++ {
					v |= uint64(stream[(p+j)/8]>>((p+j)%8)) & 1 << j
				}
				return v
			}
			keyOf = func(r uint64, parent node, e uint64) uint64 {
				d, s0, s1 := parent.hi-parent.lo, b[r], b[r+1]
				i := e - parent.lo
				if d == 1 {
					return field(s0, s1-s0)
				}
				switch field(s0, 2) {
				case 0: // one width
					w := (s1 - s0 - 2) / d
					return field(s0+2+i*w, w)
				case 1: // Elias-Fano: L, samples, low bits, high bits
					l := field(s0+2, 5)
					low := s0 + 7 + 32*((d-1)/128)
					high := low + d*l
					ones, zeros := uint64(0), uint64(0)
					for p := high; p < s1; p++ {
						if field(p, 1) == 0 {
							zeros++
							continue
						}
						if ones == i {
							return zeros<<l | field(low+i*l, l)
						}
						ones++
					}
					t.Fatalf("order %d list %d: key %d not in its high bits", k+1, r, i)
				case 2: // the run 0 .. d-1
					return i
				}
				t.Fatalf("order %d list %d: kind %d", k+1, r, field(s0, 2))
				return 0
			}
		default:
			t.Fatalf("last words of order %d: encoding %d", k+1, s.enc)
		}
		next := make([]node, counts[k+1])
		r := ^uint64(0)
		for p := range levels[k] {
			parent := levels[k][p]
			if !parent.isParent {
				continue
			}
			r++
			for e := parent.lo; e < parent.hi; e++ {
				key := keyOf(r, parent, e)
				var w string
				if s.enc == 2 || s.enc == 7 || s.enc == 9 {
					w = vocab[key]
				} else { // successor rank among the children of the parent's suffix
					h := parent.words[1:]
					hn := levels[k-1][index[fmt.Sprint(h)]]
					w = levels[k][hn.lo+key].words[k-1]
				}
				next[e].words = append(append([]string{}, parent.words...), w)
			}
		}
		levels[k+1] = next
	}
	prob, backoff := map[string]float64{}, map[string]float64{}
	for k := 1; k <= order; k++ {
		for i, nd := range levels[k] {
			name := fmt.Sprint(nd.words)
			prob[name] = value(6, 10, k, uint64(i))
			if k < order {
				backoff[name] = nd.backoff
			}
		}
	}

	// The back-off rule (§7).
	logProb := func(context []string, w string) float64 {
		g := append(append([]string{}, context...), w)
		for i, x := range g {
			if _, ok := lookup(x); !ok {
				g[i] = vocab[unk]
			}
		}
		if len(g) > order {
			g = g[len(g)-order:]
		}
		bow := 0.0
		for s := 0; s < len(g); s++ {
			if p, ok := prob[fmt.Sprint(g[s:])]; ok {
				return bow + p
			}
			if b, ok := backoff[fmt.Sprint(g[s:len(g)-1])]; ok && s < len(g)-1 {
				bow += b
			}
		}
		return math.Inf(-1)
	}
	for _, q := range queries {
		if got := logProb(q.Context, q.Word); got != q.Log10 && !(math.IsInf(got, -1) && math.IsInf(q.Log10, -1)) {
			t.Errorf("log10 P(%s | %v) = %v by the specification, expected %v", q.Word, q.Context, got, q.Log10)
		}
	}
	if tolerance > 0 {
		var all [][]string
		for k := 1; k <= order; k++ {
			for _, nd := range levels[k] {
				all = append(all, nd.words)
			}
		}
		specSums(t, vocab, order, all, logProb, tolerance)
	}
	return hashEncoding, fingerprintBits, tieredSeen
}
