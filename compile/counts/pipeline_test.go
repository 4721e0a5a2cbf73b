package counts

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"strings"
	"testing"

	"ingot/compile/corpus"
	"ingot/compile/vocab"
)

func generated(t testing.TB, sentences int, vocabSize int, seed uint64) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := corpus.Generate(&b, seed, sentences, vocabSize); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// inMemory is the reference: the plain Counter, everything in one table.
func inMemory(t testing.TB, order int, data []byte, minCount uint64, list *vocab.List, asText bool) []byte {
	t.Helper()
	c, _ := NewCounter(order)
	if list != nil {
		c.UseVocabulary(list)
	}
	if err := c.AddText("gen", bytes.NewReader(data)); err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if asText {
		c.Counts(minCount).WriteTo(&b)
	} else if err := c.Counts(minCount).WriteBinary(&b); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// Counting with several workers and a budget small enough to spill many
// runs writes the same bytes as counting everything in one table, and the
// spill directory is gone afterwards.
func TestCountSpillsAndMatchesInMemory(t *testing.T) {
	data := generated(t, 1500, 2000, 7)
	var listed []string
	for i := 0; i < 2000; i += 3 {
		listed = append(listed, fmt.Sprintf("w%d", i))
	}
	list, err := vocab.New(listed)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name     string
		workers  int
		memory   int64
		minCount uint64
		list     *vocab.List
		text     bool
	}{
		{"one worker, no budget", 1, 0, 1, nil, false},
		{"two workers, no budget", 2, 0, 1, nil, false},
		{"one worker, spilling", 1, 600 << 10, 1, nil, false},
		{"three workers, spilling", 3, 800 << 10, 1, nil, false},
		{"spilling, text form", 2, 600 << 10, 1, nil, true},
		{"spilling, min word count", 2, 600 << 10, 3, nil, false},
		{"min word count in memory", 2, 0, 2, nil, true},
		{"spilling, word list", 2, 600 << 10, 1, list, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			want := inMemory(t, 4, data, tc.minCount, tc.list, tc.text)
			tmp := t.TempDir()
			var made []string
			var out bytes.Buffer
			rep, err := Count(context.Background(), Options{
				Order: 4, Workers: tc.workers, Memory: tc.memory, TempDir: tmp,
				MinWordCount: tc.minCount, Vocabulary: tc.list, Text: tc.text,
				Temp: &tracker{made: &made},
			}, []Input{{"gen", bytes.NewReader(data)}}, &out)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(want, out.Bytes()) {
				t.Fatalf("output differs from the in-memory counter (%d vs %d bytes)", out.Len(), len(want))
			}
			if tc.memory > 0 && rep.Runs < 3 {
				t.Errorf("only %d runs spilled with a budget of %d bytes", rep.Runs, tc.memory)
			}
			if tc.memory == 0 && rep.Runs != 0 {
				t.Errorf("%d runs spilled without a budget", rep.Runs)
			}
			left, _ := os.ReadDir(tmp)
			if len(left) != 0 {
				t.Errorf("spill files left behind: %v", left)
			}
			if tc.memory > 0 && (len(made) != 2 || made[1] != "forget "+made[0]) {
				t.Errorf("temporary directory calls: %q", made)
			}
		})
	}
}

// A bad line is reported with its file and line number, the earliest one
// when several chunks hold one, and the spill directory is removed.
func TestCountReportsTheEarliestBadLine(t *testing.T) {
	var b bytes.Buffer
	b.Write(generated(t, 30000, 500, 3)) // several chunks
	lines := strings.Count(b.String(), "\n")
	b.WriteString("fine line\nthe <s> marker\n")
	b.Write(generated(t, 30000, 500, 4))
	b.WriteString("another <unk> here\n")
	tmp := t.TempDir()
	_, err := Count(context.Background(), Options{Order: 3, Workers: 2, Memory: 1 << 20, TempDir: tmp},
		[]Input{{"a.txt", strings.NewReader("ok\n")}, {"big.txt", &b}}, &bytes.Buffer{})
	want := fmt.Sprintf("big.txt:%d: marker <s> inside raw text", lines+2)
	if err == nil || err.Error() != want {
		t.Fatalf("got %v, want %s", err, want)
	}
	if left, _ := os.ReadDir(tmp); len(left) != 0 {
		t.Errorf("spill files left behind after a failure: %v", left)
	}
}

type tracker struct{ made *[]string }

func (tr *tracker) MkdirTemp(dir, pattern string) (string, error) {
	d, err := os.MkdirTemp(dir, pattern)
	*tr.made = append(*tr.made, d)
	return d, err
}

func (tr *tracker) Forget(dir string) { *tr.made = append(*tr.made, "forget "+dir) }

// TestCountSpillsAsTheVocabularyGrows narrows the sort key so that a small
// text reaches what a 100 M n-gram corpus reached: a table filled up to
// the limit of a vocabulary just below a power of two, then a sentence
// whose new words cross it. The spill must rank only the words the
// table's records name (it panicked: "do not fit a sort key"), and the
// counts must equal the in-memory count's.
func TestCountSpillsAsTheVocabularyGrows(t *testing.T) {
	defer func(b int) { sortKeyBits = b }(sortKeyBits)
	sortKeyBits = 30
	data := generated(t, 400, 3000, 11)
	want := inMemory(t, 3, data, 1, nil, false)
	for _, workers := range []int{1, 2} {
		var out bytes.Buffer
		if _, err := Count(context.Background(), Options{Order: 3, Workers: workers, Memory: 64 << 20, TempDir: t.TempDir()},
			[]Input{{"gen", bytes.NewReader(data)}}, &out); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(want, out.Bytes()) {
			t.Fatalf("%d workers: counts differ from the in-memory count's", workers)
		}
	}
}
