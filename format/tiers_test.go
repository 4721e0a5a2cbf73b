package format

import (
	"encoding/binary"
	"math/rand/v2"
	"testing"
)

// skewedIndexes draws n codebook indexes into L levels from a Zipf law
// (rank r drawn with probability proportional to 1/(r+1)^s), with the
// levels shuffled so that the frequent ones are spread over the codebook:
// shaped like the back-off weights of a quantized model, whose frequent
// levels are the weights many small contexts share. Invented data.
func skewedIndexes(n, L int, s float64, seed uint64) []int {
	r := rand.New(rand.NewPCG(seed, 11))
	z := rand.NewZipf(r, s, 1, uint64(L-1))
	perm := r.Perm(L)
	out := make([]int, n)
	for i := range out {
		out[i] = perm[z.Uint64()]
	}
	return out
}

// mixedIndexes draws n codebook indexes into L levels: with probability
// p one of the first `frequent` levels of a shuffled order, else any level,
// uniformly. Invented data.
func mixedIndexes(n, L, frequent int, p float64, seed uint64) []int {
	r := rand.New(rand.NewPCG(seed, 12))
	perm := r.Perm(L)
	out := make([]int, n)
	for i := range out {
		if r.Float64() < p {
			out[i] = perm[r.IntN(frequent)]
		} else {
			out[i] = r.IntN(L)
		}
	}
	return out
}

// TestTieredIndexesAtEveryWidth encodes skewed and uniform index columns
// at every codebook width the format allows and reads every entry back
// through the tiers: the same index as written, whatever narrow width the
// plan chose, and the section exactly as long as planned.
func TestTieredIndexesAtEveryWidth(t *testing.T) {
	tiered := 0
	byWidth := map[uint]int{}
	for wide := uint(2); wide <= 16; wide++ {
		for _, L := range []int{1<<(wide-1) + 1, 1 << wide} {
			for _, s := range []float64{0, 1.05, 1.5, 3} {
				n := 3001 + int(wide)*37
				var idx []int
				if s == 0 {
					// 92% of the entries on 255 levels, the rest anywhere:
					// the shape of the widened back-off weights.
					n = 20001
					idx = mixedIndexes(n, L, min(255, L/2), 0.92, uint64(wide))
				} else {
					idx = skewedIndexes(n, L, s, uint64(wide)*7+uint64(L))
				}
				plan := planTiers(idx, L)
				if plan.narrow == 0 {
					if plan.length != packedLen(n, bitsFor(L)) {
						t.Fatalf("L %d: packed plan of %d bytes, want %d", L, plan.length, packedLen(n, bitsFor(L)))
					}
					continue
				}
				tiered++
				byWidth[plan.narrow]++
				if plan.length >= packedLen(n, bitsFor(L)) {
					t.Errorf("L %d: tiered plan of %d bytes, packed takes %d", L, plan.length, packedLen(n, bitsFor(L)))
				}
				b := encodeTiers(idx, L, plan)
				if int64(len(b)) != plan.length {
					t.Fatalf("L %d narrow %d: %d bytes written, %d planned", L, plan.narrow, len(b), plan.length)
				}
				narrow, tr, err := parseTiers(b, int64(n), L)
				if err != nil {
					t.Fatalf("L %d narrow %d: %v", L, plan.narrow, err)
				}
				if p := checkTiers(tr, narrow, n, L); len(p) != 0 {
					t.Fatalf("L %d narrow %d: %v", L, plan.narrow, p)
				}
				for i, want := range idx {
					if got := tr.index(narrow, uint64(i), bitsFor(L)); got != want {
						t.Fatalf("L %d (%d bits), narrow %d: entry %d reads %d, want %d", L, bitsFor(L), plan.narrow, i, got, want)
					}
				}
			}
		}
	}
	if tiered < 20 || byWidth[8] == 0 {
		t.Errorf("only %d columns chose the tiered layout, narrow widths %v (8 bits, counted eight at a time, among them?)", tiered, byWidth)
	}
}

// TestTieredWorkedExample pins the bytes of the worked example in
// spec/FORMAT.md §4.8.6.
func TestTieredWorkedExample(t *testing.T) {
	// A codebook of 5 levels (B = 3); indexes 4 4 1 4 0 4 4 2.
	idx := []int{4, 4, 1, 4, 0, 4, 4, 2}
	plan := tierPlan{narrow: 1, levels: []int{4}}
	b := encodeTiers(idx, 5, plan)
	want := []byte{
		3, 0, 0, 0, // B
		1, 0, 0, 0, // b
		3, 0, 0, 0, 0, 0, 0, 0, // E
		4, 0, // table: narrow 0 is level 4
		0, 0, 0, 0, // counter of block 0
		0b10010100,             // narrow bits: entries 2, 4 and 7 escaped
		0b10000001, 0b00000000, // wide: 1, 0, 2 at 3 bits: 001 000 010
	}
	if string(b) != string(want) {
		t.Fatalf("bytes % x, want % x", b, want)
	}
	narrow, tr, err := parseTiers(b, int64(len(idx)), 5)
	if err != nil {
		t.Fatal(err)
	}
	for i, w := range idx {
		if got := tr.index(narrow, uint64(i), 3); got != w {
			t.Errorf("entry %d reads %d, want %d", i, got, w)
		}
	}
}

// TestCountEscapesBytewise checks the eight-bytes-at-a-time count of 0xFF
// bytes against the one-value-at-a-time count over every start and end of
// a random run.
func TestCountEscapesBytewise(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	b := make([]byte, 300)
	for i := range b {
		switch r.IntN(4) {
		case 0:
			b[i] = 0xFF
		case 1:
			b[i] = 0x7F
		case 2:
			b[i] = 0xFE
		default:
			b[i] = byte(r.IntN(256))
		}
	}
	for from := 0; from < 40; from++ {
		for to := from; to <= len(b); to += 7 {
			var want uint64
			for _, c := range b[from:to] {
				if c == 0xFF {
					want++
				}
			}
			if got := countEscapes(b, uint64(from), uint64(to), 8); got != want {
				t.Fatalf("[%d, %d): %d, want %d", from, to, got, want)
			}
		}
	}
}

// TestTieredDamageFound changes one counter, the escape count and one
// table level (to one outside the codebook) of a tiered column: the
// checker names each.
func TestTieredDamageFound(t *testing.T) {
	idx := skewedIndexes(2000, 1<<12, 1.3, 3)
	plan := planTiers(idx, 1<<12)
	if plan.narrow == 0 {
		t.Fatal("expected a tiered plan")
	}
	for _, tc := range []struct {
		name string
		at   func(b []byte) int
	}{
		{"counter", func(b []byte) int { return tierHeader + 2*(1<<plan.narrow-1) + 4 }},
		{"escapes", func(b []byte) int { return 8 }},
		{"table", func(b []byte) int { return tierHeader + 2 }},
	} {
		b := encodeTiers(idx, 1<<12, plan)
		at := tc.at(b)
		if tc.name == "table" {
			binary.LittleEndian.PutUint16(b[at:], 0xFFFF) // outside the codebook
		} else {
			binary.LittleEndian.PutUint16(b[at:], binary.LittleEndian.Uint16(b[at:])^1)
		}
		narrow, tr, err := parseTiers(b, int64(len(idx)), 1<<12)
		if err != nil {
			continue // refused at open: also found
		}
		if p := checkTiers(tr, narrow, len(idx), 1<<12); len(p) == 0 {
			t.Errorf("%s changed: no problem found", tc.name)
		}
	}
}

// TestCountEscapesAnyWidth checks the windowed count of all-ones values
// against reading them one at a time, at every narrow width, over runs of
// every start and many ends.
func TestCountEscapesAnyWidth(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for width := uint(1); width <= 15; width++ {
		esc := uint64(1)<<width - 1
		values := make([]uint64, 600)
		for i := range values {
			switch r.IntN(3) {
			case 0:
				values[i] = esc
			case 1:
				values[i] = esc &^ (1 << uint(r.IntN(int(width)))) // one bit short
			default:
				values[i] = r.Uint64() & esc
			}
		}
		b := appendPacked(nil, values, width)
		for from := 0; from < 70; from++ {
			for to := from; to <= len(values); to += 13 {
				var want uint64
				for _, v := range values[from:to] {
					if v == esc {
						want++
					}
				}
				if got := countEscapes(b, uint64(from), uint64(to), width); got != want {
					t.Fatalf("width %d, [%d, %d): %d, want %d", width, from, to, got, want)
				}
			}
		}
	}
}
