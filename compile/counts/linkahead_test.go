package counts

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"

	"ingot/compile/tables"
)

// linkCounts returns the order-4 counts of generated text long enough
// that orders 2 to 4 each take several runs of entries (aheadBatch each),
// which Load links on several goroutines.
func linkCounts(t *testing.T) *Counts {
	t.Helper()
	bin, _ := countBytes(t, Options{Order: 4}, generated(t, 4000, 2000, 5))
	c, err := Load(4, []Source{{"c.bin", bytes.NewReader(bin)}})
	if err != nil {
		t.Fatal(err)
	}
	for k := 2; k <= 4; k++ {
		if c.Len(k) < 3*aheadBatch {
			t.Fatalf("order %d holds %d entries, fewer than three runs", k, c.Len(k))
		}
	}
	return c
}

// The links Load finds while it reads a count file, order by order on
// GOMAXPROCS goroutines in runs of entries, are those of tables.Link (the
// definition of parent, suffix and child start, checked against search in
// package tables), on one core and on several.
func TestLoadLinksAsLinkDoes(t *testing.T) {
	c := linkCounts(t)
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	words := make([][]uint32, 4)
	for k := 2; k <= 4; k++ {
		words[k-1] = c.Levels[k-1].Words
	}
	want, err := tables.Link(len(c.Vocab), words)
	if err != nil {
		t.Fatal(err)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, procs := range []int{1, 2, 5} {
		runtime.GOMAXPROCS(procs)
		got, err := Load(4, []Source{{"c.bin", bytes.NewReader(bin.Bytes())}})
		if err != nil {
			t.Fatal(err)
		}
		if diff := cmp.Diff(want, got.Links); diff != "" {
			t.Fatalf("GOMAXPROCS %d: links differ from tables.Link (-want +got):\n%s", procs, diff)
		}
	}
}

// An entry whose prefix or suffix has no count is reported, whatever the
// run of entries that holds it and however many goroutines link them: of
// all the entries that lack one, the first in the file, with its entry
// number. Removed here: order-3 entries late and early in their order, so
// that the order-4 entries that need them fall in different runs.
func TestLoadReportsTheFirstUnlinkedEntry(t *testing.T) {
	c := linkCounts(t)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	n3 := c.Len(3)
	for _, removed := range [][]int{{n3 * 9 / 10}, {n3 * 9 / 10, n3 / 5}, {n3 / 2, n3/2 + 1}} {
		cc := *c
		cc.Levels = append([]Level(nil), c.Levels...)
		cc.Levels[2].Counts = append([]uint64(nil), c.Levels[2].Counts...)
		gone := map[string]bool{}
		for _, i := range removed {
			cc.Levels[2].Counts[i] = 0 // not written
			gone[fmt.Sprint(c.Gram(3, i))] = true
		}
		// The first order-4 entry that needs a removed one, and its
		// number in the file (the counted unigrams, orders 2 and 3 less
		// the removed, then order 4).
		before := c.Len(2) + n3 - len(removed)
		for _, n := range c.Levels[0].Counts {
			if n > 0 {
				before++
			}
		}
		var want string
		for j := 0; j < c.Len(4); j++ {
			g := c.Gram(4, j)
			miss, sub := "", g[:3]
			if gone[fmt.Sprint(sub)] {
				miss = "prefix"
			} else if sub = g[1:]; gone[fmt.Sprint(sub)] {
				miss = "suffix"
			}
			if miss != "" {
				want = fmt.Sprintf("c.bin: entry %d (block at offset %d)", before+j+1, blockOffset(t, cc, before+j+1))
				want += fmt.Sprintf("|%q has no count for its %s %q", joinWords(c.Vocab, g), miss, joinWords(c.Vocab, sub))
				break
			}
		}
		if want == "" {
			t.Fatal("no order-4 entry needs the removed ones")
		}
		var bin bytes.Buffer
		if err := cc.WriteBinary(&bin); err != nil {
			t.Fatal(err)
		}
		for _, procs := range []int{1, 2, 5} {
			runtime.GOMAXPROCS(procs)
			_, err := Load(4, []Source{{"c.bin", bytes.NewReader(bin.Bytes())}})
			for _, part := range strings.Split(want, "|") {
				if err == nil || !strings.Contains(err.Error(), part) {
					t.Fatalf("removed %v, GOMAXPROCS %d: got %v, want %s", removed, procs, err, part)
				}
			}
		}
	}
}

// Load reads the end record of a count file it can read at an offset (an
// *os.File) to make room for each order at once: the counts and links are
// those of the same bytes read as a stream. An end record that announces
// far more entries than the file can hold (2^40 per order here) costs no
// more than 16 entries per byte of the file, and the Reader still refuses
// it at the end.
func TestLoadAnnouncedEntries(t *testing.T) {
	c := linkCounts(t)
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "c.bin")
	if err := os.WriteFile(path, bin.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if got := announced(f, 4); len(got) != 4 || got[3] != uint64(c.Len(4)) {
		t.Fatalf("announced %v, want order 4's %d entries", got, c.Len(4))
	}
	got, err := Load(4, []Source{{"c.bin", f}})
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(c, got); diff != "" {
		t.Fatalf("loaded from a file (-stream +file):\n%s", diff)
	}
	// The end record claims 2^40 entries per order.
	b := bytes.Clone(bin.Bytes())
	n := endSize(4)
	end := b[len(b)-n:]
	for k := range 4 {
		binary.LittleEndian.PutUint64(end[9+16*k:], 1<<40)
	}
	binary.LittleEndian.PutUint32(end[n-4:], crc32.Checksum(end[:n-4], castagnoli))
	if err := os.WriteFile(path, b, 0o644); err != nil {
		t.Fatal(err)
	}
	g, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer g.Close()
	if got := announced(g, 4); got[3] != uint64(len(b))*16 {
		t.Errorf("announced %v, want the cap %d", got, len(b)*16)
	}
	if _, err := Load(4, []Source{{"c.bin", g}}); err == nil {
		t.Error("a false end record accepted")
	}
}

// blockOffset returns the offset of the block that holds entry index
// (counted from 1) of c's binary count file, as a Reader finds it.
func blockOffset(t *testing.T, c Counts, index int) int64 {
	t.Helper()
	var bin bytes.Buffer
	if err := c.WriteBinary(&bin); err != nil {
		t.Fatal(err)
	}
	r, err := NewReader(&bin)
	if err != nil {
		t.Fatal(err)
	}
	for range index {
		if _, _, err := r.Next(); err != nil {
			t.Fatal(err)
		}
	}
	return r.Offset()
}
