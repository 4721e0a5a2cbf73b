package counts

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math/bits"
	"runtime"
	"slices"
	"strings"
	"testing"

	"ingot/compile/input"
)

// countBytes runs Count over data and fails the test on an error.
func countBytes(t *testing.T, opt Options, data []byte) ([]byte, *Report) {
	t.Helper()
	if opt.Memory > 0 {
		opt.TempDir = t.TempDir()
	}
	var out bytes.Buffer
	rep, err := Count(context.Background(), opt, []Input{{"gen", bytes.NewReader(data)}}, &out)
	if err != nil {
		t.Fatal(err)
	}
	return out.Bytes(), rep
}

// Counting on every core writes the same bytes as counting on one: Count
// with its default worker count under GOMAXPROCS 1 and 2, on text long
// enough for many chunks (each worker then counts every other block of
// sentences, in its own table).
func TestCountSameBytesForAnyGOMAXPROCS(t *testing.T) {
	data := generated(t, 30000, 3000, 11) // about 2.4 MiB: three chunks
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	var want []byte
	for _, procs := range []int{1, 2} {
		runtime.GOMAXPROCS(procs)
		got, _ := countBytes(t, Options{Order: 3}, data)
		if want == nil {
			want = got
		} else if !bytes.Equal(got, want) {
			t.Fatalf("GOMAXPROCS=%d writes %d bytes, GOMAXPROCS=1 %d, not the same", procs, len(got), len(want))
		}
	}
	if ref := inMemory(t, 3, data, 1, nil, false); !bytes.Equal(ref, want) {
		t.Fatal("Count differs from the in-memory Counter")
	}
}

// Sentences far longer than the table (1024 records, the least a budget
// gives) make it spill in the middle of a sentence, again and again: the
// n-grams that cross each spill are keyed afresh from the words before it,
// and the counts are those of the in-memory Counter.
func TestCountSpillsInsideLongSentences(t *testing.T) {
	var b strings.Builder
	for s := 0; s < 6; s++ {
		for i := 0; i < 3000; i++ {
			fmt.Fprintf(&b, "w%d ", (i*i+s*7)%5000)
		}
		b.WriteString("\nshort line\n")
	}
	data := []byte(b.String())
	for _, order := range []int{2, 3, 5} {
		want := inMemory(t, order, data, 1, nil, false)
		got, rep := countBytes(t, Options{Order: order, Workers: 1, Memory: 1 << 10}, data)
		if !bytes.Equal(got, want) {
			t.Fatalf("order %d: output differs from the in-memory counter", order)
		}
		if rep.Runs < 10 {
			t.Errorf("order %d: only %d runs", order, rep.Runs)
		}
	}
}

// Counts too large for the bits an entry gives them in the sorted table
// (2^b-1 or more, b the bit length of the table's size) are kept aside and
// come back in their place: the same few sentences, repeated.
func TestCountLargeCountsInASmallTable(t *testing.T) {
	data := []byte(strings.Repeat("go on\ngo\non go on\n", 3000))
	for _, mem := range []int64{0, 1 << 10} {
		want := inMemory(t, 3, data, 1, nil, true)
		got, _ := countBytes(t, Options{Order: 3, Workers: 2, Memory: mem, Text: true}, data)
		if !bytes.Equal(got, want) {
			t.Fatalf("memory %d: got\n%s\nwant\n%s", mem, got, want)
		}
		if !strings.Contains(string(got), "9000\t</s>\n") {
			t.Fatalf("memory %d: no count of 9000 for </s>:\n%s", mem, got)
		}
	}
}

// A sorted entry packs a prefix position, a word rank and a record or
// count; setWords keeps the table small enough for all three to fit 64
// bits, whatever the vocabulary.
func TestTableLimitKeepsSortKeysIn64Bits(t *testing.T) {
	for _, v := range []int{3, 1000, 1<<15 - 1, 1 << 15, 1<<16 - 1, 1 << 16, 400000, 1 << 24, 1<<32 - 1} {
		tb := &gramHash{maxCap: unlimited - 1}
		tb.setWords(v)
		if n := bits.Len(uint(tb.limit)); bits.Len(uint(v))+2*n > 64 {
			t.Errorf("%d words: a limit of %d records needs %d bits", v, tb.limit, bits.Len(uint(v))+2*n)
		}
		if tb.limit < 1<<15 {
			t.Errorf("%d words: limit %d", v, tb.limit)
		}
	}
	tb := &gramHash{maxCap: 5000}
	if tb.setWords(10); tb.limit != 5000 {
		t.Errorf("a small vocabulary lowered the budget's limit to %d", tb.limit)
	}
}

// Only the first chunk of a file may start with a byte-order mark: one at
// the start of a later chunk (a line starting exactly at a chunk boundary)
// is inside the text, an error naming its line, as it is anywhere else.
func TestCountByteOrderMarkAtAChunkBoundary(t *testing.T) {
	line := strings.Repeat("x", 1023) + "\n"
	data := strings.Repeat(line, chunkSize/len(line)) + "\ufeffy\n"
	_, err := Count(context.Background(), Options{Order: 2, Workers: 1}, []Input{{"f.txt", strings.NewReader(data)}}, io.Discard)
	want := fmt.Sprintf("f.txt:%d: byte-order mark", chunkSize/len(line)+1)
	if err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Fatalf("got %v, want %s...", err, want)
	}
}

// An endless line (a decompression bomb, say) is refused once it passes
// the line-length cap, having read little more than the cap.
func TestCountStopsReadingAnEndlessLine(t *testing.T) {
	old := input.SetMaxLine(1 << 20)
	defer input.SetMaxLine(old)
	r := &endless{left: 64 << 20}
	_, err := Count(context.Background(), Options{Order: 2, Workers: 1}, []Input{{"bomb", r}}, io.Discard)
	if err == nil || !strings.HasPrefix(err.Error(), "bomb:1: line longer than 1048576 bytes") {
		t.Fatalf("got %v", err)
	}
	if read := 64<<20 - r.left; read > 4<<20 {
		t.Errorf("read %d bytes of one line under a cap of 1 MiB", read)
	}
}

type endless struct{ left int }

func (e *endless) Read(p []byte) (int, error) {
	if e.left <= 0 {
		return 0, errors.New("read too far")
	}
	n := min(len(p), e.left)
	for i := range p[:n] {
		p[i] = 'a'
	}
	e.left -= n
	return n, nil
}

// A table's stream maps its ids through the merge's remap entry by entry:
// what it yields with a remap is what it yields without one, mapped. The
// n-grams share prefixes, so the stream reuses the words of the entry
// before (sortedEntries.gram), which the remap must leave as they were.
func TestTableStreamRemap(t *testing.T) {
	words := []string{"<s>", "</s>", "<unk>", "c", "a", "b"}
	grams := [][]uint32{{0, 4, 5, 3}, {0, 4, 5, 1}, {0, 4, 3, 1}, {4, 5, 3}, {4, 5, 1}, {5, 3, 1}, {3}, {4}, {5}, {1}}
	read := func(remap []uint32) [][]uint32 {
		s := newSorter(4, &words, 0, "", "t", false)
		for i, g := range grams {
			if err := s.add(g, uint64(i+1)); err != nil {
				t.Fatal(err)
			}
		}
		_, rank := s.rank(len(words))
		st := newTableStream(s.table.sortEntries(rank, 4))
		st.setRemap(remap)
		var got [][]uint32
		for {
			g, _, err := st.next()
			if err == io.EOF {
				return got
			}
			got = append(got, slices.Clone(g))
		}
	}
	remap := []uint32{1, 3, 4, 6, 8, 9} // monotone, as the merge's are
	plain, mapped := read(nil), read(remap)
	if len(plain) != len(grams) {
		t.Fatalf("%d entries, want %d", len(plain), len(grams))
	}
	for i, g := range plain {
		for j, id := range g {
			g[j] = remap[id]
		}
		if !slices.Equal(g, mapped[i]) {
			t.Fatalf("entry %d: %v with the remap, %v mapped", i, mapped[i], g)
		}
	}
}

// failAfter accepts n bytes, fails the write that would pass them, and
// accepts every write after it: an error that only the failed write tells.
type failAfter struct {
	n      int
	failed bool
}

func (f *failAfter) Write(p []byte) (int, error) {
	if !f.failed && len(p) > f.n {
		f.failed = true
		return 0, errors.New("disk full")
	}
	f.n -= len(p)
	return len(p), nil
}

// A write that fails while several goroutines compress the output's
// blocks (blockPipe) is the error Count returns, at any point of the file.
func TestCountReportsAFailedWriteWithSeveralWorkers(t *testing.T) {
	data := generated(t, 3000, 3000, 4)
	full, _ := countBytes(t, Options{Order: 4, Workers: 2}, data)
	for _, n := range []int{0, 100, len(full) / 2, len(full) - 1} {
		_, err := Count(context.Background(), Options{Order: 4, Workers: 2}, []Input{{"gen", bytes.NewReader(data)}}, &failAfter{n: n})
		if err == nil || !strings.Contains(err.Error(), "disk full") {
			t.Errorf("failing after %d of %d bytes: got %v", n, len(full), err)
		}
	}
}
