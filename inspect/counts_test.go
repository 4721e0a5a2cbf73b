package inspect

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ingot/compile/fixture"
)

// DescribeCounts reports what the count file holds: per order its entries
// and the sum of their counts (here the bigram counts of a text sum to its
// tokens plus one </s> per sentence: every position but <s> ends one
// bigram), and refuses an order outside the file's.
func TestDescribeCounts(t *testing.T) {
	sentences := fixture.Demo(t)[:200]
	c := fixture.Counts(t, 3, sentences)
	path := filepath.Join(t.TempDir(), "c.bin")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := c.WriteBinary(f); err != nil {
		t.Fatal(err)
	}
	f.Close()
	got, err := DescribeCounts(path)
	if err != nil {
		t.Fatal(err)
	}
	st, _ := os.Stat(path)
	if got.Counts != path || got.FileBytes != st.Size() || got.Order != 3 || got.VocabularySize != len(c.Vocab) || got.Blocks == 0 {
		t.Errorf("%+v", got)
	}
	tokens := 0
	for _, s := range sentences {
		tokens += len(strings.Fields(s))
	}
	// Order 1 stores the words with a count (not the markers <s>, <unk>
	// when they have none).
	if n := got.NGramsPerOrder[0]; n > uint64(len(c.Vocab)) || n+2 < uint64(len(c.Vocab)) {
		t.Errorf("order 1: %d entries for %d words", n, len(c.Vocab))
	}
	for k := 2; k <= 3; k++ {
		if got.NGramsPerOrder[k-1] != uint64(c.Len(k)) {
			t.Errorf("order %d: %d entries, the counts hold %d", k, got.NGramsPerOrder[k-1], c.Len(k))
		}
	}
	if want := uint64(tokens + len(sentences)); got.CountSumPerOrder[1] != want {
		t.Errorf("bigram counts sum to %d, want %d tokens and </s>", got.CountSumPerOrder[1], want)
	}
	for _, k := range []int{0, 4} {
		if err := got.CheckOrder(k); err == nil {
			t.Errorf("order %d accepted", k)
		}
	}
	if err := got.CheckOrder(3); err != nil {
		t.Error(err)
	}
	if _, err := DescribeCounts(filepath.Join(t.TempDir(), "absent")); err == nil {
		t.Error("a missing file described")
	}
}
