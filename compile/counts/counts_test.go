package counts

import (
	"bytes"
	"strings"
	"testing"

	"github.com/google/go-cmp/cmp"
)

func countText(t *testing.T, order int, text string) string {
	t.Helper()
	c, err := NewCounter(order)
	if err != nil {
		t.Fatal(err)
	}
	if err := c.AddText("t.txt", strings.NewReader(text)); err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if _, err := c.Counts(1).WriteTo(&b); err != nil {
		t.Fatal(err)
	}
	return b.String()
}

// The counting rules of the estimation notes: a sentence is padded once
// with <s> and </s>, every k-gram ending at a predicted position is counted
// when its span fits, the unigram <s> is never counted, and n-grams never
// cross sentences. Expected output worked out by hand.
func TestCountPaddingAndSpans(t *testing.T) {
	got := countText(t, 3, "a b\n\n  b   a \n")
	want := strings.Join([]string{
		"2\t</s>", "2\ta", "2\tb",
		"1\t<s> a", "1\t<s> b", "1\ta </s>", "1\ta b", "1\tb </s>", "1\tb a",
		"1\t<s> a b", "1\t<s> b a", "1\ta b </s>", "1\tb a </s>",
	}, "\n") + "\n"
	if diff := cmp.Diff(want, got); diff != "" {
		t.Errorf("counts differ (-want +got):\n%s", diff)
	}
}

func TestMinWordCountMapsRareWordsToUnknown(t *testing.T) {
	c, _ := NewCounter(2)
	c.AddText("t", strings.NewReader("a b\na c\n"))
	var b bytes.Buffer
	c.Counts(2).WriteTo(&b)
	want := "2\t</s>\n2\t<unk>\n2\ta\n2\t<s> a\n2\t<unk> </s>\n2\ta <unk>\n"
	if diff := cmp.Diff(want, b.String()); diff != "" {
		t.Errorf("(-want +got):\n%s", diff)
	}
}

func TestTextErrorsNameFileAndLine(t *testing.T) {
	for _, tc := range []struct{ text, want string }{
		{"ok line\nthe <s> marker\n", "t.txt:2: marker <s> inside raw text"},
		{"a\nb\n\nc <unk>\n", "t.txt:4: marker <unk> inside raw text"},
		{"a\n\xff\xfe\n", "t.txt:2: invalid UTF-8"},
	} {
		c, _ := NewCounter(2)
		err := c.AddText("t.txt", strings.NewReader(tc.text))
		if err == nil || err.Error() != tc.want {
			t.Errorf("%q: got %v, want %q", tc.text, err, tc.want)
		}
	}
}

func load(t *testing.T, order int, files ...string) (*Counts, error) {
	t.Helper()
	var src []Source
	for i, f := range files {
		src = append(src, Source{Name: []string{"a.tsv", "b.tsv", "c.tsv"}[i], R: strings.NewReader(f)})
	}
	return Load(order, src)
}

func TestLoadMergesShardsInAnyOrder(t *testing.T) {
	shard1 := "1\ta b\n1\t</s>\n2\ta\n"
	shard2 := "2\t<s> a\n1\tb\n1\ta b\n1\tb </s>\n1\ta </s>\n1\t</s>\n"
	c, err := load(t, 2, shard1, shard2)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	c.WriteTo(&b)
	want := "2\t</s>\n2\ta\n1\tb\n2\t<s> a\n1\ta </s>\n2\ta b\n1\tb </s>\n"
	if diff := cmp.Diff(want, b.String()); diff != "" {
		t.Errorf("(-want +got):\n%s", diff)
	}
}

func TestLoadReportsFirstOffendingLine(t *testing.T) {
	for _, tc := range []struct {
		files []string
		want  string
	}{
		{[]string{"1\ta\n0\tb\n"}, `a.tsv:2: count "0" is not a positive integer`},
		{[]string{"-3\ta\n"}, `a.tsv:1: count "-3" is not a positive integer`},
		{[]string{"1.5\ta\n"}, `a.tsv:1: count "1.5" is not a positive integer`},
		{[]string{"NaN\ta\n"}, `a.tsv:1: count "NaN" is not a positive integer`},
		{[]string{"a 1\n"}, `a.tsv:1: no tab between count and n-gram`},
		{[]string{"1\ta\n1\tb </s> a\n"}, `a.tsv:2: </s> inside an n-gram (only last)`},
		{[]string{"1\ta\n", "1\tb\n1\tx a b\n1\ta b\n"}, `b.tsv:2: "x a b" has no count for its prefix "x a"`},
		{[]string{"1\ta\n1\tb\n1\t<s> a b\n1\t<s> a\n"}, `a.tsv:3: "<s> a b" has no count for its suffix "a b"`},
	} {
		_, err := load(t, 3, tc.files...)
		if err == nil || err.Error() != tc.want {
			t.Errorf("%q: got %v, want %q", tc.files, err, tc.want)
		}
	}
}

func TestLoadRoundTripsCounter(t *testing.T) {
	text := countText(t, 4, "the beacon is on\nturn the beacon off\nthe beacon\n")
	c, err := load(t, 4, text)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	c.WriteTo(&b)
	if diff := cmp.Diff(text, b.String()); diff != "" {
		t.Errorf("(-want +got):\n%s", diff)
	}
}
