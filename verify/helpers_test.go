package verify

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"strings"
	"testing"

	"ingot/compile/tables"
	"ingot/format"
)

// marshal writes tb in the tables layout of format versions 1 and 2, whose
// columns the damage tests edit in place; marshal3 writes version 3.
func marshal(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := format.MarshalVersion(tb, 2)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func marshal3(t testing.TB, tb *tables.Tables) []byte {
	t.Helper()
	b, err := format.Marshal(tb)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// run verifies data and fails the test when the bytes are unreadable.
func run(t testing.TB, data []byte, opt Options) *Report {
	t.Helper()
	rep, err := Bytes(data, opt)
	if err != nil {
		t.Fatalf("unreadable: %v", err)
	}
	return rep
}

// where returns the bytes of the section of the given kind and order
// inside data (to change in place) and the section's name.
func where(t testing.TB, data []byte, kind format.SectionKind, order int) ([]byte, string) {
	t.Helper()
	count := int(binary.LittleEndian.Uint32(data[12:]))
	for i := range count {
		e := data[64+32*i:]
		if format.SectionKind(binary.LittleEndian.Uint32(e)) == kind && int(binary.LittleEndian.Uint32(e[8:])) == order {
			off, n := binary.LittleEndian.Uint64(e[16:]), binary.LittleEndian.Uint64(e[24:])
			return data[off : off+n], format.Section{Kind: kind, Order: order}.Name()
		}
	}
	t.Fatalf("no section %v of order %d", kind, order)
	return nil, ""
}

// reseal recomputes every section's CRC-32C, the content digest and the
// header checksum (of a directory that fits in data), as spec/FORMAT.md §3 and §5 define them, so that a
// change planted inside a section is caught only by what the bytes mean.
func reseal(data []byte) []byte {
	table := crc32.MakeTable(crc32.Castagnoli)
	le := binary.LittleEndian
	count := int(le.Uint32(data[12:]))
	h := sha256.New()
	for i := range count {
		e := data[64+32*i:]
		off, n := le.Uint64(e[16:]), le.Uint64(e[24:])
		if off > uint64(len(data)) || n > uint64(len(data))-off {
			continue // a damaged entry: leave it for verify to find
		}
		b := data[off : off+n]
		le.PutUint32(e[12:], crc32.Checksum(b, table))
		if le.Uint32(e) != uint32(format.KindSignature) {
			h.Write(e[0:12])
			h.Write(e[24:32])
			h.Write(b)
		}
	}
	copy(data[24:56], h.Sum(nil))
	crc := crc32.Update(crc32.Checksum(data[:60], table), table, data[64:64+32*count])
	le.PutUint32(data[60:], crc)
	return data
}

// statuses returns each check's status, by name.
func statuses(rep *Report) map[string]Status {
	out := map[string]Status{}
	for _, c := range rep.Checks {
		out[c.Name] = c.Status
	}
	return out
}

// problems joins every problem of every check, for messages.
func problems(rep *Report) string {
	var b strings.Builder
	for _, c := range rep.Checks {
		for _, p := range c.Problems {
			fmt.Fprintf(&b, "\n  %s: %s", c.Name, p)
		}
	}
	return b.String()
}
