package inspect

import (
	"container/heap"
	"errors"
	"fmt"
	"math"

	"ingot/compile/tables"
	"ingot/format"
)

// NextWords ranks the words that may follow a context.
type NextWords struct {
	// Context is the part of the context that counts (its last N-1 words)
	// as looked up: words outside the vocabulary appear as <unk>.
	Context []string `json:"context"`
	// Unknown lists the given context words that were looked up as <unk>.
	Unknown []string `json:"unknown_words"`
	// Candidates is the number of words scored: the vocabulary without <s>.
	Candidates int `json:"candidates"`
	// TotalProbability is the sum of P(w | context) over every candidate,
	// which the laws of probability make 1 for a normalised model.
	TotalProbability Number `json:"total_probability"`
	// Predictions holds the most probable words, most probable first (ties
	// in word id order).
	Predictions []Prediction `json:"predictions"`
}

// Prediction is one candidate next word.
type Prediction struct {
	Word        string `json:"word"`
	Log10       Number `json:"log10"`
	Probability Number `json:"probability"`
	// MatchedOrder is the order of the stored n-gram whose probability was
	// used; Stored is true when that n-gram is the whole context followed by
	// the word, false when the model backed off to a shorter one.
	MatchedOrder int  `json:"matched_order"`
	Stored       bool `json:"stored"`
}

// Next scores every word of the vocabulary but <s> after the context
// through the model's own query path (format.Model.Next), and returns the
// top most probable. Context words outside the vocabulary are looked up as
// <unk>. The markers are read as count reads them: <s> may only be the
// first word and </s> may not be in a context at all (nothing follows the
// end of a sentence); either elsewhere is an error. The cost is one query
// per word of the vocabulary, and memory grows with top only.
func Next(m *format.Model, context []string, top int) (*NextWords, error) {
	if top < 1 {
		return nil, errors.New("the number of words to show must be at least 1")
	}
	ids := make([]uint32, 0, len(context))
	out := &NextWords{Context: []string{}, Unknown: []string{}, Predictions: []Prediction{}}
	for i, w := range context {
		switch {
		case w == tables.SentenceStart && i > 0:
			return nil, fmt.Errorf("context word %d is %s, which only begins a sentence: give it first or not at all", i+1, w)
		case w == tables.SentenceEnd:
			return nil, fmt.Errorf("context word %d is %s, which ends a sentence: no word follows it", i+1, w)
		}
		id, ok := m.ID(w)
		if !ok {
			out.Unknown = append(out.Unknown, w)
			id = m.UnknownID()
		}
		ids = append(ids, id)
	}
	if keep := max(m.Order()-1, 0); len(ids) > keep {
		ids = ids[len(ids)-keep:]
	}
	for _, id := range ids {
		out.Context = append(out.Context, m.Word(id))
	}
	state := m.ContextState(ids)
	best := &topWords{}
	total := 0.0
	for w := range uint32(m.VocabSize()) {
		if w == m.StartID() {
			continue
		}
		s := state
		lp := m.Next(&s, w)
		out.Candidates++
		total += math.Pow(10, lp)
		c := scored{w, lp}
		switch {
		case best.Len() < top:
			heap.Push(best, c)
		case c.better((*best)[0]):
			(*best)[0] = c
			heap.Fix(best, 0)
		}
	}
	out.TotalProbability = Number(total)
	ranked := make([]scored, best.Len())
	for i := len(ranked) - 1; i >= 0; i-- {
		ranked[i] = heap.Pop(best).(scored)
	}
	for _, c := range ranked {
		ex := m.Explain(ids, c.word)
		out.Predictions = append(out.Predictions, Prediction{
			Word:         m.Word(c.word),
			Log10:        Number(c.log10),
			Probability:  Number(math.Pow(10, c.log10)),
			MatchedOrder: ex.MatchedOrder,
			Stored:       ex.MatchedOrder == len(ids)+1,
		})
	}
	return out, nil
}

// scored is a word and its log10 probability.
type scored struct {
	word  uint32
	log10 float64
}

// better orders candidates: higher probability first, then lower word id.
func (a scored) better(b scored) bool {
	if a.log10 != b.log10 {
		return a.log10 > b.log10
	}
	return a.word < b.word
}

// topWords is a min-heap of the best candidates so far: the worst on top.
type topWords []scored

func (h topWords) Len() int           { return len(h) }
func (h topWords) Less(i, j int) bool { return h[j].better(h[i]) }
func (h topWords) Swap(i, j int)      { h[i], h[j] = h[j], h[i] }
func (h *topWords) Push(x any)        { *h = append(*h, x.(scored)) }
func (h *topWords) Pop() any {
	old := *h
	x := old[len(old)-1]
	*h = old[:len(old)-1]
	return x
}
