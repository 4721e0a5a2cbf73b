package counts

import (
	"bytes"
	"context"
	"errors"
	"io"
	"slices"
	"testing"
)

// A Tail's reader, reading the top order while SpoolTail writes it, reads
// every entry of it, in order, as the complete file holds them (several
// spool buffers of them, so that it waits for writes); and where the
// spool stops short (a damaged count file), it ends with an error, not
// with a truncated order.
func TestTailReadsTheOrderAsItIsSpooled(t *testing.T) {
	c := counted(t, 4, 8000, 5)
	data := binaryOf(t, c)
	type entry struct {
		ids []uint32
		n   uint64
	}
	read := func(next func() ([]uint32, uint64, error)) ([]entry, error) {
		var out []entry
		for {
			g, n, err := next()
			if err == io.EOF {
				return out, nil
			}
			if err != nil {
				return out, err
			}
			out = append(out, entry{slices.Clone(g), n})
		}
	}
	spool := func(data []byte) (*Spooled, []entry, error, error) {
		var got []entry
		var rerr error
		finished := make(chan struct{})
		started := func(tl *Tail) {
			if tl.Order() != 4 {
				t.Errorf("tail of order %d, want 4", tl.Order())
			}
			r, err := tl.Open(context.Background())
			if err != nil {
				t.Fatal(err)
			}
			go func() {
				defer close(finished)
				defer r.Close()
				got, rerr = read(r.Next)
			}()
		}
		sp, err := SpoolTail(4, []Source{{Name: "c.bin", R: bytes.NewReader(data)}}, t.TempDir(), func(*Spooled) {}, started)
		<-finished
		return sp, got, rerr, err
	}
	sp, got, rerr, err := spool(data)
	if err != nil || rerr != nil {
		t.Fatal(err, rerr)
	}
	if sp.Entries[3]*(4*4+8) < 2*spoolBuffer {
		t.Fatalf("order 4 holds %d entries, too few to fill two spool buffers", sp.Entries[3])
	}
	f, err := sp.Open(4)
	if err != nil {
		t.Fatal(err)
	}
	want, err := read(f.Next)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(want) || !slices.EqualFunc(got, want, func(a, b entry) bool { return slices.Equal(a.ids, b.ids) && a.n == b.n }) {
		t.Fatalf("the tail read %d entries, the spooled order holds %d, or they differ", len(got), len(want))
	}
	// The last block damaged: the spool fails within order 4.
	bad := bytes.Clone(data)
	bad[len(bad)-40] ^= 0x55
	_, got, rerr, err = spool(bad)
	if err == nil {
		t.Fatal("damaged counts spooled")
	}
	if !errors.Is(rerr, errSpoolStopped) {
		t.Errorf("the tail's reader read %d entries and ended with %v, want %v", len(got), rerr, errSpoolStopped)
	}
}
