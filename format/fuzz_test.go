package format

import (
	"bytes"
	"crypto/ed25519"
	"encoding/binary"
	"errors"
	"ingot/compile/fixture"
	"ingot/compile/tables"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
)

// fuzzKey signs the signed seed; exercise checks every input's signature
// against its public half, so the fuzzer starts from a signature that holds.
var fuzzKey = ed25519.NewKeyFromSeed(bytes.Repeat([]byte{0x5e}, ed25519.SeedSize))

// fuzzSeeds returns the seed models: plain, quantized (version 2, every
// column) and signed, whole and cut, the tiny model with the damage of
// hugeCountCases, with each older word-hash encoding, and the 8-bit
// golden (tiered columns).
func fuzzSeeds(t testing.TB) [][]byte {
	tiny := mustMarshal(t, tinyModel(t))
	random := mustMarshal(t, fixture.RandomTables(5, 12, []int{20, 30, 30}))
	qt := fixture.RandomTables(6, 14, []int{24, 30})
	quantizeByRounding(qt, 0.25, 1)
	quantized := mustMarshal(t, qt)
	signed, err := Sign(tiny, fuzzKey)
	if err != nil {
		t.Fatal(err)
	}
	seeds := [][]byte{tiny, random, quantized, signed, tiny[:len(tiny)/2], quantized[:len(quantized)-8], bytes.Repeat([]byte{0xff}, 200)}
	// The word hashes older writers wrote: 32-bit slots, packed ids
	// without fingerprints.
	for _, enc := range []Encoding{Plain, PackedIDs} {
		data, err := MarshalWordHash(tinyModel(t), enc, 0)
		if err != nil {
			t.Fatal(err)
		}
		seeds = append(seeds, data)
	}
	// Key lists (encodings 7 and 8), which the tiny model is too small
	// for the writer to choose.
	for _, tb := range []*tables.Tables{tinyModel(t), fixture.RandomTables(5, 12, []int{20, 30, 30})} {
		data, err := MarshalKeyLists(tb)
		if err != nil {
			t.Fatal(err)
		}
		seeds = append(seeds, data)
		// And coded key lists (encodings 9 and 10).
		if data, err = MarshalCodedLists(tb); err != nil {
			t.Fatal(err)
		}
		seeds = append(seeds, data)
	}
	// Coded lists of every kind, Elias-Fano included.
	codedGolden, err := os.ReadFile(filepath.Join("..", "spec", "golden", "marrowfen.q8.v3-coded.ingot"))
	if err != nil {
		t.Fatal(err)
	}
	seeds = append(seeds, codedGolden)
	// The 8-bit golden holds tiered columns (encoding 6) of both kinds.
	tiered, err := os.ReadFile(filepath.Join("..", "spec", "golden", "marrowfen.q8.v3.ingot"))
	if err != nil {
		t.Fatal(err)
	}
	seeds = append(seeds, tiered)
	for _, c := range hugeCountCases() {
		seeds = append(seeds, c.damage(t, mustMarshal(t, tinyModel(t))))
	}
	return seeds
}

// FuzzFromBytes opens arbitrary bytes and runs every query path on whatever
// opens: nothing may panic, iterators stop within the counts (so no query
// loops without end), and opening an input of at most allocCheckedSize
// bytes allocates at most its size plus allocSlack.
func FuzzFromBytes(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := openBounded(t, data)
		if err != nil {
			if m != nil {
				t.Fatal("error with a model")
			}
			return
		}
		exercise(t, m)
	})
}

// Allocation bound of FromBytes: len(data) + allocSlack, for every input.
//
// FromBytes keeps the caller's bytes and copies none of them. What it
// allocates is the Model, a fixed-size struct; the directory's Section
// table, 40 bytes per 32-byte directory entry, at most 1024 entries (the
// section count is capped before anything is allocated, and the directory
// must lie inside the file); error values; and the decoded JSON build info.
// Nothing is allocated in proportion to a count read from the file: counts
// only bound loops and slices of the file's own bytes, and each is checked
// against the file size before use. Decoding JSON is not byte for byte:
// dense JSON such as "discounts":[{"":1},{"":1},...] costs about 140 bytes
// of maps and numbers per byte of text (measured with go1.26), which is why
// the build info is capped at MaxBuildInfo (16 KiB): at most about 2.3 MiB.
// The check catches an allocation sized by a count or length field taken
// from the bytes.
const allocSlack = 4 << 20

// openBounded is FromBytes, with the allocation bound checked. Only FromBytes is measured, between two
// reads of the heap statistics, so queries that build results (Explain,
// ToTables) are not counted.
func openBounded(t testing.TB, data []byte) (*Model, error) {
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	m, err := FromBytes(data)
	runtime.ReadMemStats(&after)
	if got, limit := after.TotalAlloc-before.TotalAlloc, uint64(len(data))+allocSlack; got > limit {
		t.Fatalf("opening %d bytes allocated %d bytes, more than %d (err %v)", len(data), got, limit, err)
	}
	return m, err
}

// exercise calls every query of m with ids inside and outside the
// vocabulary, and checks what must hold whatever the bytes: iterators stop
// within the counts, quantized values come from their codebook, a
// signature that checks out covers intact content, and a model that
// Verify passes reads back into tables that write a model again.
func exercise(t *testing.T, m *Model) {
	V := uint32(m.VocabSize())
	ids := []uint32{0, 1, 2, V / 2, V - 1, V, V + 1, noNode, m.StartID(), m.EndID(), m.UnknownID()}
	m.Order()
	m.Info()
	m.Digest()
	m.Sections()
	m.SuffixClosed()
	m.Version()
	m.Size()
	for _, id := range ids {
		w := m.Word(id)
		m.ID(w)
		m.ID(w + "x")
	}
	s := m.StartState()
	for i, w := range ids {
		m.Next(&s, w)
		m.LogProb(ids[:i], w)
		m.Explain(ids[i:], w)
		m.ContextState(ids[:i])
		m.Find(ids[i:min(i+3, len(ids))])
	}
	for k := -1; k <= m.Order()+1; k++ {
		for _, i := range []int{-1, 0, 1, m.Count(k) / 2, m.Count(k) - 1, m.Count(k)} {
			m.WordAt(k, i)
			m.LogProbAt(k, i)
			m.LogBackoffAt(k, i)
			m.ChildRange(k, i)
		}
		it := m.Entries(k)
		n := 0
		for it.Next() {
			if n++; n > m.Count(k) {
				t.Fatalf("order %d: the iterator yields more than the %d entries", k, m.Count(k))
			}
			if n <= 1000 {
				m.Find(it.Gram())
			}
		}
		it.Err()
		for _, backoff := range []bool{false, true} {
			exerciseCodebook(t, m, k, backoff)
		}
	}
	m.Signed()
	if err := m.CheckSignature(fuzzKey.Public().(ed25519.PublicKey)); err == nil {
		id, ok := m.Signed()
		if !ok || id != KeyID(fuzzKey.Public().(ed25519.PublicKey)) {
			t.Fatalf("signature checks out, but Signed reports %v, key id %x", ok, id[:4])
		}
		if err := m.VerifyChecksums(); err != nil {
			t.Fatalf("signature checks out over damaged content: %v", err)
		}
	}
	m.CheckSignature(nil)
	m.VerifyChecksums()
	verr := m.Verify()
	tb, err := ToTables(m)
	switch {
	case verr == nil && err != nil:
		t.Fatalf("Verify passes a model that ToTables cannot read back: %v", err)
	case err == nil:
		b, err := Marshal(tb)
		if err != nil {
			t.Fatalf("tables read back do not write: %v", err)
		}
		if _, err := FromBytes(b); err != nil {
			t.Fatalf("tables read back write a model that does not open: %v", err)
		}
	}
	m.Close()
	m.LogProb(ids, 0)
}

// exerciseCodebook reads the codebook and indexes of one column of order k
// (every order, valid or not) and checks that each value read is its
// codebook level, or NaN for an index past the codebook; an entry with no
// index (a damaged file's) reads NaN, or weight 1 where the codebook has no
// +0.0 level.
func exerciseCodebook(t *testing.T, m *Model, k int, backoff bool) {
	cb := m.Codebook(k, backoff)
	value := m.LogProbAt
	if backoff {
		value = m.LogBackoffAt
	}
	for _, i := range []int{-1, 0, 1, m.Count(k) / 3, m.Count(k) - 1, m.Count(k)} {
		j, ok := m.Index(k, i, backoff)
		inRange := cb != nil && i >= 0 && i < m.Count(k)
		if ok && !inRange {
			t.Fatalf("order %d entry %d (back-off %v): an index with a codebook of %d levels", k, i, backoff, len(cb))
		}
		got := value(k, i)
		if !ok {
			if inRange && !math.IsNaN(float64(got)) && !(got == 0 && !slices.ContainsFunc(cb, func(l float32) bool { return math.Float32bits(l) == 0 })) {
				t.Fatalf("order %d entry %d (back-off %v): no index, but it reads %v", k, i, backoff, got)
			}
			continue
		}
		switch {
		case j < 0:
			t.Fatalf("order %d entry %d: negative index %d", k, i, j)
		case j >= len(cb) && !math.IsNaN(float64(got)):
			t.Fatalf("order %d entry %d: index %d past %d levels reads %v, want NaN", k, i, j, len(cb), got)
		case j < len(cb) && math.Float32bits(got) != math.Float32bits(cb[j]):
			t.Fatalf("order %d entry %d: index %d reads %v, level is %v", k, i, j, got, cb[j])
		}
	}
}

// hugeCountCase damages a model's counts (or child starts) and reseals
// the checksums that open reads, so that the damage reaches the open
// checks, or the queries, rather than a checksum.
type hugeCountCase struct {
	name   string
	damage func(t testing.TB, b []byte) []byte
	// refused is part of the open error, or "" when the file opens (its
	// damage lies in a column open does not read).
	refused string
}

// setSummaryU64 writes v at byte at of the summary and reseals the
// summary's checksum and the header's.
func setSummaryU64(t testing.TB, b []byte, at int, v uint64) []byte {
	s, sum := sectionBytes(t, b, KindSummary, 0)
	binary.LittleEndian.PutUint64(sum[at:], v)
	binary.LittleEndian.PutUint32(b[headerSize+directoryEntry*s+12:], checksum(sum))
	reseal(b)
	return b
}

// sectionBytes returns the directory index and the bytes of a section.
func sectionBytes(t testing.TB, b []byte, kind SectionKind, order int) (int, []byte) {
	n := int(binary.LittleEndian.Uint32(b[offSectionCount:]))
	for i := range n {
		e := b[headerSize+directoryEntry*i:]
		if SectionKind(binary.LittleEndian.Uint32(e)) == kind && int(binary.LittleEndian.Uint32(e[8:])) == order {
			off, length := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
			return i, b[off : off+length]
		}
	}
	t.Fatalf("no %s section of order %d", kind, order)
	return 0, nil
}

func hugeCountCases() []hugeCountCase {
	count := func(k int) int { return summaryFixedSize + 8*(k-1) }
	return []hugeCountCase{
		{"order-2 count 2^32-1", func(t testing.TB, b []byte) []byte {
			return setSummaryU64(t, b, count(2), math.MaxUint32)
		}, "order 2 count 4294967295 is impossible"},
		{"order-3 count 2^64-1", func(t testing.TB, b []byte) []byte {
			return setSummaryU64(t, b, count(3), math.MaxUint64)
		}, "order 3 count 18446744073709551615 is impossible"},
		{"order-3 count the file size, its columns short", func(t testing.TB, b []byte) []byte {
			return setSummaryU64(t, b, count(3), uint64(len(b)))
		}, "expected"},
		{"vocabulary of the file size, its word starts short", func(t testing.TB, b []byte) []byte {
			b = setSummaryU64(t, b, count(1), uint64(len(b)))
			s, sum := sectionBytes(t, b, KindSummary, 0)
			binary.LittleEndian.PutUint32(sum[4:], uint32(len(b)))
			binary.LittleEndian.PutUint32(b[headerSize+directoryEntry*s+12:], checksum(sum))
			reseal(b)
			return b
		}, "word starts at offset"},
		{"child starts huge and descending inside the column", func(t testing.TB, b []byte) []byte {
			_, st := sectionBytes(t, b, KindChildStarts, 1)
			for i := 4; i+4 < len(st); i += 4 {
				v := uint32(math.MaxUint32)
				if i%8 == 0 {
					v = 0
				}
				binary.LittleEndian.PutUint32(st[i:], v)
			}
			return b
		}, ""},
		{"last words past the vocabulary", func(t testing.TB, b []byte) []byte {
			_, w := sectionBytes(t, b, KindLastWords, 3)
			for i := 0; i+4 <= len(w); i += 4 {
				binary.LittleEndian.PutUint32(w[i:], math.MaxUint32-uint32(i))
			}
			return b
		}, ""},
	}
}

// Counts in the summary bound every loop and slice of the reader. A count
// larger than the file could hold is refused at open, one the file could
// hold is refused when its columns are too short for it, and damaged child
// starts or word ids inside the columns (which open does not read) leave
// every query and iterator bounded by the counts, with Verify naming the
// damage. Each case is also a seed of FuzzFromBytes.
func TestHugeCountsAreBounded(t *testing.T) {
	for _, c := range hugeCountCases() {
		t.Run(c.name, func(t *testing.T) {
			data := c.damage(t, mustMarshalTables(t, tinyModel(t)))
			m, err := openBounded(t, data)
			if c.refused != "" {
				var fe *FormatError
				if err == nil || !errors.As(err, &fe) || !strings.Contains(err.Error(), c.refused) {
					t.Fatalf("opened with %v; want a format error saying %q", err, c.refused)
				}
				return
			}
			if err != nil {
				t.Fatalf("damage inside a column refused at open: %v", err)
			}
			exercise(t, m)
			m = mustOpen(t, data)
			if err := m.Verify(); err == nil {
				t.Error("Verify passes the damaged model")
			}
			for k := 1; k <= m.Order(); k++ {
				n, it := 0, m.Entries(k)
				for it.Next() {
					n++
				}
				if n > m.Count(k) {
					t.Errorf("order %d: %d entries iterated, %d stored", k, n, m.Count(k))
				}
			}
		})
	}
}

// A codebook must ascend strictly (spec/FORMAT.md §4, kinds 10 and 11).
// Open checks only its length, so Verify must check its order: two levels
// swapped, with every checksum and the digest made to match, open and
// answer queries but fail Verify, naming the codebook.
func TestVerifyRefusesUnsortedCodebook(t *testing.T) {
	tb := fixture.RandomTables(6, 14, []int{24, 30})
	quantizeByRounding(tb, 0.25, 1)
	data := mustMarshal(t, tb)
	i, cb := sectionBytes(t, data, KindProbCodebook, 2)
	a, b := binary.LittleEndian.Uint32(cb), binary.LittleEndian.Uint32(cb[4:])
	binary.LittleEndian.PutUint32(cb, b)
	binary.LittleEndian.PutUint32(cb[4:], a)
	binary.LittleEndian.PutUint32(data[headerSize+directoryEntry*i+12:], checksum(cb))
	reseal(data)
	digest := contentDigest(mustOpen(t, data))
	copy(data[offDigest:], digest[:])
	reseal(data)
	m := mustOpen(t, data)
	if err := m.VerifyChecksums(); err != nil {
		t.Fatalf("the damage is not resealed: %v", err)
	}
	err := m.Verify()
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Section != "probability codebook of order 2" || !strings.Contains(fe.Msg, "does not ascend") {
		t.Errorf("Verify: %v; want the probability codebook of order 2 named", err)
	}
}
