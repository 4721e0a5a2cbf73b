package format

import (
	"bytes"
	"encoding/binary"
	"errors"
	"testing"
)

// scanAll runs the lenient parser as ingot verify does: the header, then
// the placement rules of the directory when it can be read.
func scanAll(data []byte) (problems []Problem, err error) {
	report := func(p Problem) { problems = append(problems, p) }
	c, readable, err := ScanContainer(data, report)
	if err != nil {
		return nil, err
	}
	if readable {
		c.CheckDirectory(report)
	}
	return problems, nil
}

// Open and ingot verify read the header and directory through one parser:
// for every single-bit flip of the header and the directory (raw, which
// the header checksum catches, and resealed, which leaves the placement
// rules of spec §3.2 to catch it) and every truncation inside them, Open
// refuses the file with exactly the first problem the lenient scan
// reports, or with the same error when the bytes are no model at all; and
// when the scan finds nothing, Open does not fail in the header or the
// directory. Two parsers that drift apart (a rule one of them skips, a
// message one of them words differently) fail it.
func TestOpenStopsAtTheScansFirstProblem(t *testing.T) {
	for _, version := range []int{2, 3} {
		tb := tinyModel(t)
		good, err := MarshalVersion(tb, version)
		if err != nil {
			t.Fatal(err)
		}
		n := int(binary.LittleEndian.Uint32(good[offSectionCount:]))
		end := headerSize + directoryEntry*n
		var cases [][]byte
		for i := range end * 8 {
			raw := bytes.Clone(good)
			raw[i/8] ^= 1 << (i % 8)
			sealed := bytes.Clone(raw)
			if (i/8 < offSectionCount || i/8 >= offSectionCount+4) && (i/8 < offHeaderCRC || i/8 >= headerSize) {
				reseal(sealed)
			}
			cases = append(cases, raw, sealed)
		}
		for cut := range end + 1 {
			cases = append(cases, good[:cut])
		}
		cases = append(cases, append(bytes.Clone(good), make([]byte, 8)...))
		rejected := 0
		for ci, data := range cases {
			problems, scanErr := scanAll(data)
			_, openErr := FromBytes(data)
			var fe *FormatError
			if openErr != nil && !errors.As(openErr, &fe) {
				t.Fatalf("version %d case %d: open error %v is no *FormatError", version, ci, openErr)
			}
			switch {
			case scanErr != nil:
				if openErr == nil || openErr.Error() != scanErr.Error() {
					t.Fatalf("version %d case %d: scan error %q, open error %v", version, ci, scanErr, openErr)
				}
				rejected++
			case len(problems) > 0:
				if openErr == nil {
					t.Fatalf("version %d case %d: scan reports %v, open accepts the file", version, ci, problems[0])
				}
				if fe.Problem() != problems[0] {
					t.Fatalf("version %d case %d: open stops at %v, the scan's first problem is %v", version, ci, fe.Problem(), problems[0])
				}
				rejected++
			case openErr != nil && (fe.Section == "header" || fe.Section == "directory"):
				t.Fatalf("version %d case %d: the scan finds nothing, open refuses the header: %v", version, ci, openErr)
			}
		}
		// Every raw flip outside the magic breaks the header checksum, and
		// every cut is too short: most cases must be refused.
		if rejected < len(cases)/2 {
			t.Fatalf("version %d: only %d of %d damaged headers refused", version, rejected, len(cases))
		}
	}
}

// The lenient scan reports every problem it finds; Open stops at the
// first. Three placement rules of spec §3.2 broken in one file: all three
// come back from the scan, in directory order, and Open names the first.
func TestScanReportsEveryProblem(t *testing.T) {
	b := mustMarshalTables(t, tinyModel(t))
	probs := entryAt(t, b, KindProbabilities, 3)
	binary.LittleEndian.PutUint32(probs[8:], 11) // order 11
	words := entryAt(t, b, KindWordText, 0)
	binary.LittleEndian.PutUint64(words[16:], binary.LittleEndian.Uint64(words[16:])+4) // misaligned
	last := entryAt(t, b, KindLastWords, 2)
	binary.LittleEndian.PutUint32(last, uint32(KindSummary)) // a second summary
	binary.LittleEndian.PutUint32(last[8:], 0)
	reseal(b)
	problems, err := scanAll(b)
	if err != nil {
		t.Fatal(err)
	}
	var msgs []string
	for _, p := range problems {
		msgs = append(msgs, p.Section+": "+p.Msg)
	}
	want := []string{"is not a multiple of 8", "appears twice", "order 11 exceeds 10"}
	if len(problems) < len(want) {
		t.Fatalf("scan reports %q, want at least %d problems", msgs, len(want))
	}
	for _, w := range want {
		found := false
		for _, m := range msgs {
			found = found || bytes.Contains([]byte(m), []byte(w))
		}
		if !found {
			t.Errorf("scan reports %q, none saying %q", msgs, w)
		}
	}
	_, err = FromBytes(b)
	var fe *FormatError
	if !errors.As(err, &fe) || fe.Problem() != problems[0] {
		t.Fatalf("open: %v; want the scan's first problem %v", err, problems[0])
	}
}
