package format

import (
	"bytes"
	"encoding/binary"
	"math/rand/v2"
	"path/filepath"
	"testing"
)

// TestSpillReadsBackWhatWasWritten writes pieces of every size to a
// spill (values, short pieces, pieces crossing its buffer's end and
// pieces longer than the buffer, as the stream writer's sections and
// copied bit streams are) and reads them back, whole (each) and as
// 64-bit values (cursor), after a patch.
func TestSpillReadsBackWhatWasWritten(t *testing.T) {
	s := newSpill(filepath.Join(t.TempDir(), "s"))
	defer s.release()
	var want []byte
	rng := rand.New(rand.NewPCG(3, 4))
	for len(want) < 5*spillBuffer {
		switch rng.IntN(4) {
		case 0:
			x := rng.Uint64()
			want = binary.LittleEndian.AppendUint64(want, x)
			if err := s.put64(x); err != nil {
				t.Fatal(err)
			}
		case 1:
			x := rng.Uint32()
			want = binary.LittleEndian.AppendUint32(want, x)
			if err := s.put32(x); err != nil {
				t.Fatal(err)
			}
		default:
			n := rng.IntN(2 * spillBuffer)
			if rng.IntN(2) == 0 {
				n = rng.IntN(40)
			}
			b := make([]byte, n)
			for i := range b {
				b[i] = byte(rng.Uint32())
			}
			want = append(want, b...)
			if err := s.write(b); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := s.patch(8, []byte{1, 2, 3}); err != nil {
		t.Fatal(err)
	}
	copy(want[8:], []byte{1, 2, 3})
	if s.n != int64(len(want)) {
		t.Fatalf("spill counts %d bytes, %d written", s.n, len(want))
	}
	var got []byte
	if err := s.each(func(b []byte) error { got = append(got, b...); return nil }); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, want) {
		t.Fatalf("read back %d bytes differing from the %d written", len(got), len(want))
	}
	c, err := s.cursor()
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i+8 <= len(want); i += 8 {
		x, err := c.next()
		if err != nil {
			t.Fatal(err)
		}
		if w := binary.LittleEndian.Uint64(want[i:]); x != w {
			t.Fatalf("value %d: %#x, want %#x", i/8, x, w)
		}
	}
}
