package format

import (
	"bytes"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/estimate"
	"ingot/compile/fixture"
)

// TestKeyListsWorkedExample pins the bytes of the worked example in
// spec/FORMAT.md §4.8.7: three contexts below with 2, 0 and 3 children,
// keys 1 6 | | 0 2 3.
func TestKeyListsWorkedExample(t *testing.T) {
	keys := []uint64{1, 6, 0, 2, 3}
	starts := []uint32{0, 2, 2, 5}
	b := encodeKeyLists(keys, starts, func(int) bool { return true })
	want := []byte{
		4, 0, 0, 0, 0, 0, 0, 0, // n: 3 contexts + 1 list starts
		12, 0, 0, 0, 0, 0, 0, 0, // U: 12 key bits
		1, 0, 0, 0, 0, 0, 0, 0, // L = 1, reserved
		0, 0, 0, 0, 0, 0, 0, 0, // low bits of 0 6 6 12
		0x31, 0x02, 0, 0, 0, 0, 0, 0, // high bits: ones at 0, 4, 5, 9
		0, 0, 0, 0, 0, 0, 0, 0, // sample[0] = 0
		0x31, 0x0e, 0, 0, 0, 0, 0, 0, // keys: 1 6 at 3 bits, 0 2 3 at 2 bits
	}
	if !bytes.Equal(b, want) {
		t.Fatalf("bytes % x, want % x", b, want)
	}
	kl, err := parseKeyLists(b, 3)
	if err != nil {
		t.Fatal(err)
	}
	for r, c := range []struct{ a, b uint64 }{{0, 2}, {2, 2}, {2, 5}} {
		start, width, ok := kl.list(uint64(r), c.b-c.a)
		if ok != (c.b > c.a) {
			t.Fatalf("list %d: ok %v", r, ok)
		}
		for e := c.a; e < c.b; e++ {
			if i, found := kl.find(start, width, c.b-c.a, keys[e]); !found || c.a+i != e {
				t.Errorf("key %d of list %d: found %v at %d, want entry %d", keys[e], r, found, c.a+i, e)
			}
		}
		if c.b > c.a {
			if _, found := kl.find(start, width, c.b-c.a, 5); found {
				t.Errorf("list %d: key 5 found", r)
			}
		}
	}
	got := make([]uint64, len(keys))
	ranges := [][2]uint64{{0, 2}, {2, 2}, {2, 5}}
	if err := kl.decodeLists(got, func(r uint64) (uint64, uint64) { return ranges[r][0], ranges[r][1] }); err != nil {
		t.Fatal(err)
	}
	for i := range keys {
		if got[i] != keys[i] {
			t.Errorf("key %d decodes as %d, want %d", i, got[i], keys[i])
		}
	}
}

// TestKeyListsDamageFound: a list whose width is not that of its largest
// key, keys out of order, stray bits after the stream and a list start
// that leaves a list a fraction of a width are each found by the decoding
// that full verification runs, or refused at open.
func TestKeyListsDamageFound(t *testing.T) {
	keys := []uint64{1, 6, 0, 2, 3}
	ranges := [][2]uint64{{0, 2}, {2, 2}, {2, 5}}
	lists := func(r uint64) (uint64, uint64) { return ranges[r][0], ranges[r][1] }
	const stream = 48 // the key stream's offset in the example's section
	for _, c := range []struct {
		name string
		edit func(b []byte)
	}{
		{"key made smaller: width too wide", func(b []byte) { b[stream] &^= 0x30 }}, // 6 -> 0: 1 0 at 3 bits
		{"keys out of order", func(b []byte) { b[stream+1] &^= 0x02 }},              // 2 -> 0 in list 2
		{"stray bit after the stream", func(b []byte) { b[stream+2] |= 0x10 }},      // bit 20
		{"list start inside a key", func(b []byte) { b[24] |= 1 }},                  // low bit of value 0: starts at bit 1
		{"list start moved", func(b []byte) { b[32] = 0x29 }},                       // ones at 0, 3, 5, 9: starts 0 4 6 12
	} {
		b := encodeKeyLists(keys, []uint32{0, 2, 2, 5}, func(int) bool { return true })
		c.edit(b)
		kl, err := parseKeyLists(b, 3)
		if err != nil {
			continue // refused at open: found
		}
		if err := kl.decodeLists(make([]uint64, len(keys)), lists); err == nil {
			t.Errorf("%s: not found", c.name)
		}
	}
}

// TestKeyListsChosenWhenShorter: the writer stores an order's keys in
// coded key lists when they are shorter than both other forms, else in key
// lists when those are not longer than one Elias-Fano sequence, and
// FileSize counts what it writes; the model answers alike either way.
func TestKeyListsChosenWhenShorter(t *testing.T) {
	all, err := corpus.SOTU()
	if err != nil {
		t.Fatal(err)
	}
	tb := fixture.Estimate(t, all[:3000], 5, estimate.Options{Method: estimate.KneserNey})
	data := mustMarshal(t, tb)
	listed, err := MarshalKeyLists(tb)
	if err != nil {
		t.Fatal(err)
	}
	one, err := MarshalKeysEF(tb)
	if err != nil {
		t.Fatal(err)
	}
	coded, err := MarshalCodedLists(tb)
	if err != nil {
		t.Fatal(err)
	}
	m, ml, me, mc := mustOpen(t, data), mustOpen(t, listed), mustOpen(t, one), mustOpen(t, coded)
	sawCoded, sawEF := false, false
	for _, s := range m.Sections() {
		if s.Kind != KindLastWords {
			continue
		}
		length := func(m *Model) int64 {
			for _, t := range m.Sections() {
				if t.Kind == s.Kind && t.Order == s.Order {
					return t.Length
				}
			}
			return -1
		}
		isList := s.Encoding == ListIDs || s.Encoding == ListRanks
		isCoded := s.Encoding == CodedListIDs || s.Encoding == CodedListRanks
		sawCoded, sawEF = sawCoded || isCoded, sawEF || (!isList && !isCoded)
		lc, ll, le := length(mc), length(ml), length(me)
		wantCoded := lc < min(ll, le)
		wantList := !wantCoded && ll <= le
		if s.Length != min(lc, ll, le) || isCoded != wantCoded || isList != wantList {
			t.Errorf("order %d: %s of %d bytes; coded lists take %d, lists %d, one sequence %d", s.Order, s.Encoding, s.Length, lc, ll, le)
		}
	}
	if !sawCoded || !sawEF {
		t.Errorf("the model does not exercise both coded lists and one sequence (coded lists %v, one sequence %v)", sawCoded, sawEF)
	}
	if size, err := FileSize(tb, Planned{}); err != nil || size != int64(len(data)) {
		t.Errorf("FileSize %d (%v), written %d", size, err, len(data))
	}
	for k := 1; k <= tb.Order(); k++ {
		for i := 0; i < tb.Len(k); i++ {
			g := tb.Gram(k, i)
			a, b, c := m.LogProb(g[:k-1], g[k-1]), ml.LogProb(g[:k-1], g[k-1]), me.LogProb(g[:k-1], g[k-1])
			if a != b || a != c {
				t.Fatalf("%v: %v written, %v in lists, %v in one sequence", g, a, b, c)
			}
		}
	}
	for _, x := range []*Model{m, ml, me} {
		if err := x.Verify(); err != nil {
			t.Fatal(err)
		}
	}
}

// TestKeyListsFindAnyList checks the search of a list against every key
// and every gap, on lists of every length up to 200 and keys spread evenly,
// crowded at the low end and crowded at the high end of their width.
func TestKeyListsFindAnyList(t *testing.T) {
	for n := 1; n <= 200; n++ {
		for shape := 0; shape < 3; shape++ {
			keys := make([]uint64, n)
			for i := range keys {
				switch shape {
				case 0:
					keys[i] = uint64(3*i + 1)
				case 1:
					keys[i] = uint64(i)
					if i == n-1 {
						keys[i] = 5000 // one large key: a wide list of small keys
					}
				default:
					keys[i] = uint64(5000 - 2*(n-1-i))
				}
			}
			b := encodeKeyLists(keys, []uint32{0, uint32(n)}, func(int) bool { return true })
			kl, err := parseKeyLists(b, 1)
			if err != nil {
				t.Fatal(err)
			}
			start, width, ok := kl.list(0, uint64(n))
			if !ok {
				t.Fatalf("n %d shape %d: no list", n, shape)
			}
			present := map[uint64]int{}
			for i, k := range keys {
				present[k] = i
			}
			for key := uint64(0); key <= 5002; key++ {
				i, found := kl.find(start, width, uint64(n), key)
				want, ok := present[key]
				if found != ok || (ok && int(i) != want) {
					t.Fatalf("n %d shape %d key %d: found %v at %d, want %v at %d", n, shape, key, found, i, ok, want)
				}
			}
		}
	}
}
