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
// its order and its full n-gram (reused between calls).
func walkIDs(m *format.Model, sel Selection, fn func(k, i int, gram []uint32) error) error {
	N := m.Order()
	var lo, hi [tables.MaxOrder + 1]int // entries [lo[k], hi[k]) of order k are selected
	var gram [tables.MaxOrder]uint32
	base := len(sel.Prefix) // the order of the prefix's entry; 0: no prefix
	if base == 0 {
		base, lo[1], hi[1] = 1, 0, m.Count(1)
	} else {
		ids := make([]uint32, len(sel.Prefix))
		for j, w := range sel.Prefix {
			id, ok := m.ID(w)
			if !ok {
				return &UnknownWordError{Word: w}
			}
			ids[j] = id
		}
		if base > N {
			return nil
		}
		node, ok := m.Find(ids)
		if !ok {
			return nil
		}
		copy(gram[:], ids)
		lo[base], hi[base] = node, node+1
	}
	// The children of a contiguous run of entries are a contiguous run.
	for k := base; k < N; k++ {
		if lo[k] < hi[k] {
			lo[k+1], _ = m.ChildRange(k, lo[k])
			_, hi[k+1] = m.ChildRange(k, hi[k]-1)
		}
		hi[k+1] = max(hi[k+1], lo[k+1])
	}
	for k := base; k <= N; k++ {
		if sel.Order != 0 && k != sel.Order {
			continue
		}
		var parent [tables.MaxOrder + 1]int // parent[j]: current ancestor of order j
		for j := base; j < k; j++ {
			parent[j] = lo[j]
		}
		for i := lo[k]; i < hi[k]; i++ {
			below := i
			for j := k - 1; j >= base; j-- {
				p := parent[j]
				for p < hi[j] {
					if _, end := m.ChildRange(j, p); end > below {
						break
					}
					p++
				}
				if start, end := m.ChildRange(j, p); p >= hi[j] || below < start || below >= end {
					return fmt.Errorf("entry %d of order %d has no parent at order %d: the child starts are damaged", below, j+1, j)
				}
				parent[j] = p
				below = p
			}
			for j := base; j < k; j++ {
				gram[j-1] = m.WordAt(j, parent[j])
			}
			gram[k-1] = m.WordAt(k, i)
			if err := fn(k, i, gram[:k]); err != nil {
				return err
			}
		}
	}
	return nil
}
