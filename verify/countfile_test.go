package verify

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/counts"
	"ingot/compile/fixture"
)

// sotuCounts writes the order-3 counts of 300 sentences of the State of
// the Union corpus (testdata/sotu, CC0) and returns the file's bytes.
func sotuCounts(t *testing.T) []byte {
	t.Helper()
	train, _ := fixture.SOTU(t, 300)
	var out bytes.Buffer
	in := counts.Input{Name: "sotu", R: strings.NewReader(strings.Join(train, "\n") + "\n")}
	if _, err := counts.Count(context.Background(), counts.Options{Order: 3}, []counts.Input{in}, &out); err != nil {
		t.Fatal(err)
	}
	return out.Bytes()
}

func countFile(t *testing.T, b []byte) (*CountReport, error) {
	t.Helper()
	p := filepath.Join(t.TempDir(), "c.bin")
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
	return CountFile(p)
}

// An intact count file passes both checks and the report gives the end
// record's totals, which Describe (header and end record only) gives too.
func TestCountFileIntact(t *testing.T) {
	b := sotuCounts(t)
	rep, err := countFile(t, b)
	if err != nil || !rep.OK() {
		t.Fatalf("intact: %+v, %v", rep, err)
	}
	p := filepath.Join(t.TempDir(), "d.bin")
	os.WriteFile(p, b, 0o644)
	info, err := counts.Describe(p)
	if err != nil {
		t.Fatal(err)
	}
	f := rep.File
	if f.Order != 3 || f.VocabularySize != info.Words || f.Blocks != info.Totals.Blocks || f.FileBytes != int64(len(b)) ||
		len(f.NGramsPerOrder) != 3 || f.NGramsPerOrder[2] != info.Totals.Entries[2] || f.CountSumPerOrder[0] != info.Totals.Sums[0] {
		t.Errorf("report %+v, end record %+v", rep, info)
	}
}

// Every single-byte change and every truncation of the file is a failed
// check naming an offset inside the file, never a pass, an error or a
// crash: CRC-32C detects every burst of up to 32 bits (Castagnoli, Bräuer
// and Herrmann, IEEE Trans. Commun. 41(6), 1993), and the checksums cover
// the header and every block; the end record is checked against the
// blocks' totals.
func TestCountFileEveryByteChecked(t *testing.T) {
	b := sotuCounts(t)
	step := max(1, len(b)/400)
	for i := 0; i < len(b); i += step {
		for _, edit := range []string{"flip", "cut"} {
			d := append([]byte(nil), b...)
			if edit == "flip" {
				d[i] ^= 0x10
			} else {
				d = d[:i]
			}
			rep, err := countFile(t, d)
			if err != nil {
				t.Fatalf("%s at %d of %d: error %v, want a failed check", edit, i, len(b), err)
			}
			if rep.OK() {
				t.Fatalf("%s at %d of %d: passed", edit, i, len(b))
			}
			var c Check
			for _, c = range rep.Checks {
				if c.Status == Fail {
					break
				}
			}
			if len(c.Problems) != 1 || c.Problems[0].Offset < 0 || c.Problems[0].Offset > int64(len(b)) {
				t.Fatalf("%s at %d: problems %+v", edit, i, c.Problems)
			}
		}
	}
}

// A file that is not there is an error, not a report.
func TestCountFileMissing(t *testing.T) {
	if _, err := CountFile(filepath.Join(t.TempDir(), "none.bin")); err == nil {
		t.Error("a missing file gave a report")
	}
}
