package inspect

import (
	"bufio"
	"encoding/json"
	"fmt"
	"io"
	"strings"

	"ingot/compile/tables"
	"ingot/format"
)

// Entry is one stored n-gram with its stored values, as Dump writes it.
type Entry struct {
	// NGram is the words, oldest first, joined by one space.
	NGram string `json:"ngram"`
	Order int    `json:"order"`
	// Log10Prob is the stored log10 probability (null for the unigram <s>,
	// whose -Inf JSON cannot express).
	Log10Prob Stored `json:"log10_prob"`
	// Log10Backoff is the stored log10 back-off weight; nil at the highest
	// order, which stores none.
	Log10Backoff *Stored `json:"log10_backoff,omitempty"`
	// ProbIndex and BackoffIndex are the codebook indexes stored for a
	// quantized column; nil when the column is plain float32.
	ProbIndex    *int `json:"prob_index,omitempty"`
	BackoffIndex *int `json:"backoff_index,omitempty"`
}

// Selection says which entries to list.
type Selection struct {
	// Order restricts the entries to one order; 0 lists every order.
	Order int
	// Prefix restricts the entries to the n-grams that start with these
	// words (the prefix itself included, when it is stored).
	Prefix []string
}

// UnknownWordError reports a prefix word outside the vocabulary: no stored
// n-gram holds it (text with it was counted as <unk>).
type UnknownWordError struct{ Word string }

func (e *UnknownWordError) Error() string {
	return fmt.Sprintf("prefix word %q is not in the vocabulary (such words are stored as %s)", e.Word, tables.Unknown)
}

// Walk calls fn for every selected entry: order by order from the lowest,
// and within an order in stored (lexicographic) order. With a prefix it
// walks down the trie to the prefix's entry and visits only the entries
// below it, whose indexes form one contiguous range per order, so the cost
// is that of the subtree, not of the model. A prefix that is not stored
// selects nothing; a prefix word outside the vocabulary is an
// *UnknownWordError. Walk stops at the first error fn returns.
func Walk(m *format.Model, sel Selection, fn func(Entry) error) error {
	if sel.Order < 0 || sel.Order > m.Order() {
		return fmt.Errorf("order %d outside the model's orders 1..%d", sel.Order, m.Order())
	}
	var words strings.Builder
	return walkIDs(m, sel, func(k, i int, gram []uint32) error {
		words.Reset()
		for j, id := range gram {
			if j > 0 {
				words.WriteByte(' ')
			}
			words.WriteString(m.Word(id))
		}
		e := Entry{NGram: words.String(), Order: k, Log10Prob: Stored(m.LogProbAt(k, i))}
		if k < m.Order() {
			b := Stored(m.LogBackoffAt(k, i))
			e.Log10Backoff = &b
			if j, ok := m.Index(k, i, true); ok {
				e.BackoffIndex = &j
			}
		}
		if j, ok := m.Index(k, i, false); ok {
			e.ProbIndex = &j
		}
		return fn(e)
	})
}

// Dump writes the selected entries as JSON Lines, one Entry object per line,
// streaming: memory does not grow with the model. It returns the number of
// entries written.
func Dump(w io.Writer, m *format.Model, sel Selection) (int, error) {
	bw := bufio.NewWriterSize(w, 1<<16)
	enc := json.NewEncoder(bw)
	enc.SetEscapeHTML(false) // keep <s>, </s> and <unk> readable
	n := 0
	err := Walk(m, sel, func(e Entry) error {
		n++
		return enc.Encode(e)
	})
	if ferr := bw.Flush(); err == nil {
		err = ferr
	}
	return n, err
}

// walkIDs is Walk on word ids: fn gets the order, the entry's index within
// its order and its full n-gram (reused between calls). The walk is the
// format package's: Model.EntriesUnder.
func walkIDs(m *format.Model, sel Selection, fn func(k, i int, gram []uint32) error) error {
	var prefix []uint32
	for _, w := range sel.Prefix {
		id, ok := m.ID(w)
		if !ok {
			return &UnknownWordError{Word: w}
		}
		prefix = append(prefix, id)
	}
	for k := max(len(prefix), 1); k <= m.Order(); k++ {
		if sel.Order != 0 && k != sel.Order {
			continue
		}
		it := m.EntriesUnder(prefix, k)
		for it.Next() {
			if err := fn(k, it.Index(), it.Gram()); err != nil {
				return err
			}
		}
		if err := it.Err(); err != nil {
			return err
		}
	}
	return nil
}
