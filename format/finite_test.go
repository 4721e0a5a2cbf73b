package format

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"ingot/compile/tables"
)

// The writer refuses a model that verify would refuse for its values: a
// probability of zero (log10 -Inf), NaN or +Inf anywhere but the unigram
// <s> (never predicted, so stored as -Inf), and a back-off weight that is
// not finite. Law of probability behind it: every word of the vocabulary
// has a probability above zero in every context, and a weight scales a
// distribution by a finite positive factor.
func TestWriterRefusesNonFiniteValues(t *testing.T) {
	tb := tinyModel(t)
	var buf bytes.Buffer
	if err := Write(&buf, tb); err != nil {
		t.Fatalf("the tiny model (unigram <s> at -Inf): %v", err)
	}
	start, _ := tb.ID(tables.SentenceStart)
	fog, _ := tb.ID("fog")
	neg, pos, nan := float32(math.Inf(-1)), float32(math.Inf(1)), float32(math.NaN())
	cases := []struct {
		name   string
		change func(t *tables.Tables)
	}{
		{"unigram -Inf", func(t *tables.Tables) { t.Levels[0].LogProb[fog] = neg }},
		{"bigram -Inf", func(t *tables.Tables) { t.Levels[1].LogProb[0] = neg }},
		{"trigram NaN", func(t *tables.Tables) { t.Levels[2].LogProb[0] = nan }},
		{"bigram +Inf", func(t *tables.Tables) { t.Levels[1].LogProb[1] = pos }},
		{"back-off -Inf", func(t *tables.Tables) { t.Levels[0].LogBackoff[fog] = neg }},
		{"back-off +Inf", func(t *tables.Tables) { t.Levels[1].LogBackoff[0] = pos }},
		{"<s> back-off -Inf", func(t *tables.Tables) { t.Levels[0].LogBackoff[start] = neg }},
	}
	for _, c := range cases {
		bad := tinyModel(t)
		c.change(bad)
		err := Write(&bytes.Buffer{}, bad)
		if err == nil || !strings.Contains(err.Error(), "cannot write") {
			t.Errorf("%s: %v, want a refusal", c.name, err)
		}
	}
}
