package score

import (
	"fmt"
	"ingot/format/formattest"
	"math"
	"strings"
	"testing"

	"ingot/compile/tables"
)

// A model that gives every word of the vocabulary the same probability 1/V
// has perplexity exactly V on any text (perplexity as the weighted
// branching factor: a textbook fact of the trade).
func TestUniformModelHasPerplexityV(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "beacon", "off", "on", "the", "turn"}
	V := len(vocab) - 1 // <s> is never predicted
	tb := &tables.Tables{Vocab: vocab, Levels: []tables.Level{{}}}
	for i := range vocab {
		lv := &tb.Levels[0]
		lv.Words = append(lv.Words, uint32(i))
		p := float32(math.Log10(1 / float64(V)))
		if vocab[i] == "<s>" {
			p = tables.NoProb
		}
		lv.LogProb = append(lv.LogProb, p)
	}
	m := formattest.Open(t, tb)
	text := "turn the beacon on\nturn the zebra off now\nlighthouse on\n"
	sum, err := Text(m, "t", strings.NewReader(text), nil)
	if err != nil {
		t.Fatal(err)
	}
	if sum.Sentences != 3 || sum.Predictions != 5+6+3 || sum.Unk != 3 {
		t.Errorf("summary %+v", sum)
	}
	if math.Abs(sum.Perplexity()-float64(V)) > 1e-4 || math.Abs(sum.PerplexityWithoutUnknown()-float64(V)) > 1e-4 {
		t.Errorf("perplexity %v (without <unk> %v), want %d", sum.Perplexity(), sum.PerplexityWithoutUnknown(), V)
	}
}

// Merging the summaries of two texts gives the summary of the texts read
// as one: perplexity is the geometric mean over all predictions together.
func TestMergeIsTheSummaryOfTheTextsTogether(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "a", "b"}
	tb := &tables.Tables{Vocab: vocab, Levels: []tables.Level{{}}}
	for i, p := range []float64{0.5, 0, 0.1, 0.3, 0.1} {
		tb.Levels[0].Words = append(tb.Levels[0].Words, uint32(i))
		lp := float32(math.Log10(p))
		if p == 0 {
			lp = tables.NoProb
		}
		tb.Levels[0].LogProb = append(tb.Levels[0].LogProb, lp)
	}
	m := formattest.Open(t, tb)
	one, two := "a b\nzzz\n", "b a a\n"
	s1, _ := Text(m, "1", strings.NewReader(one), nil)
	s2, _ := Text(m, "2", strings.NewReader(two), nil)
	both, _ := Text(m, "both", strings.NewReader(one+two), nil)
	s1.Merge(s2)
	if s1.Sentences != both.Sentences || s1.Predictions != both.Predictions || s1.Unk != both.Unk ||
		math.Abs(s1.Perplexity()-both.Perplexity()) > 1e-9 || math.Abs(s1.PerplexityWithoutUnknown()-both.PerplexityWithoutUnknown()) > 1e-9 {
		t.Errorf("merged %+v, together %+v", s1, both)
	}
}

func TestScorerTokens(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "a"}
	tb := &tables.Tables{Vocab: vocab, Levels: []tables.Level{{Words: []uint32{0, 1, 2, 3}, LogProb: []float32{-0.5, tables.NoProb, -1, -0.3}}}}
	m := formattest.Open(t, tb)
	s := NewScorer(m).Score([]string{"a", "b", "<s>"})
	if got := strings.Join(s.Tokens, " "); got != "a <unk> <unk> </s>" {
		t.Errorf("tokens %q", got)
	}
	if s.Unk != 2 || math.Abs(s.Sum-(-0.3-1-1-0.5)) > 1e-6 {
		t.Errorf("unk %d, sum %v", s.Unk, s.Sum)
	}
}

// The matched order of each prediction follows the back-off rule of package
// tables: the longest stored n-gram ending in the word, 0 for a word outside
// the vocabulary (worked by hand on a bigram model that stores "<s> a" and
// "a </s>").
func TestScorerMatchedOrder(t *testing.T) {
	// ids: </s> 0, <s> 1, <unk> 2, a 3
	vocab := []string{"</s>", "<s>", "<unk>", "a"}
	tb := &tables.Tables{Vocab: vocab, Levels: []tables.Level{
		{Words: []uint32{0, 1, 2, 3}, LogProb: []float32{-0.5, tables.NoProb, -1, -0.3}, LogBackoff: []float32{0, -0.2, 0, -0.1}},
		{Words: []uint32{1, 3, 3, 0}, LogProb: []float32{-0.05, -0.02}},
	}}
	m := formattest.Open(t, tb)
	s := NewScorer(m).Score([]string{"a", "zebra", "a", "<unk>"})
	// a|<s>: stored bigram; zebra: outside; a|<unk>: unigram; <unk>|a:
	// unigram (in the vocabulary, so its order is given); </s>|<unk>: unigram.
	want := []int{2, 0, 1, 1, 1}
	if fmt.Sprint(s.MatchedOrder) != fmt.Sprint(want) {
		t.Errorf("matched orders %v, want %v (tokens %v)", s.MatchedOrder, want, s.Tokens)
	}
	s = NewScorer(m).Score([]string{"a"})
	if fmt.Sprint(s.MatchedOrder) != "[2 2]" {
		t.Errorf("\"a\": matched orders %v, want [2 2]", s.MatchedOrder)
	}
}

// Held-out text is read as count reads training text: a marker inside it is
// an error naming the line, and no sentence at all is an error, not NaN.
// Nothing is scored of a text that turns out to be bad.
func TestTextRefusesWhatCountRefuses(t *testing.T) {
	vocab := []string{"</s>", "<s>", "<unk>", "a"}
	tb := &tables.Tables{Vocab: vocab, Levels: []tables.Level{{Words: []uint32{0, 1, 2, 3}, LogProb: []float32{-0.5, tables.NoProb, -1, -0.3}}}}
	m := formattest.Open(t, tb)
	for text, want := range map[string]string{
		"a a\n<s> a\n":  "t:2: marker <s> inside raw text",
		"a\na </s> a\n": "t:2: marker </s> inside raw text",
		"a\n<unk>\n":    "t:2: marker <unk> inside raw text",
		"":              "no sentences in t",
		"\n  \n":        "no sentences in t",
	} {
		called := 0
		_, err := Text(m, "t", strings.NewReader(text), func(*Sentence) error { called++; return nil })
		if err == nil || err.Error() != want {
			t.Errorf("%q: %v, want %q", text, err, want)
		}
		if called > 0 {
			t.Errorf("%q: %d sentences passed on before the error", text, called)
		}
	}
}
