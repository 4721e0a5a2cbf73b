package format

import (
	"bytes"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// randomList returns d distinct keys below u, ascending.
func randomList(rng *rand.Rand, d, u uint64) []uint64 {
	set := map[uint64]bool{}
	for uint64(len(set)) < d {
		set[rng.Uint64N(u)] = true
	}
	keys := make([]uint64, 0, d)
	for k := range set {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

// codedSection encodes lists (one per context) as a coded-lists section
// and parses it back.
func codedSection(t *testing.T, lists [][]uint64) (keyLists, []uint32, []uint64) {
	t.Helper()
	var keys []uint64
	starts := []uint32{0}
	for _, l := range lists {
		keys = append(keys, l...)
		starts = append(starts, uint32(len(keys)))
	}
	b := encodeCodedLists(keys, starts, func(int) bool { return true })
	kl, err := parseKeyLists(b, uint64(len(lists)))
	if err != nil {
		t.Fatal(err)
	}
	return kl, starts, keys
}

// Every kind of coded list (one key, a run 0..d-1, one width, Elias-Fano
// with and without samples) decodes to its keys, and a search finds each
// key at its position and no key that is absent.
func TestCodedListsRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	lists := [][]uint64{{}, {0}, {5}, {0, 1, 2, 3}, {1, 6}, {0, 2, 3}}
	for _, c := range []struct{ d, u uint64 }{{2, 4}, {8, 1000}, {40, 31000}, {129, 5000}, {300, 600}, {1000, 40000}, {5000, 31000}, {100, 1 << 31}} {
		lists = append(lists, randomList(rng, c.d, c.u))
	}
	kinds := map[uint64]int{}
	kl, starts, keys := codedSection(t, lists)
	got := make([]uint64, len(keys))
	if err := kl.decodeCodedLists(got, func(r uint64) (a, b uint64) { return uint64(starts[r]), uint64(starts[r+1]) }); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(got, keys) {
		t.Fatal("decoded keys differ from the written ones")
	}
	for r, l := range lists {
		s, e, ok := kl.starts.pair(uint64(r))
		if !ok {
			t.Fatalf("list %d: no start", r)
		}
		if d := uint64(len(l)); d >= 2 {
			kind, _, size := codedList(d, l[d-1])
			kinds[uint64(kind)]++
			if e-s != size {
				t.Errorf("list %d: %d bits, codedList says %d", r, e-s, size)
			}
		}
		present := map[uint64]bool{}
		for i, k := range l {
			present[k] = true
			if j, ok := kl.codedFind(s, e, uint64(len(l)), k); !ok || j != uint64(i) {
				t.Fatalf("list %d (%d keys): key %d found at %d, %v; it is key %d", r, len(l), k, j, ok, i)
			}
		}
		for range 200 {
			k := rng.Uint64N(2*(slices.Max(append([]uint64{1}, l...))) + 2)
			if _, ok := kl.codedFind(s, e, uint64(len(l)), k); ok != present[k] {
				t.Fatalf("list %d: key %d found %v, present %v", r, k, ok, present[k])
			}
		}
	}
	if kinds[listFixed] == 0 || kinds[listEF] == 0 || kinds[listRun] == 0 {
		t.Errorf("the lists exercise kinds %v, not all three", kinds)
	}
}

// The writer codes a list in Elias-Fano only when that is shorter than
// one width, and samples every 128th key of a long one.
func TestCodedListChoice(t *testing.T) {
	for _, c := range []struct {
		d, last uint64
		kind    int
		size    uint64
	}{
		{2, 1, listRun, 2},
		{3, 2, listRun, 2},
		{2, 6, listFixed, 2 + 2*3},
		// d = 4 under 1000: L = 7 (2^7 <= 1001/4 < 2^8), 2+5+4·7+(999>>7)+4 = 46
		// bits against 2 + 4·10 = 42 at one width.
		{4, 999, listFixed, 42},
		// d = 8 under 1000: L = 6, 2+5+8·6+(999>>6)+8 = 78 against 82.
		{8, 999, listEF, 78},
		// d = 129: one sample; L = 5 (2^5 <= 5000/129 < 2^6):
		// 2+5+32+129·5+(4999>>5)+129 = 969 against 2 + 129·13 = 1679.
		{129, 4999, listEF, 969},
	} {
		kind, _, size := codedList(c.d, c.last)
		if kind != c.kind || size != c.size {
			t.Errorf("%d keys up to %d: kind %d in %d bits, want kind %d in %d", c.d, c.last, kind, size, c.kind, c.size)
		}
	}
}

// Damaged coded lists are reported by the structural check and never
// crash a search.
func TestCodedListsDamage(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	lists := [][]uint64{{0, 1, 2}, {3, 9}, randomList(rng, 300, 4000), {7}}
	var keys []uint64
	starts := []uint32{0}
	for _, l := range lists {
		keys = append(keys, l...)
		starts = append(starts, uint32(len(keys)))
	}
	good := encodeCodedLists(keys, starts, func(int) bool { return true })
	ef := int(efLength(uint64(len(lists)+1), codedListsBits(keys, starts, func(int) bool { return true })[len(lists)]))
	detected := 0
	for bit := 8 * ef; bit < 8*len(good); bit++ {
		b := slices.Clone(good)
		b[bit/8] ^= 1 << (bit % 8)
		kl, err := parseKeyLists(b, uint64(len(lists)))
		if err != nil {
			t.Fatal(err)
		}
		for r := range lists {
			s, e, _ := kl.starts.pair(uint64(r))
			for k := range uint64(4100) {
				kl.codedFind(s, e, uint64(len(lists[r])), k)
			}
		}
		got := make([]uint64, len(keys))
		err = kl.decodeCodedLists(got, func(r uint64) (a, b uint64) { return uint64(starts[r]), uint64(starts[r+1]) })
		// A flipped key bit that leaves a well-formed list is the
		// checksums' to find; a list no writer writes is reported here.
		if err != nil {
			detected++
			if !strings.Contains(err.Error(), "list") && !strings.Contains(err.Error(), "unused") {
				t.Errorf("bit %d: %v", bit, err)
			}
		}
		if bit == 8*ef+1 && err == nil { // the first list's kind: run (2) becomes 0 (one width of 0 bits)
			t.Errorf("the first list's kind flipped passes the check")
		}
	}
	if detected == 0 {
		t.Error("no flipped bit detected")
	}
}

// TestCodedListsWorkedExample pins the bytes of the worked example in
// spec/FORMAT.md §4.8.8: four contexts below whose lists are the run
// 0 1 2, none, the one key 5, and 3 20 21 50 77 100 in Elias-Fano.
func TestCodedListsWorkedExample(t *testing.T) {
	keys := []uint64{0, 1, 2, 5, 3, 20, 21, 50, 77, 100}
	starts := []uint32{0, 3, 3, 4, 10}
	b := encodeCodedLists(keys, starts, func(int) bool { return true })
	want := []byte{
		5, 0, 0, 0, 0, 0, 0, 0, // n: 4 contexts + 1 list starts
		48, 0, 0, 0, 0, 0, 0, 0, // U: 48 key bits
		3, 0, 0, 0, 0, 0, 0, 0, // L = 3, reserved
		0x90, 0x0a, 0, 0, 0, 0, 0, 0, // low bits of 0 2 2 5 48
		0x0f, 0x04, 0, 0, 0, 0, 0, 0, // high bits: ones at 0, 1, 2, 3, 10
		0, 0, 0, 0, 0, 0, 0, 0, // sample[0] = 0
		0x36, 0x32, 0x54, 0xd2, 0xd4, 0x94, 0, 0, // the key stream
	}
	if !bytes.Equal(b, want) {
		t.Fatalf("bytes % x, want % x", b, want)
	}
	kl, err := parseKeyLists(b, 4)
	if err != nil {
		t.Fatal(err)
	}
	// The search of the example: key 50 under the fourth context.
	s, e, ok := kl.starts.pair(3)
	if !ok || s != 5 || e != 48 {
		t.Fatalf("list 3 in bits [%d, %d), %v; want [5, 48)", s, e, ok)
	}
	if i, ok := kl.codedFind(s, e, 6, 50); !ok || i != 3 {
		t.Fatalf("key 50 at %d, %v; want 3", i, ok)
	}
	got := make([]uint64, len(keys))
	if err := kl.decodeCodedLists(got, func(r uint64) (a, b uint64) { return uint64(starts[r]), uint64(starts[r+1]) }); err != nil || !slices.Equal(got, keys) {
		t.Fatalf("decoded %v (%v), want %v", got, err, keys)
	}
}

// A list coded otherwise than the writer codes it (one width where
// Elias-Fano is shorter, a run stored at one width, a wider width) reads
// back the same keys but fails the structural check.
func TestCodedListsNotAsWritten(t *testing.T) {
	keys := []uint64{3, 20, 21, 50, 77, 100} // Elias-Fano, the worked example
	for _, c := range []struct {
		name string
		put  func(put func(v uint64, w uint) error)
	}{
		{"one width instead of Elias-Fano", func(put func(v uint64, w uint) error) {
			put(listFixed, listKindBits)
			for _, k := range keys {
				put(k, 7)
			}
		}},
		{"a width wider than the largest key's", func(put func(v uint64, w uint) error) {
			put(listFixed, listKindBits)
			for _, k := range keys {
				put(k, 9)
			}
		}},
		{"Elias-Fano with a low-bit width other than the rule's", func(put func(v uint64, w uint) error) {
			put(listEF, listKindBits)
			put(3, listLowBits)
			for _, k := range keys {
				put(k&7, 3)
			}
			var prev uint64
			for _, k := range keys {
				put(0, uint(k>>3-prev))
				put(1, 1)
				prev = k >> 3
			}
		}},
	} {
		stream := make([]byte, 64)
		var bit uint64
		c.put(func(v uint64, w uint) error { putBits(stream, bit, v, w); bit += uint64(w); return nil })
		kl := keyLists{stream: stream}
		got := make([]uint64, len(keys))
		err := kl.decodeCoded(0, bit, got)
		if err == nil {
			t.Errorf("%s: passes the check", c.name)
		}
		if i, ok := kl.codedFind(0, bit, uint64(len(keys)), 50); !ok || i != 3 {
			t.Errorf("%s: key 50 at %d, %v; the list still holds it at 3", c.name, i, ok)
		}
	}
}
