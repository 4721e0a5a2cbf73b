package counts

import (
	"bytes"
	"encoding/binary"
	"io"
	"testing"
)

// blocksOf splits a binary count file into its head (header and word
// list), its blocks (tag, header and frame each) and its end record.
func blocksOf(t *testing.T, data []byte) (head []byte, blocks [][]byte, end []byte) {
	t.Helper()
	le := binary.LittleEndian
	at := headerSize + int(le.Uint32(data[24:]))
	head = data[:at]
	for data[at] != 0 {
		n := blockHeaderSize + int(le.Uint32(data[at+9:]))
		blocks = append(blocks, data[at:at+n])
		at += n
	}
	return head, blocks, data[at:]
}

// readerError returns the error a Reader alone meets reading data to its
// end.
func readerError(t *testing.T, data []byte) error {
	t.Helper()
	r, err := NewReader(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, _, err := r.Next(); err == io.EOF {
			return nil
		} else if err != nil {
			return err
		}
	}
}

// Load reads a file's blocks ahead of decoding them, on another
// goroutine (Reader.ReadAhead): a damaged file is refused with the error
// a Reader alone reports, the same check at the same offset, whatever the
// damage and wherever the goroutine stands. Damage after the first block,
// which the merge reads before the goroutine starts: blocks out of order,
// a flipped byte, a file cut short, an end record lost or followed by a
// stray byte.
func TestLoadReadsAheadAsTheReaderReads(t *testing.T) {
	c := linkCounts(t)
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	data := bin.Bytes()
	head, blocks, end := blocksOf(t, data)
	if len(blocks) < 4 {
		t.Fatalf("%d blocks, want one per order at least", len(blocks))
	}
	join := func(parts ...[]byte) []byte { return bytes.Join(parts, nil) }
	last := len(blocks) - 1
	// A copy of the last block of order 3 after the order-4 blocks.
	lower := last
	for blocks[lower][0] == blocks[last][0] {
		lower--
	}
	again := append(append([][]byte{head}, blocks...), blocks[lower], end)
	flipped := bytes.Clone(data)
	flipped[len(data)-len(end)-len(blocks[last])/2] ^= 0x10
	cases := map[string][]byte{
		"blocks out of order":  join(again...),
		"byte flipped":         flipped,
		"cut short":            data[:len(data)-len(end)-len(blocks[last])/3],
		"end record lost":      data[:len(data)-len(end)],
		"end record cut short": data[:len(data)-2],
		"byte after the end":   join(data, []byte{0}),
	}
	for name, bad := range cases {
		want := readerError(t, bad)
		if want == nil {
			t.Fatalf("%s: a Reader accepts it", name)
		}
		for range 3 {
			_, err := Load(4, []Source{{"c.bin", bytes.NewReader(bad)}})
			if err == nil || err.Error() != "c.bin: "+want.Error() {
				t.Fatalf("%s: Load says %v, a Reader %v", name, err, want)
			}
		}
	}
	// The file itself reads as it did.
	got, err := Load(4, []Source{{"c.bin", bytes.NewReader(data)}})
	if err != nil || textOf(t, got) != textOf(t, c) {
		t.Fatalf("the file read ahead: %v", err)
	}
}
