package counts

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/google/go-cmp/cmp"

	"ingot/compile/corpus"
)

// counted returns the counts of the generated text: Zipf words with Markov
// dependencies, so every order has shared prefixes and repeated n-grams.
func counted(t testing.TB, order, sentences int, seed uint64) *Counts {
	t.Helper()
	var text bytes.Buffer
	if err := corpus.Generate(&text, seed, sentences, 300); err != nil {
		t.Fatal(err)
	}
	c, err := NewCounter(order)
	if err != nil {
		t.Fatal(err)
	}
	if err := c.AddText("gen", &text); err != nil {
		t.Fatal(err)
	}
	return c.Counts(1)
}

func binaryOf(t testing.TB, c *Counts) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := c.WriteBinary(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func textOf(t testing.TB, c *Counts) string {
	t.Helper()
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// A binary count file reads back to exactly the counts written, and its
// end record holds the entries and count sums per order.
func TestBinaryRoundTrip(t *testing.T) {
	c := counted(t, 4, 3000, 1)
	data := binaryOf(t, c)
	back, err := Load(4, []Source{{Name: "c.bin", R: bytes.NewReader(data)}})
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(textOf(t, c), textOf(t, back)); diff != "" {
		t.Fatalf("round trip differs (-want +got):\n%s", diff)
	}
	r, err := NewReader(bytes.NewReader(data))
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, _, err := r.Next(); err == io.EOF {
			break
		} else if err != nil {
			t.Fatal(err)
		}
	}
	end, err := ReadEnd(bytes.NewReader(data), int64(len(data)), 4)
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(r.Totals(), end); diff != "" {
		t.Errorf("end record differs from what was read:\n%s", diff)
	}
	// The sum of the unigram counts is the number of predicted tokens:
	// every word and one </s> per sentence (the counting rules).
	var want uint64
	for _, n := range c.Levels[0].Counts {
		want += n
	}
	if end.Sums[0] != want {
		t.Errorf("unigram sum %d, want %d", end.Sums[0], want)
	}
	if end.Blocks < 4 {
		t.Errorf("%d blocks for 4 orders", end.Blocks)
	}
}

// Shards split any way, mixing binary and text files, merge to the counts
// of the whole text: the summing rule of the count files.
func TestMixedShardsMergeToTheWhole(t *testing.T) {
	whole := counted(t, 3, 2000, 2)
	var a, b, cc bytes.Buffer
	corpus.Generate(&a, 2, 2000, 300)
	lines := strings.SplitAfter(a.String(), "\n")
	part := func(from, to int) *Counts {
		c, _ := NewCounter(3)
		c.AddText("p", strings.NewReader(strings.Join(lines[from:to], "")))
		return c.Counts(1)
	}
	p1, p2, p3 := part(0, 700), part(700, 1500), part(1500, len(lines))
	b.Write(binaryOf(t, p1))
	cc.WriteString(textOf(t, p2))
	got, err := Load(3, []Source{
		{Name: "p3.txt", R: strings.NewReader(textOf(t, p3))},
		{Name: "p1.bin", R: &b},
		{Name: "p2.txt", R: &cc},
	})
	if err != nil {
		t.Fatal(err)
	}
	if diff := cmp.Diff(textOf(t, whole), textOf(t, got)); diff != "" {
		t.Fatalf("merged shards differ from the whole (-want +got):\n%s", diff)
	}
	// Two binary shards holding the same n-grams sum them.
	twice, err := Load(3, []Source{{Name: "x", R: bytes.NewReader(binaryOf(t, whole))}, {Name: "y", R: bytes.NewReader(binaryOf(t, whole))}})
	if err != nil {
		t.Fatal(err)
	}
	for k := range whole.Levels {
		for i, n := range whole.Levels[k].Counts {
			if twice.Levels[k].Counts[i] != 2*n {
				t.Fatalf("order %d entry %d: %d, want %d", k+1, i, twice.Levels[k].Counts[i], 2*n)
			}
		}
	}
}

// Every single flipped byte and every truncation of a binary count file is
// reported as an error, never read as other counts.
func TestBinaryCorruptionIsDetected(t *testing.T) {
	c := counted(t, 3, 15, 3)
	data := binaryOf(t, c)
	for i := range data {
		for _, x := range []byte{0x01, 0x80} {
			bad := bytes.Clone(data)
			bad[i] ^= x
			if _, err := Load(3, []Source{{Name: "f", R: bytes.NewReader(bad)}}); err == nil {
				t.Fatalf("byte %d of %d xor %#x: no error", i, len(data), x)
			}
		}
	}
	for n := 0; n < len(data); n++ {
		if _, err := Load(3, []Source{{Name: "f", R: bytes.NewReader(data[:n])}}); err == nil {
			t.Fatalf("truncated to %d of %d bytes: no error", n, len(data))
		}
	}
	extra := append(bytes.Clone(data), 0)
	_, err := Load(3, []Source{{Name: "f", R: bytes.NewReader(extra)}})
	var fe *FormatError
	if !errors.As(err, &fe) || !strings.HasPrefix(err.Error(), "f: offset ") {
		t.Errorf("trailing byte: %v", err)
	}
}

// The writer refers the caller to the rule each bad entry breaks.
func TestWriterRejectsBadEntries(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "a", "b"}
	for _, tc := range []struct {
		name    string
		entries [][]uint32
		want    string
	}{
		{"out of order", [][]uint32{{4}, {3}}, `"a" does not come after "b"`},
		{"duplicate", [][]uint32{{3}, {3}}, `"a" does not come after "a"`},
		{"order down", [][]uint32{{3, 4}, {4}}, `"b" does not come after "a b"`},
		{"too long", [][]uint32{{3, 3, 3}}, "3-gram in a file of orders 1..2"},
		{"bad id", [][]uint32{{5}}, "word id 5 outside the word list of 5"},
		{"start unigram", [][]uint32{{1}}, "unigram <s> is never counted"},
		{"end inside", [][]uint32{{0, 3}}, `misplaced marker in "</s> a"`},
		// After a first word shared with the entry before, the rest is
		// checked as carefully.
		{"bad id after a shared word", [][]uint32{{3, 4}, {3, 5}}, "word id 5 outside the word list of 5"},
		{"start after a shared word", [][]uint32{{3, 0}, {3, 1}}, `misplaced marker in "a <s>"`},
		{"down after a shared word", [][]uint32{{3, 4}, {3, 3}}, `"a a" does not come after "a b"`},
	} {
		w, err := NewWriter(io.Discard, Header{Order: 2, Vocab: vocab})
		if err != nil {
			t.Fatal(err)
		}
		for _, e := range tc.entries {
			err = w.Add(e, 1)
			if err != nil {
				break
			}
		}
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: got %v, want %q", tc.name, err, tc.want)
		}
	}
	if _, err := NewWriter(io.Discard, Header{Order: 2, Vocab: []string{"b", "a"}}); err == nil {
		t.Error("unsorted word list accepted")
	}
	if _, err := NewWriter(io.Discard, Header{Order: 2, Vocab: []string{"a b"}}); err == nil {
		t.Error("word with a space accepted")
	}
}

// Each entry of a block is coded as the words it shares with the entry
// before, the rest of its words and its count, all uvarints
// (spec/COUNTS.md, section 3.5): the writer shares the longest prefix it
// can (at most k-1 words), and nothing across a change of order, so that
// the file's bytes stay what they were.
func TestWriterSharesTheLongestPrefix(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "a", "b", "c"}
	w, err := NewWriter(io.Discard, Header{Order: 3, Vocab: vocab})
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range [][]uint32{{3, 4, 5}, {3, 5, 0}, {3, 5, 4}, {4, 3, 0}} {
		if err := w.Add(e, 7); err != nil {
			t.Fatal(err)
		}
	}
	want := []byte{0, 3, 4, 5, 7, 1, 5, 0, 7, 2, 4, 7, 0, 4, 3, 0, 7}
	if !bytes.Equal(w.raw, want) {
		t.Fatalf("block codes %v, want %v", w.raw, want)
	}
	if err := w.Add([]uint32{4, 3, 0, 0}[:3], 1); err == nil {
		t.Fatal("a duplicate entry accepted")
	}
}

// Shards written independently, each with its own word list, by the
// streaming Writer (as a distributed job would) merge like text shards.
func TestIndependentWritersMerge(t *testing.T) {
	shard := func(vocab []string, entries [][]uint32, counts []uint64) []byte {
		var b bytes.Buffer
		w, err := NewWriter(&b, Header{Order: 2, Vocab: vocab})
		if err != nil {
			t.Fatal(err)
		}
		for i, e := range entries {
			if err := w.Add(e, counts[i]); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Close(); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	s1 := shard([]string{"</s>", "<s>", "fen"}, [][]uint32{{0}, {2}, {1, 2}}, []uint64{1, 2, 2})
	s2 := shard([]string{"</s>", "fen", "heron"}, [][]uint32{{0}, {2}, {1, 0}, {1, 2}}, []uint64{1, 1, 1, 1})
	s3 := "1\t<s> heron\n1\theron </s>\n"
	got, err := Load(2, []Source{{"s1", bytes.NewReader(s1)}, {"s2", bytes.NewReader(s2)}, {"s3", strings.NewReader(s3)}})
	if err != nil {
		t.Fatal(err)
	}
	want := "2\t</s>\n2\tfen\n1\theron\n2\t<s> fen\n1\t<s> heron\n1\tfen </s>\n1\tfen heron\n1\theron </s>\n"
	if diff := cmp.Diff(want, textOf(t, got)); diff != "" {
		t.Errorf("(-want +got):\n%s", diff)
	}
	// A missing prefix is reported at the binary entry that needs it.
	s4 := shard([]string{"a", "b"}, [][]uint32{{0}, {1, 0}}, []uint64{1, 1})
	_, err = Load(2, []Source{{"s4.bin", bytes.NewReader(s4)}})
	if err == nil || !strings.Contains(err.Error(), `s4.bin: entry 2 (block at offset`) || !strings.Contains(err.Error(), `"b a" has no count for its prefix "b"`) {
		t.Errorf("missing prefix: %v", err)
	}
}

// A missing prefix early in a large file stops the load (the goroutine
// that reads ahead stops with it) and names the entry that lacks it.
func TestLoadStopsAtAMissingPrefix(t *testing.T) {
	var vocab []string
	for i := range 200 {
		vocab = append(vocab, fmt.Sprintf("w%03d", i))
	}
	var b bytes.Buffer
	w, err := NewWriter(&b, Header{Order: 2, Vocab: vocab})
	if err != nil {
		t.Fatal(err)
	}
	for i := 1; i < len(vocab); i++ { // w000 has no count
		if err := w.Add([]uint32{uint32(i)}, 1); err != nil {
			t.Fatal(err)
		}
	}
	for i := range vocab {
		for j := range vocab {
			if err := w.Add([]uint32{uint32(i), uint32(j)}, 1); err != nil {
				t.Fatal(err)
			}
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	before := runtime.NumGoroutine()
	_, err = Load(2, []Source{{"big.bin", bytes.NewReader(b.Bytes())}})
	want := fmt.Sprintf(`big.bin: entry %d (block at offset`, len(vocab))
	if err == nil || !strings.Contains(err.Error(), want) || !strings.Contains(err.Error(), `"w000 w000" has no count for its prefix "w000"`) {
		t.Errorf("got %v, want %s...", err, want)
	}
	// A goroutine that has stopped may take a moment to be gone.
	after := runtime.NumGoroutine()
	for wait := 0; after > before && wait < 200; wait++ {
		time.Sleep(10 * time.Millisecond)
		after = runtime.NumGoroutine()
	}
	if after > before {
		t.Errorf("%d goroutines after the load, %d before", after, before)
	}
}

// Spool, which decodes on a goroutine of its own, finds every corruption
// Load finds and names the file, and the offset where the layout breaks.
func TestSpoolCorruptionNamesFile(t *testing.T) {
	c := counted(t, 3, 15, 3)
	data := binaryOf(t, c)
	dir := t.TempDir()
	for i := range data {
		bad := bytes.Clone(data)
		bad[i] ^= 0x01
		_, err := Spool(3, []Source{{Name: "f", R: bytes.NewReader(bad)}}, dir)
		if err == nil || !strings.HasPrefix(err.Error(), "f:") {
			t.Fatalf("byte %d of %d xor 1: %v", i, len(data), err)
		}
	}
	_, err := Spool(3, []Source{{Name: "f", R: bytes.NewReader(append(bytes.Clone(data), 0))}}, dir)
	var fe *FormatError
	if !errors.As(err, &fe) || !strings.HasPrefix(err.Error(), "f: offset ") {
		t.Errorf("trailing byte: %v", err)
	}
}

// LooksLikeText knows the first line of the text form (spec/COUNTS.md:
// the count, a tab, the words) and nothing else.
func TestLooksLikeText(t *testing.T) {
	for head, want := range map[string]bool{
		"12\tturn the beacon\n": true,
		"3\t</s>":               true,
		"12 turn":               false,
		"\tturn":                false,
		"12\t":                  false,
		"12\t\tturn":            false,
		"x\tturn":               false,
		Magic:                   false,
		"":                      false,
	} {
		if got := LooksLikeText([]byte(head)); got != want {
			t.Errorf("LooksLikeText(%q) = %v, want %v", head, got, want)
		}
	}
}
