package counts

import (
	"fmt"
	"io"

	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/compile/vocab"
)

// Counter counts the n-grams of training text, orders 1..Order.
// Its memory grows with the number of distinct n-grams.
type Counter struct {
	b     *builder
	sent  []uint32
	vocab *vocab.List // nil: every token is its own word
}

// NewCounter returns a Counter for orders 1..order.
func NewCounter(order int) (*Counter, error) {
	if order < 1 || order > tables.MaxOrder {
		return nil, fmt.Errorf("order %d outside 1..%d", order, tables.MaxOrder)
	}
	return &Counter{b: newBuilder(order)}, nil
}

// AddText counts every sentence of r, reported as name in errors. Invalid
// UTF-8 or a marker inside the text is an error naming the file and line;
// with a word list (UseVocabulary), <unk> is an ordinary word outside it.
func (c *Counter) AddText(name string, r io.Reader) error {
	return Sentences(name, r, c.vocab, func(toks []string) error {
		c.AddSentence(toks)
		return nil
	})
}

// AddSentence counts one sentence given as tokens (without markers).
func (c *Counter) AddSentence(toks []string) {
	b := c.b
	s := append(c.sent[:0], b.ids[tables.SentenceStart])
	for _, t := range toks {
		if c.vocab != nil {
			t = c.vocab.Map(t)
		}
		s = append(s, b.id(t))
	}
	s = append(s, b.ids[tables.SentenceEnd])
	c.sent = s
	eachSpan(len(s), b.order, func(lo, hi int) { b.add(s[lo:hi], 1, -1, 0) })
}

// Counts returns the counts gathered so far. With minWordCount > 1, every
// token whose total count is below it is replaced by <unk> and the n-grams
// that become equal are merged.
func (c *Counter) Counts(minWordCount uint64) *Counts {
	if c.vocab != nil {
		return c.b.finish(nil, c.vocab.Words())
	}
	var replace func(string) string
	if minWordCount > 1 {
		freq := map[string]uint64{}
		t := &c.b.grams[0]
		for i := 0; i < t.len(); i++ {
			freq[c.b.words[t.ids[i]]] = t.count[i]
		}
		replace = func(w string) string {
			if text.IsMarker(w) || freq[w] >= minWordCount {
				return w
			}
			return tables.Unknown
		}
	}
	return c.b.finish(replace, nil)
}
