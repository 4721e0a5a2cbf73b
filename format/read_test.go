package format

import (
	"bytes"
	"encoding/binary"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
	"github.com/google/go-cmp/cmp/cmpopts"

	"ingot/compile/tables"
)

// TestChecksumIsCastagnoli pins the checksum to CRC-32C: the check value of
// the ASCII string "123456789" is e3069283 (catalogue of parametrised CRC
// algorithms, entry CRC-32/ISCSI; recalled from memory). The IEEE CRC-32 of
// the same string is cbf43926 and must not be what we compute.
func TestChecksumIsCastagnoli(t *testing.T) {
	if got := checksum([]byte("123456789")); got != 0xe3069283 {
		t.Fatalf("checksum(123456789) = %08x, want e3069283", got)
	}
}

func TestWriteIsDeterministic(t *testing.T) {
	for _, c := range models(t) {
		a := mustMarshal(t, c.tb)
		for range 3 {
			if b := mustMarshal(t, c.tb); !bytes.Equal(a, b) {
				t.Fatalf("%s: two writes of the same tables differ", c.name)
			}
		}
		var buf bytes.Buffer
		if err := Write(&buf, c.tb); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a, buf.Bytes()) {
			t.Fatalf("%s: Write and Marshal differ", c.name)
		}
	}
}

// TestLayoutInvariants checks the properties the specification promises of
// every file: sections 8-byte aligned, in ascending order, lengths matching
// the summary, and the file length a multiple of 8.
func TestLayoutInvariants(t *testing.T) {
	for _, c := range models(t) {
		data := mustMarshal(t, c.tb)
		m := mustOpen(t, data)
		if len(data)%8 != 0 {
			t.Errorf("%s: file length %d is not a multiple of 8", c.name, len(data))
		}
		end := int64(headerSize + directoryEntry*len(m.Sections()))
		for _, s := range m.Sections() {
			if s.Offset%8 != 0 || s.Offset < end || s.Offset-end >= 8 {
				t.Errorf("%s: %s at %d after previous end %d", c.name, s.Name(), s.Offset, end)
			}
			end = s.Offset + s.Length
		}
		for k := 1; k <= c.tb.Order(); k++ {
			if m.Count(k) != c.tb.Len(k) {
				t.Errorf("%s: order %d has %d entries, want %d", c.name, k, m.Count(k), c.tb.Len(k))
			}
		}
		if err := m.Verify(); err != nil {
			t.Errorf("%s: %v", c.name, err)
		}
	}
}

func TestToTablesRoundTrip(t *testing.T) {
	for _, c := range models(t) {
		m := mustOpen(t, mustMarshal(t, c.tb))
		back, err := ToTables(m)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if diff := cmp.Diff(c.tb, back, cmpopts.EquateEmpty()); diff != "" {
			t.Errorf("%s: read back differs (-written +read):\n%s", c.name, diff)
		}
		if !bytes.Equal(mustMarshal(t, back), mustMarshal(t, c.tb)) {
			t.Errorf("%s: rewriting the read-back tables changes the bytes", c.name)
		}
	}
}

func TestEntriesYieldStoredGrams(t *testing.T) {
	for _, c := range models(t) {
		m := mustOpen(t, mustMarshal(t, c.tb))
		for k := 1; k <= c.tb.Order(); k++ {
			it := m.Entries(k)
			n := 0
			for it.Next() {
				if got, want := it.Gram(), c.tb.Gram(k, it.Index()); !cmp.Equal(got, want) {
					t.Fatalf("%s: order %d entry %d is %v, want %v", c.name, k, it.Index(), got, want)
				}
				if i, ok := m.Find(it.Gram()); !ok || i != it.Index() {
					t.Fatalf("%s: Find(%v) = %d, %v; want %d", c.name, it.Gram(), i, ok, it.Index())
				}
				n++
			}
			if it.Err() != nil || n != c.tb.Len(k) {
				t.Fatalf("%s: order %d: %d entries, err %v; want %d", c.name, k, n, it.Err(), c.tb.Len(k))
			}
		}
	}
}

func TestBuildInfoRoundTrip(t *testing.T) {
	tb := tinyModel(t)
	tb.Info.Discounts = []map[string]float64{{"D": 0.5}, {"D1": 0.6, "D2": 1.1, "D3+": math.Inf(1)}}
	m := mustOpen(t, mustMarshal(t, tb))
	if diff := cmp.Diff(tb.Info, m.Info(), cmpopts.EquateEmpty()); diff != "" {
		t.Errorf("build info differs (-written +read):\n%s", diff)
	}
}

func TestOpenFile(t *testing.T) {
	tb := tinyModel(t)
	path := filepath.Join(t.TempDir(), "tiny.ingot")
	if err := os.WriteFile(path, mustMarshal(t, tb), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := Open(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Verify(); err != nil {
		t.Fatal(err)
	}
	g := []uint32{1, 9, 6} // <s> the lamp
	if got, want := m.LogProb(g[:2], g[2]), tb.LogProb(g); got != want {
		t.Errorf("mapped model answers %v, want %v", got, want)
	}
	if err := m.Close(); err != nil {
		t.Fatal(err)
	}
	// A closed model answers as an empty one, without touching the mapping.
	if lp := m.LogProb(g[:2], g[2]); !math.IsInf(lp, -1) || m.VocabSize() != 0 || m.Word(1) != "" {
		t.Errorf("closed model still answers: %v", lp)
	}
	s := m.StartState()
	m.Next(&s, 3)
	if err := m.Verify(); err == nil {
		t.Error("closed model verifies")
	}
}

func TestOpenMissingFile(t *testing.T) {
	_, err := Open(filepath.Join(t.TempDir(), "absent.ingot"))
	if err == nil || !strings.Contains(err.Error(), "absent.ingot") {
		t.Fatalf("error %v does not name the file", err)
	}
}

// reseal recomputes the header checksum after a test changed the header or
// directory, so that the check under test is the one that fires.
func reseal(b []byte) {
	n := binary.LittleEndian.Uint32(b[offSectionCount:])
	end := headerSize + directoryEntry*int(n)
	binary.LittleEndian.PutUint32(b[offHeaderCRC:], updateChecksum(checksum(b[:offHeaderCRC]), b[headerSize:end]))
}

// entryAt returns the directory entry bytes of the section of given kind and
// order.
func entryAt(t *testing.T, b []byte, kind SectionKind, order int) []byte {
	n := int(binary.LittleEndian.Uint32(b[offSectionCount:]))
	for i := 0; i < n; i++ {
		e := b[headerSize+directoryEntry*i : headerSize+directoryEntry*(i+1)]
		if SectionKind(binary.LittleEndian.Uint32(e)) == kind && int(binary.LittleEndian.Uint32(e[8:])) == order {
			return e
		}
	}
	t.Fatalf("no %s section of order %d", kind, order)
	return nil
}

func TestOpenRefusesDamage(t *testing.T) {
	good := mustMarshalTables(t, tinyModel(t))
	tests := []struct {
		name   string
		damage func(t *testing.T, b []byte) []byte
		want   string // part of the message
	}{
		{"empty file", func(t *testing.T, b []byte) []byte { return nil }, "shorter than the 64-byte header"},
		{"wrong magic", func(t *testing.T, b []byte) []byte { b[1] = 'X'; return b }, "bad magic"},
		{"text-mode line ending", func(t *testing.T, b []byte) []byte {
			return append(append(append([]byte{}, b[:6]...), '\n'), b[8:]...)
		}, "bad magic"},
		{"other version", func(t *testing.T, b []byte) []byte {
			binary.LittleEndian.PutUint32(b[offVersion:], 4)
			return b
		}, "file is format version 4; this reader reads versions 1 to 3"},
		{"truncated in the directory", func(t *testing.T, b []byte) []byte { return b[:100] }, "too short for a directory"},
		{"truncated in the sections", func(t *testing.T, b []byte) []byte { return b[:len(b)-16] }, "truncated"},
		{"extended", func(t *testing.T, b []byte) []byte { return append(b, make([]byte, 8)...) }, "header records"},
		{"bad directory checksum", func(t *testing.T, b []byte) []byte { b[headerSize+20]++; return b }, "header and directory checksum"},
		{"bad digest in header", func(t *testing.T, b []byte) []byte { b[offDigest]++; return b }, "header and directory checksum"},
		{"section outside the file", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindProbabilities, 3)
			binary.LittleEndian.PutUint64(e[24:], uint64(len(b)))
			reseal(b)
			return b
		}, "lies outside the"},
		{"section length overflow", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindProbabilities, 3)
			binary.LittleEndian.PutUint64(e[24:], math.MaxUint64)
			reseal(b)
			return b
		}, "lies outside the"},
		{"misaligned section", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindProbabilities, 3)
			binary.LittleEndian.PutUint64(e[16:], binary.LittleEndian.Uint64(e[16:])+4)
			reseal(b)
			return b
		}, "not a multiple of 8"},
		{"overlapping sections", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindProbabilities, 3)
			binary.LittleEndian.PutUint64(e[16:], binary.LittleEndian.Uint64(e[16:])-8)
			reseal(b)
			return b
		}, "overlaps"},
		{"damaged summary", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindSummary, 0)
			b[binary.LittleEndian.Uint64(e[16:])+20] ^= 2
			return b
		}, "summary at offset"},
		{"damaged build info", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindBuildInfo, 0)
			b[binary.LittleEndian.Uint64(e[16:])+3] ^= 1
			return b
		}, "build info at offset"},
		{"unknown encoding", func(t *testing.T, b []byte) []byte {
			binary.LittleEndian.PutUint32(entryAt(t, b, KindBackoffs, 2)[4:], 7)
			reseal(b)
			return b
		}, "back-offs of order 2 at offset"},
		{"missing section", func(t *testing.T, b []byte) []byte {
			binary.LittleEndian.PutUint32(entryAt(t, b, KindChildStarts, 1), 1000)
			reseal(b)
			return b
		}, "child starts of order 1 at offset 64: required section is missing"},
		{"column length against counts", func(t *testing.T, b []byte) []byte {
			e := entryAt(t, b, KindLastWords, 2)
			binary.LittleEndian.PutUint64(e[24:], binary.LittleEndian.Uint64(e[24:])-4)
			reseal(b)
			return b
		}, "expected 56 for the counts in the summary"},
		{"section of no order", func(t *testing.T, b []byte) []byte {
			binary.LittleEndian.PutUint32(entryAt(t, b, KindProbabilities, 3)[8:], 11)
			reseal(b)
			return b
		}, "order 11 exceeds 10"},
	}
	for _, c := range tests {
		t.Run(c.name, func(t *testing.T) {
			b := c.damage(t, bytes.Clone(good))
			m, err := FromBytes(b)
			if err == nil {
				t.Fatalf("damaged file opened: order %d", m.Order())
			}
			var fe *FormatError
			if !errors.As(err, &fe) {
				t.Fatalf("error %v is a %T, want *FormatError", err, err)
			}
			if !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %q does not say %q", err, c.want)
			}
		})
	}
}

func TestOpenNamesThePath(t *testing.T) {
	b := mustMarshalTables(t, tinyModel(t))
	binary.LittleEndian.PutUint32(b[offVersion:], 4)
	path := filepath.Join(t.TempDir(), "future.ingot")
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := Open(path)
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Path != path || fe.Offset != offVersion || !strings.Contains(err.Error(), path) {
		t.Fatalf("error %v does not carry path and offset", err)
	}
}

// TestVerifyFindsDamageOpenSkips damages a large column: Open does not read
// it, Verify names it.
func TestVerifyFindsDamageOpenSkips(t *testing.T) {
	good := mustMarshalTables(t, tinyModel(t))
	tests := []struct {
		name   string
		damage func(t *testing.T, b []byte)
		want   string
	}{
		{"probability column", func(t *testing.T, b []byte) {
			b[binary.LittleEndian.Uint64(entryAt(t, b, KindProbabilities, 2)[16:])+5] ^= 0x10
		}, "probabilities of order 2 at offset"},
		{"word text", func(t *testing.T, b []byte) {
			b[binary.LittleEndian.Uint64(entryAt(t, b, KindWordText, 0)[16:])+20] ^= 0x01
		}, "word text at offset"},
		{"padding", func(t *testing.T, b []byte) {
			e := entryAt(t, b, KindBuildInfo, 0)
			end := binary.LittleEndian.Uint64(e[16:]) + binary.LittleEndian.Uint64(e[24:])
			if end%8 == 0 {
				t.Skip("build info needs no padding")
			}
			b[end] = 1
		}, "padding before word starts"},
		{"digest only", func(t *testing.T, b []byte) {
			b[offDigest+31] ^= 0xff
			reseal(b)
		}, "content digest"},
	}
	for _, c := range tests {
		t.Run(c.name, func(t *testing.T) {
			b := bytes.Clone(good)
			c.damage(t, b)
			m, err := FromBytes(b)
			if err != nil {
				t.Fatalf("open reads the damaged part: %v", err)
			}
			err = m.Verify()
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("Verify = %v, want a message with %q", err, c.want)
			}
		})
	}
}

// TestVerifyStructure damages values that checksums alone would not catch
// (the checksum is recomputed), so the structural checks must.
func TestVerifyStructure(t *testing.T) {
	good := mustMarshalTables(t, tinyModel(t))
	patch := func(b []byte, kind SectionKind, order, at int, v uint32) {
		e := entryAt(t, b, kind, order)
		off, n := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
		binary.LittleEndian.PutUint32(b[int(off)+at:], v)
		binary.LittleEndian.PutUint32(e[12:], checksum(b[off:off+n]))
		// Recompute the digest as a careless writer would.
		m, err := FromBytes(func() []byte { reseal(b); return b }())
		if err != nil {
			t.Fatal(err)
		}
		d := contentDigest(m)
		copy(b[offDigest:], d[:])
		reseal(b)
	}
	tests := []struct {
		name  string
		kind  SectionKind
		order int
		at    int
		value uint32
		want  string
	}{
		{"word id outside vocabulary", KindLastWords, 2, 0, 500, "outside the vocabulary"},
		{"siblings out of order", KindLastWords, 2, 4, 0, "does not come after its sibling"},
		{"child starts descend", KindChildStarts, 1, 4, 5, "before those of entry 1"},
		{"NaN probability", KindProbabilities, 2, 0, math.Float32bits(float32(math.NaN())), "NaN"},
		{"+Inf back-off", KindBackoffs, 1, 0, math.Float32bits(float32(math.Inf(1))), "+Inf"},
		{"unsorted vocabulary", KindWordText, 0, 12, 0x7a7a7a7a, "does not sort after"},
	}
	for _, c := range tests {
		t.Run(c.name, func(t *testing.T) {
			b := bytes.Clone(good)
			patch(b, c.kind, c.order, c.at, c.value)
			m := mustOpen(t, b)
			if err := m.VerifyChecksums(); err != nil {
				t.Fatalf("checksums should pass after resealing: %v", err)
			}
			if err := m.Verify(); err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("Verify = %v, want a message with %q", err, c.want)
			}
			// Whatever the damage, queries still answer without panicking.
			for w := uint32(0); w < uint32(m.VocabSize())+2; w++ {
				m.LogProb([]uint32{1, 9}, w)
			}
			if _, err := ToTables(m); err == nil {
				t.Error("ToTables accepts the damaged model")
			}
		})
	}

	// Several defects at once: CheckStructure reports every one, each under
	// its rule and in its section, and Model.Verify the first of them.
	b := bytes.Clone(good)
	for _, c := range tests {
		if c.name != "siblings out of order" && c.name != "child starts descend" {
			patch(b, c.kind, c.order, c.at, c.value)
		}
	}
	m := mustOpen(t, b)
	var got []Problem
	var rules []Rule
	applied := m.CheckStructure(func(r Rule, p Problem) bool { got, rules = append(got, p), append(rules, r); return true })
	want := []struct {
		rule    Rule
		section string
	}{
		{RuleVocabulary, "word text"},
		{RuleWordIDs, "last words of order 2"},
		{RuleSiblingOrder, "last words of order 2"}, // word id 500 comes before 9
		{RuleValues, "back-offs of order 1"},
		{RuleValues, "probabilities of order 2"},
	}
	if len(got) != len(want) {
		t.Fatalf("CheckStructure reports %d problems, want %d: %+v", len(got), len(want), got)
	}
	for i, w := range want {
		if rules[i] != w.rule || got[i].Section != w.section {
			t.Errorf("problem %d is %+v, want rule %d in %s", i, got[i], w.rule, w.section)
		}
	}
	for _, r := range []Rule{RuleVocabulary, RuleChildStarts, RuleWordIDs, RuleSiblingOrder, RuleValues} {
		if !applied.Has(r) {
			t.Errorf("rule %d not applied", r)
		}
	}
	err := m.Verify()
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Section != got[0].Section || fe.Msg != got[0].Msg {
		t.Errorf("Verify = %v, want the first problem, %+v", err, got[0])
	}
	stopped := 0
	m.CheckStructure(func(Rule, Problem) bool { stopped++; return false })
	if stopped != 1 {
		t.Errorf("CheckStructure reported %d problems after report asked it to stop", stopped)
	}
}

func TestWriteRefuses(t *testing.T) {
	tests := []struct {
		name   string
		damage func(tb *tables.Tables)
		want   string
	}{
		{"unsorted vocabulary", func(tb *tables.Tables) { tb.Vocab[3], tb.Vocab[4] = tb.Vocab[4], tb.Vocab[3] }, "not sorted"},
		{"NaN probability", func(tb *tables.Tables) { tb.Levels[1].LogProb[2] = float32(math.NaN()) }, "log10 probability NaN"},
		{"+Inf back-off", func(tb *tables.Tables) { tb.Levels[0].LogBackoff[2] = float32(math.Inf(1)) }, "log10 back-off +Inf"},
		{"invalid UTF-8", func(tb *tables.Tables) { tb.Vocab[len(tb.Vocab)-1] = "z\xff" }, "not valid UTF-8"},
	}
	for _, c := range tests {
		tb := tinyModel(t)
		c.damage(tb)
		if _, err := Marshal(tb); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: Marshal = %v, want a message with %q", c.name, err, c.want)
		}
	}
	if _, err := Marshal(nil); err == nil {
		t.Error("Marshal(nil) succeeds")
	}
}
