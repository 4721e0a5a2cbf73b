// Package score scores text with a model: the log10 probability of every
// prediction, per-sentence sums and perplexity.
//
// A sentence t1 .. tm is scored as the predictions of t1 .. tm and </s>,
// each from the tokens before it, starting from <s>. A token outside the
// vocabulary (or <s> itself, which is never predicted) is scored, and used as
// context, as <unk>. Perplexity is 10^(-sum log10 P / predictions); it is
// reported both over all predictions and without the predictions of <unk>.
package score

import (
	"io"
	"math"
	"slices"

	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/format"
)

// Sentence is the score of one sentence.
type Sentence struct {
	Line   int       // line number in the input
	Tokens []string  // predicted tokens, </s> last; unknown words as <unk>
	Log10  []float64 // log10 probability of each prediction
	// MatchedOrder is, for each prediction, the order of the stored n-gram
	// whose probability was used (1 for the unigram), or 0 for a word
	// outside the vocabulary (scored as <unk>).
	MatchedOrder []int
	Sum          float64 // sum of Log10
	Unk          int     // predictions of <unk>
	UnkSum       float64 // sum of log10 over the predictions of <unk>
}

// Perplexity of the sentence over all its predictions.
func (s *Sentence) Perplexity() float64 { return perplexity(s.Sum, len(s.Log10)) }

// PerplexityWithoutUnknown leaves out the predictions of <unk>.
func (s *Sentence) PerplexityWithoutUnknown() float64 {
	return perplexity(s.Sum-s.UnkSum, len(s.Log10)-s.Unk)
}

// Summary adds up the sentences scored.
type Summary struct {
	Sentences   int
	Predictions int
	Unk         int
	Sum         float64
	UnkSum      float64
}

// Add counts one more sentence.
func (t *Summary) Add(s *Sentence) {
	t.Sentences++
	t.Predictions += len(s.Log10)
	t.Unk += s.Unk
	t.Sum += s.Sum
	t.UnkSum += s.UnkSum
}

// Merge adds the counts of another summary (of another text), so that the
// perplexities are those of both texts together.
func (t *Summary) Merge(o Summary) {
	t.Sentences += o.Sentences
	t.Predictions += o.Predictions
	t.Unk += o.Unk
	t.Sum += o.Sum
	t.UnkSum += o.UnkSum
}

// Perplexity over all predictions.
func (t *Summary) Perplexity() float64 { return perplexity(t.Sum, t.Predictions) }

// PerplexityWithoutUnknown leaves out the predictions of <unk>.
func (t *Summary) PerplexityWithoutUnknown() float64 {
	return perplexity(t.Sum-t.UnkSum, t.Predictions-t.Unk)
}

func perplexity(sum float64, n int) float64 {
	if n == 0 {
		return math.NaN()
	}
	return math.Pow(10, -sum/float64(n))
}

// Scorer scores sentences with one model. It reuses its buffers: the
// Sentence it returns is valid until the next call.
type Scorer struct {
	m   *format.Model
	s   Sentence
	ids []uint32
}

// NewScorer returns a Scorer for m.
func NewScorer(m *format.Model) *Scorer { return &Scorer{m: m} }

// Score scores one sentence given as tokens.
func (sc *Scorer) Score(tokens []string) *Sentence {
	m := sc.m
	s := &sc.s
	s.Tokens, s.Log10, s.MatchedOrder = s.Tokens[:0], s.Log10[:0], s.MatchedOrder[:0]
	s.Sum, s.Unk, s.UnkSum = 0, 0, 0
	unk, start := m.UnknownID(), m.StartID()
	st := m.StartState()
	predict := func(tok string, id uint32, known bool) {
		lp, order := m.NextMatched(&st, id)
		if !known {
			order = 0
		}
		s.Tokens = append(s.Tokens, tok)
		s.Log10 = append(s.Log10, lp)
		s.MatchedOrder = append(s.MatchedOrder, order)
		s.Sum += lp
		if id == unk {
			s.Unk++
			s.UnkSum += lp
		}
	}
	for _, tok := range tokens {
		id, ok := m.ID(tok)
		if !ok || id == start {
			id, tok, ok = unk, tables.Unknown, false
		}
		predict(tok, id, ok)
	}
	predict(tables.SentenceEnd, m.EndID(), true)
	return s
}

// Text scores every sentence of r (named name in errors), calling fn with
// each, and returns the summary. The whole text is read and checked first,
// as held-out text (text.HeldOut: markers and empty text are errors), so
// that fn sees no sentence of an input that turns out to be bad; the text's
// tokens are held in memory meanwhile.
func Text(m *format.Model, name string, r io.Reader, fn func(*Sentence) error) (Summary, error) {
	h, err := ReadHeldOut(name, r)
	if err != nil {
		return Summary{}, err
	}
	return h.Score(m, fn)
}

// HeldOut is held-out text read and checked whole, ready to score.
type HeldOut struct {
	Name      string
	sentences [][]string
	lines     []int
}

// ReadHeldOut reads and checks the held-out text of r (named name in
// errors) as text.HeldOut does, holding its tokens in memory. A program
// that scores several inputs reads them all first, so that a bad one is
// refused before any result is printed.
func ReadHeldOut(name string, r io.Reader) (*HeldOut, error) {
	h := &HeldOut{Name: name}
	err := text.HeldOut(name, r, func(toks []string, line int) error {
		h.sentences = append(h.sentences, slices.Clone(toks))
		h.lines = append(h.lines, line)
		return nil
	})
	if err != nil {
		return nil, err
	}
	return h, nil
}

// Score scores every sentence with m, calling fn (when not nil) with each,
// and returns the summary.
func (h *HeldOut) Score(m *format.Model, fn func(*Sentence) error) (Summary, error) {
	sc := NewScorer(m)
	var sum Summary
	for i, toks := range h.sentences {
		s := sc.Score(toks)
		s.Line = h.lines[i]
		sum.Add(s)
		if fn != nil {
			if err := fn(s); err != nil {
				return sum, err
			}
		}
	}
	return sum, nil
}
