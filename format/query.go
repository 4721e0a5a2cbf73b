package format

import (
	"math"

	"ingot/compile/tables"
)

// Order returns the model's order N, the length of its longest n-grams.
func (m *Model) Order() int { return m.order }

// VocabSize returns the number of words, markers included.
func (m *Model) VocabSize() int { return m.vocabSize }

// StartID returns the id of <s>.
func (m *Model) StartID() uint32 { return m.start }

// EndID returns the id of </s>.
func (m *Model) EndID() uint32 { return m.end }

// UnknownID returns the id of <unk>.
func (m *Model) UnknownID() uint32 { return m.unknown }

// Info returns how the model was built, as recorded in its build-info
// section. The maps and slices are shared: treat them as read-only.
func (m *Model) Info() tables.Info { return m.info }

// SuffixClosed reports whether the writer recorded that every stored k-gram's
// (k-1)-word suffix is stored too. Queries are exact either way.
func (m *Model) SuffixClosed() bool { return m.flags&FlagSuffixClosed != 0 }

// Digest returns the SHA-256 content digest recorded in the header.
func (m *Model) Digest() [32]byte { return m.digest }

// Sections returns the directory: every section's kind, encoding, order,
// offset, length and checksum, in directory order.
func (m *Model) Sections() []Section { return append([]Section(nil), m.sections...) }

// Count returns the number of entries of order k, or 0 for an order the model
// does not have.
func (m *Model) Count(k int) int {
	if k < 1 || k > m.order {
		return 0
	}
	return m.counts[k-1]
}

// ID returns the id of word and whether the vocabulary holds it: a lookup
// in the file's word hash (version 3), or a binary search of the mapped
// word list (versions 1 and 2).
func (m *Model) ID(word string) (uint32, bool) {
	if m.wordHash != nil {
		return m.hashID(word)
	}
	lo, hi := 0, m.vocabSize
	for lo < hi {
		mid := int(uint(lo+hi) >> 1)
		if string(m.wordBytes(uint32(mid))) < word {
			lo = mid + 1
		} else {
			hi = mid
		}
	}
	if lo < m.vocabSize && string(m.wordBytes(uint32(lo))) == word {
		return uint32(lo), true
	}
	return 0, false
}

// Word returns the word with the given id, or "" for an id outside the
// vocabulary.
func (m *Model) Word(id uint32) string { return string(m.wordBytes(id)) }

// wordBytes returns the bytes of word id, or nil when the id or the stored
// offsets are out of range.
func (m *Model) wordBytes(id uint32) []byte {
	a, b, ok := m.wordSpan(id)
	if !ok {
		return nil
	}
	return m.wordText[a:b]
}

// State is the context of running text, as a decoder carries it from word
// to word: for each suffix of the last (at most N-1) words, the entry that
// stores it, if any. The zero State is the empty context. States are small
// values; copy them freely.
//
// For a decoder that recombines hypotheses: two States of one model that
// are equal (==) predict every continuation alike, since the model's answer
// depends only on which suffixes of the context are stored. The converse
// does not hold for ==: contexts that differ only in words no stored
// n-gram reaches, or that keep different numbers of words, can be unequal
// States that still predict alike. Model.SameFuture tells exactly when two
// States predict alike.
type State struct {
	n    int                         // context length kept
	node [tables.MaxOrder - 1]uint32 // node[j-1]: entry of order j storing the length-j suffix, or noNode
}

// SameFuture reports whether the States a and b give every continuation
// the same probability, now and after any further words: the same entry,
// or none, stores each suffix of their contexts. Hypotheses whose States
// have the same future can be recombined.
func (m *Model) SameFuture(a, b State) bool {
	for j := 1; j < max(m.order, 1); j++ {
		na, nb := uint32(noNode), uint32(noNode)
		if j <= a.n {
			na = a.node[j-1]
		}
		if j <= b.n {
			nb = b.node[j-1]
		}
		if na != nb {
			return false
		}
	}
	return true
}

// Len returns the number of context words the state keeps.
func (s State) Len() int { return s.n }

// StartState returns the state at the start of a sentence: the context <s>.
func (m *Model) StartState() State {
	var s State
	if m.order >= 2 {
		s.n = 1
		s.node[0] = noNode
		if uint64(m.start) < uint64(m.vocabSize) {
			s.node[0] = m.start
		}
	}
	return s
}

// ContextState returns the state after the given context words, of which
// only the last N-1 matter.
func (m *Model) ContextState(context []uint32) State {
	var s State
	if keep := m.order - 1; len(context) > keep {
		context = context[len(context)-max(keep, 0):]
	}
	for _, w := range context {
		m.Next(&s, w)
	}
	return s
}

// Next returns log10 P(w | context of s) and moves s past w. It allocates
// nothing and costs at most one binary search per order.
//
// The caller maps words outside the vocabulary to UnknownID. Scoring <s>
// gives its stored -Inf; an id outside the vocabulary also scores -Inf and
// leaves a context that matches nothing.
func (m *Model) Next(s *State, w uint32) float64 {
	lp, _ := m.NextMatched(s, w)
	return lp
}

// NextMatched is Next that also returns the order of the stored n-gram
// whose probability was used: 1 for the unigram, up to the model's order,
// or 0 when w is outside the vocabulary. It allocates nothing either.
func (m *Model) NextMatched(s *State, w uint32) (logProb float64, matchedOrder int) {
	var child [tables.MaxOrder]uint32
	n := m.extensions(s, w, &child)
	logProb, matchedOrder = m.backOff(s, n, &child, nil)
	keep := min(n+1, max(m.order-1, 0))
	copy(s.node[:keep], child[:keep])
	s.n = keep
	return logProb, matchedOrder
}

// backOff applies the back-off rule to the extensions that extensions
// found for s and a word: the longest stored n-gram's probability, times
// the back-off weight of every stored context suffix longer than it. It is
// the one step both Next and Explain take; applied, when not nil, hears of
// each weight used (the suffix's length j and its log10 weight), longest
// first.
func (m *Model) backOff(s *State, n int, child *[tables.MaxOrder]uint32, applied func(j int, logBackoff float64)) (logProb float64, matchedOrder int) {
	bow := 0.0
	for j := n; j >= 0; j-- {
		if c := child[j]; c != noNode {
			return bow + float64(m.LogProbAt(j+1, int(c))), j + 1
		}
		if j > 0 {
			if h := s.node[j-1]; h != noNode {
				b := float64(m.LogBackoffAt(j, int(h)))
				if applied != nil {
					applied(j, b)
				}
				bow += b
			}
		}
	}
	return math.Inf(-1), 0
}

// extensions fills child[j] with the entry of order j+1 that stores the
// length-j suffix of s's context followed by w (noNode when not stored), for
// j = 0..n, and returns n, the context length that counts.
//
// Every model is prefix-closed: when a suffix is not stored, no extension of
// it is, so one child search per stored suffix finds them all.
func (m *Model) extensions(s *State, w uint32, child *[tables.MaxOrder]uint32) int {
	if m.version >= 3 {
		return m.extensions3(s, w, child)
	}
	n := min(max(s.n, 0), max(m.order-1, 0))
	child[0] = noNode
	if uint64(w) < uint64(m.vocabSize) {
		child[0] = w
	}
	for j := 1; j <= n; j++ {
		child[j] = m.findChild(j, s.node[j-1], w)
	}
	return n
}

// findChild returns the entry of order k+1 whose parent is entry parent of
// order k and whose last word is w, or noNode. It trusts no stored value.
func (m *Model) findChild(k int, parent uint32, w uint32) uint32 {
	if parent == noNode || k < 1 || k >= m.order {
		return noNode
	}
	return plainChild(m.levels[k-1].starts, m.levels[k].lastWords, parent, w)
}

// LogProb returns log10 P(w | context) by the back-off rule of package
// tables; only the last N-1 context words matter. Callers map words outside
// the vocabulary to UnknownID; an id outside the vocabulary scores -Inf.
func (m *Model) LogProb(context []uint32, w uint32) float64 {
	s := m.ContextState(context)
	return m.Next(&s, w)
}

// Explanation shows how one prediction was made.
type Explanation struct {
	// Context is the part of the given context that counts: its last N-1
	// words, oldest first.
	Context []uint32
	// Word is the predicted word.
	Word uint32
	// MatchedOrder is the order of the stored n-gram whose probability was
	// used (1 for the unigram), or 0 when the word is outside the vocabulary.
	MatchedOrder int
	// StoredLogProb is that n-gram's stored log10 probability.
	StoredLogProb float64
	// Backoffs lists the back-off weights applied, longest context first:
	// one for each stored context suffix longer than the match.
	Backoffs []Backoff
	// LogProb is the answer, the sum of the back-off weights and the stored
	// value; it equals Model.LogProb for the same query.
	LogProb float64
}

// Backoff is one back-off weight applied in an Explanation.
type Backoff struct {
	Context    []uint32 // the stored context, oldest word first
	LogBackoff float64  // its log10 back-off weight
}

// Explain computes log10 P(w | context) like LogProb and records each step.
func (m *Model) Explain(context []uint32, w uint32) Explanation {
	if keep := max(m.order-1, 0); len(context) > keep {
		context = context[len(context)-keep:]
	}
	ex := Explanation{
		Context: append([]uint32{}, context...),
		Word:    w,
		LogProb: math.Inf(-1),
	}
	s := m.ContextState(context)
	var child [tables.MaxOrder]uint32
	n := m.extensions(&s, w, &child)
	ex.LogProb, ex.MatchedOrder = m.backOff(&s, n, &child, func(j int, b float64) {
		ex.Backoffs = append(ex.Backoffs, Backoff{
			Context:    append([]uint32{}, context[len(context)-j:]...),
			LogBackoff: b,
		})
	})
	if k := ex.MatchedOrder; k > 0 {
		ex.StoredLogProb = float64(m.LogProbAt(k, int(child[k-1])))
	}
	return ex
}
