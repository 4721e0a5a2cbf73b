package inspect

import (
	"math"
	"strings"

	"ingot/format"
)

// Explained is how a model computes one prediction P(word | context): the
// longest stored n-gram that matched, each back-off weight applied on the
// way down, and the result; for a quantized column, how each value is
// stored. Its JSON form is explain's report.
type Explained struct {
	// Context are the context words as looked up (a word outside the
	// vocabulary as <unk>).
	Context []string `json:"context"`
	Word    string   `json:"word"`
	// Unknown lists the words given that are outside the vocabulary (and
	// <s> anywhere but first), looked up as <unk>.
	Unknown []string `json:"unknown_words"`
	// MatchedOrder is the order of the n-gram that matched, 0 for a word
	// outside the vocabulary; MatchedNGram its words.
	MatchedOrder int    `json:"matched_order"`
	MatchedNGram string `json:"matched_ngram"`
	// StoredLog10 is the matched n-gram's stored log10 probability.
	StoredLog10 Number `json:"stored_log10"`
	// Backoffs are the back-off weights applied, longest context first.
	Backoffs []ExplainedBackoff `json:"backoffs"`
	// Log10 and Probability are the result.
	Log10       Number `json:"log10"`
	Probability Number `json:"probability"`
	// Quantization is how the matched probability is stored, when its
	// column is quantized.
	Quantization *Quantized `json:"quantization,omitempty"`
	// AnyQuantized is whether any column of the model is quantized (a
	// report then says which values are stored as floats).
	AnyQuantized bool `json:"-"`
}

// ExplainedBackoff is one back-off weight applied.
type ExplainedBackoff struct {
	Context      []string   `json:"context"`
	Log10Backoff Number     `json:"log10_backoff"`
	Quantization *Quantized `json:"quantization,omitempty"`
}

// Quantized is how a quantized value is stored: the codebook index the
// file holds and the level it names. The value before rounding is not kept
// in the file; the build information records, per order, the largest
// rounding error (nil when it records none).
type Quantized struct {
	CodebookIndex  int      `json:"codebook_index"`
	CodebookLevels int      `json:"codebook_levels"`
	QuantizedLog10 Number   `json:"quantized_log10"`
	MaxError       *float64 `json:"max_rounding_error_recorded"`
}

// Lookup maps words to ids: a word outside the vocabulary, and <s>
// anywhere but first, is looked up as <unk> and listed in unknown.
func Lookup(m *format.Model, words []string) (ids []uint32, unknown []string) {
	for i, w := range words {
		id, ok := m.ID(w)
		if !ok || (id == m.StartID() && i > 0) {
			unknown = append(unknown, w)
			id = m.UnknownID()
		}
		ids = append(ids, id)
	}
	return ids, unknown
}

// Explain explains the prediction of the last of words (at least one)
// after the others.
func Explain(m *format.Model, words []string) *Explained {
	ids, unknown := Lookup(m, words)
	ex := m.Explain(ids[:len(ids)-1], ids[len(ids)-1])
	e := &Explained{
		Context: wordsOf(m, ex.Context), Word: m.Word(ex.Word), Unknown: append([]string{}, unknown...),
		MatchedOrder: ex.MatchedOrder, StoredLog10: Number(ex.StoredLogProb),
		Backoffs: []ExplainedBackoff{}, Log10: Number(ex.LogProb), Probability: Number(math.Pow(10, ex.LogProb)),
		AnyQuantized: anyQuantized(m),
	}
	if ex.MatchedOrder > 0 {
		g := append(append([]uint32{}, ex.Context[len(ex.Context)-(ex.MatchedOrder-1):]...), ex.Word)
		e.MatchedNGram = strings.Join(wordsOf(m, g), " ")
		if i, ok := m.Find(g); ok {
			e.Quantization = quantized(m, ex.MatchedOrder, i, false)
		}
	}
	for _, b := range ex.Backoffs {
		eb := ExplainedBackoff{Context: wordsOf(m, b.Context), Log10Backoff: Number(b.LogBackoff)}
		if i, ok := m.Find(b.Context); ok {
			eb.Quantization = quantized(m, len(b.Context), i, true)
		}
		e.Backoffs = append(e.Backoffs, eb)
	}
	return e
}

// wordsOf returns the words of ids, never nil.
func wordsOf(m *format.Model, ids []uint32) []string {
	s := make([]string, len(ids))
	for i, id := range ids {
		s[i] = m.Word(id)
	}
	return s
}

// quantized describes entry i of order k's probability (backoff false) or
// back-off weight when that column is quantized, or returns nil.
func quantized(m *format.Model, k, i int, backoff bool) *Quantized {
	idx, ok := m.Index(k, i, backoff)
	if !ok {
		return nil
	}
	cb := m.Codebook(k, backoff)
	q := &Quantized{CodebookIndex: idx, CodebookLevels: len(cb), QuantizedLog10: Number(math.NaN())}
	if idx < len(cb) {
		q.QuantizedLog10 = Number(cb[idx])
	}
	if e, ok := RecordedMaxError(m.Info(), k, backoff); ok {
		q.MaxError = &e
	}
	return q
}

// anyQuantized reports whether any column of the model is quantized.
func anyQuantized(m *format.Model) bool {
	for k := 1; k <= m.Order(); k++ {
		if m.Codebook(k, false) != nil || m.Codebook(k, true) != nil {
			return true
		}
	}
	return false
}
