// Package tables holds the in-memory, writable form of a back-off language
// model: the vocabulary and, per order, the stored n-grams in a fixed sort
// order with their log10 probabilities and log10 back-off weights.
//
// The compiler produces Tables, the pruner and the quantizer rewrite them,
// and the format package turns them into bytes and back. Everything here is a
// plain slice so that tests can build and compare models by hand.
//
// Conventions (the same ones the file format records):
//
//   - Word ids are positions in Vocab, which is sorted bytewise, so the id
//     order is the byte order of the words.
//   - Level 1 (unigrams) is dense: entry i is word id i, for every word of the
//     vocabulary, including <s> (which is never predicted: its log10
//     probability is NoProb) and <unk> (always present, even with count 0).
//     Unigram entries hold full probabilities.
//   - Level k >= 2 holds k-grams sorted lexicographically by their word ids.
//     Every (k-1)-word prefix of a stored k-gram is stored at level k-1
//     (prefix closure).
//   - Back-off weights are stored for levels 1..N-1; a stored n-gram that is
//     no context of any stored longer n-gram has weight 1 (log10 0).
//
// The back-off rule that every method shares:
//
//	P(w|h) = 10^LogProb(hw)                 if hw is stored
//	       = 10^LogBackoff(h) * P(w|h')     if h is stored but hw is not
//	       = P(w|h')                        if h is not stored
package tables

import (
	"fmt"
	"math"
	"sync"
)

// The three markers of the trade.
const (
	SentenceStart = "<s>"
	SentenceEnd   = "</s>"
	Unknown       = "<unk>"
)

// MaxOrder is the highest n-gram order the toolchain supports.
const MaxOrder = 10

// NoProb is the log10 probability stored for <s>, which is never predicted.
var NoProb = float32(math.Inf(-1))

// Tables is a complete back-off model in memory.
type Tables struct {
	// Vocab lists every word, sorted bytewise; a word's id is its index.
	Vocab []string
	// Levels[k-1] holds the k-grams. len(Levels) is the model's order.
	Levels []Level
	// Info describes how the model was built; it travels in the file's
	// metadata and changes no probability.
	Info Info
	// Links, when not nil, are the links of Levels (Link's result), handed
	// on by whoever found them (the estimator takes the counts') so that
	// the writer does not link the orders again. Whoever builds tables
	// with other word ids leaves it nil.
	Links *Links
}

// Level holds the n-grams of one order, sorted lexicographically by word ids.
type Level struct {
	// Words holds k word ids per entry, entry i at Words[k*i : k*i+k].
	Words []uint32
	// LogProb is the stored log10 probability of each entry.
	LogProb []float32
	// LogBackoff is the log10 back-off weight of each entry as a context;
	// nil at the highest order.
	LogBackoff []float32
	// ProbCodebook, when not nil, is the quantization codebook of LogProb:
	// sorted ascending, at most 65536 values, holding every value LogProb
	// takes. The file then stores each probability as an index into it.
	ProbCodebook []float32
	// BackoffCodebook is the same for LogBackoff.
	BackoffCodebook []float32
}

// Info is the build description stored beside the model.
type Info struct {
	// Method names the estimator: katz, absolute, witten-bell, kneser-ney.
	Method string `json:"method"`
	// Discounts lists, per order (unigrams first), the discount parameters
	// used, by name (for example "D" or "D1", "D2", "D3+").
	Discounts []map[string]float64 `json:"discounts,omitempty"`
	// Fallbacks records every corner-case rule the estimator applied.
	Fallbacks []string `json:"fallbacks,omitempty"`
	// Options records the build options as given (flag name to value).
	Options map[string]string `json:"options,omitempty"`
	// EmptyContextLogBackoff is log10 of the weight that the empty context
	// gives the uniform level-0 distribution (1/|V|); it is already folded
	// into the unigram probabilities and is kept for explanations.
	EmptyContextLogBackoff float64 `json:"empty_context_log10_backoff"`
	// ToolVersion is the version of the program that wrote the model.
	ToolVersion string `json:"tool_version,omitempty"`
	// BuildTime is when the model was built, in RFC 3339 UTC, recorded only
	// when the builder fixed it (SOURCE_DATE_EPOCH); empty otherwise, so
	// that the same inputs give the same bytes.
	BuildTime string `json:"build_time,omitempty"`
	// History lists, oldest first, the steps applied after estimation
	// (count cutoffs, pruning, quantization), each as one line.
	History []string `json:"history,omitempty"`
	// Commands records, oldest first, every command that wrote the model
	// (the one that built it, then each that rewrote it): its command line,
	// the size budget it was given and the digests of the files it read.
	Commands []Command `json:"commands,omitempty"`
	// Quantization describes the codebooks, when the model is quantized.
	Quantization *Quantization `json:"quantization,omitempty"`
}

// Command is the provenance of one step that wrote a model.
type Command struct {
	// Line is the command line, its words quoted as a POSIX shell reads
	// them back.
	Line string `json:"line"`
	// MaxSize is the size budget as given (--max-size), or empty.
	MaxSize string `json:"max_size"`
	// Inputs are the files the command read, in the order given.
	Inputs []Input `json:"inputs"`
}

// Input identifies one file a command read by its bytes as stored (before
// any decompression).
type Input struct {
	// Name is the file as named on the command line ("stdin" for "-").
	Name string `json:"name"`
	// Bytes is its length.
	Bytes int64 `json:"bytes"`
	// SHA256 is the hex SHA-256 digest of its bytes.
	SHA256 string `json:"sha256"`
}

// Quantization records how a model was quantized.
type Quantization struct {
	Trainer     string `json:"trainer"`
	Bits        int    `json:"bits"`
	BackoffBits int    `json:"backoff_bits"`
	// ProbMaxError[k-1] is the largest |quantized - original| log10
	// probability at order k (0 where the order is not quantized).
	ProbMaxError []float64 `json:"prob_max_error"`
	// BackoffMaxError[k-1] is the largest |quantized - exact| log10 back-off
	// weight at order k, the exact weight being the one recomputed from the
	// quantized probabilities.
	BackoffMaxError []float64 `json:"backoff_max_error"`
	// Residual[k-1] is the largest |sum - 1| left in a context of order k
	// (a context of order-(k+1) n-grams) after its weight was rounded and
	// its successors' levels compensated, its lower orders taken as exact.
	// It bounds how far each context may be from summing to one.
	Residual []float64 `json:"residual"`
}

// Order returns the model's order N.
func (t *Tables) Order() int { return len(t.Levels) }

// Len returns the number of entries at order k (1-based).
func (t *Tables) Len(k int) int { return len(t.Levels[k-1].LogProb) }

// Gram returns the word ids of entry i at order k. The slice aliases the
// table.
func (t *Tables) Gram(k, i int) []uint32 {
	return t.Levels[k-1].Words[k*i : k*i+k]
}

// ID returns the id of word w and whether it is in the vocabulary.
func (t *Tables) ID(w string) (uint32, bool) {
	lo, hi := 0, len(t.Vocab)
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if t.Vocab[m] < w {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo < len(t.Vocab) && t.Vocab[lo] == w {
		return uint32(lo), true
	}
	return 0, false
}

// Find returns the index of the n-gram g at order len(g), or -1.
func (t *Tables) Find(g []uint32) int {
	k := len(g)
	if k == 0 || k > len(t.Levels) {
		return -1
	}
	if k == 1 {
		if int(g[0]) < len(t.Vocab) {
			return int(g[0])
		}
		return -1
	}
	words := t.Levels[k-1].Words
	lo, hi := 0, len(words)/k
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if Compare(words[k*m:k*m+k], g) < 0 {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo < len(words)/k && Compare(words[k*lo:k*lo+k], g) == 0 {
		return lo
	}
	return -1
}

// LogProb returns log10 P(w | h) by the back-off rule, where g = h w. Only the
// last Order() words of g are used.
func (t *Tables) LogProb(g []uint32) float64 {
	if n := len(t.Levels); len(g) > n {
		g = g[len(g)-n:]
	}
	var bow float64
	for start := 0; start < len(g); start++ {
		if i := t.Find(g[start:]); i >= 0 {
			return bow + float64(t.Levels[len(g)-start-1].LogProb[i])
		}
		if start < len(g)-1 {
			if j := t.Find(g[start : len(g)-1]); j >= 0 {
				bow += float64(t.Levels[len(g)-start-2].LogBackoff[j])
			}
		}
	}
	return math.Inf(-1) // unreachable for a word of the vocabulary
}

// Compare orders two id sequences lexicographically.
func Compare(a, b []uint32) int {
	for i := 0; i < len(a) && i < len(b); i++ {
		if a[i] != b[i] {
			if a[i] < b[i] {
				return -1
			}
			return 1
		}
	}
	return len(a) - len(b)
}

// Check reports the first violation of the conventions above: unsorted or
// duplicate vocabulary or entries, ids out of range, missing markers,
// mismatched column lengths, or a k-gram whose prefix is not stored.
func (t *Tables) Check() error {
	if len(t.Levels) == 0 || len(t.Levels) > MaxOrder {
		return fmt.Errorf("tables: order %d outside 1..%d", len(t.Levels), MaxOrder)
	}
	for i := 1; i < len(t.Vocab); i++ {
		if t.Vocab[i-1] >= t.Vocab[i] {
			return fmt.Errorf("tables: vocabulary not sorted or duplicated at id %d (%q)", i, t.Vocab[i])
		}
	}
	for _, m := range []string{SentenceStart, SentenceEnd, Unknown} {
		if _, ok := t.ID(m); !ok {
			return fmt.Errorf("tables: vocabulary lacks %s", m)
		}
	}
	// The orders are checked on their own goroutines; the error of the
	// lowest order that has one is reported.
	errs := make([]error, len(t.Levels))
	var wg sync.WaitGroup
	for k := 1; k <= len(t.Levels); k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[k-1] = t.checkOrder(k)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// checkOrder checks order k's entries for Check.
func (t *Tables) checkOrder(k int) error {
	V := uint32(len(t.Vocab))
	lv := &t.Levels[k-1]
	n := len(lv.LogProb)
	if len(lv.Words) != k*n {
		return fmt.Errorf("tables: order %d has %d word ids for %d entries", k, len(lv.Words), n)
	}
	if k < len(t.Levels) && len(lv.LogBackoff) != n {
		return fmt.Errorf("tables: order %d has %d back-off weights for %d entries", k, len(lv.LogBackoff), n)
	}
	if k == len(t.Levels) && lv.LogBackoff != nil {
		return fmt.Errorf("tables: highest order %d carries back-off weights", k)
	}
	if k == 1 {
		if n != len(t.Vocab) {
			return fmt.Errorf("tables: %d unigrams for a vocabulary of %d words", n, len(t.Vocab))
		}
		for i := 0; i < n; i++ {
			if lv.Words[i] != uint32(i) {
				return fmt.Errorf("tables: unigram %d holds word id %d", i, lv.Words[i])
			}
		}
		return nil
	}
	// Entries are sorted, so their contexts come in order: one merge
	// pass with the order below finds each.
	lower, parent := t.Levels[k-2].Words, 0
	for i := 0; i < n; i++ {
		g := lv.Words[k*i : k*i+k]
		for _, id := range g {
			if id >= V {
				return fmt.Errorf("tables: order %d entry %d: word id %d outside vocabulary of %d", k, i, id, V)
			}
		}
		if i > 0 && Compare(lv.Words[k*(i-1):k*i], g) >= 0 {
			return fmt.Errorf("tables: order %d entry %d out of order or duplicated", k, i)
		}
		if k == 2 {
			continue // every word is a unigram
		}
		for parent < len(lower)/(k-1) && Compare(lower[(k-1)*parent:(k-1)*parent+k-1], g[:k-1]) < 0 {
			parent++
		}
		if parent == len(lower)/(k-1) || Compare(lower[(k-1)*parent:(k-1)*parent+k-1], g[:k-1]) != 0 {
			return fmt.Errorf("tables: order %d entry %d (%s): its context is not stored", k, i, t.Words(g))
		}
	}
	return nil
}

// Words renders an id sequence as space-separated words.
func (t *Tables) Words(g []uint32) string {
	s := ""
	for i, id := range g {
		if i > 0 {
			s += " "
		}
		if int(id) < len(t.Vocab) {
			s += t.Vocab[id]
		} else {
			s += fmt.Sprintf("#%d", id)
		}
	}
	return s
}
