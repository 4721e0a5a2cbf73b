package verify

import (
	"bytes"
	"fmt"
	"math"
	"sort"
	"strings"
	"unicode/utf8"

	"ingot/compile/tables"
	"ingot/format"
)

// span is the bytes of one section with its name and file offset, for
// reading uint32 columns in place and naming where a value lies.
type span struct {
	b    []byte
	off  int64
	name string
}

// u32 returns value i of a uint32 column; the caller keeps i in range.
func (s span) u32(i int) uint32 { return u32(s.b[4*i:]) }

// len32 returns the number of uint32 values the span holds.
func (s span) len32() int { return len(s.b) / 4 }

// at returns the file offset of value i of a uint32 or float32 column.
func (s span) at(i int) int64 { return s.off + 4*int64(i) }

// columns are the sections the table checks read, found once the format
// reader has accepted the file (so each exists once, with the length the
// summary gives).
type columns struct {
	wordStarts, wordText span
	starts               [tables.MaxOrder]span  // [k-1]: child starts of order k < N
	words                [tables.MaxOrder]span  // [k-1]: last words of order k >= 2
	probs, backoffs      [tables.MaxOrder]entry // for the offsets of values
	// named is set once the trie is known to be sound, so that an entry's
	// n-gram can be spelled out in problems.
	named bool
}

func (v *verifier) span(kind format.SectionKind, order int) span {
	e, ok := v.section(kind, order)
	if !ok {
		return span{name: format.Section{Kind: kind, Order: order}.Name()}
	}
	return span{b: v.data[e.Offset : e.Offset+e.Length], off: e.Offset, name: e.Name()}
}

// columns finds the trie's columns. In version 3 they are decoded by the
// format reader, which checks the succinct structures as it goes; its
// first finding is returned as the error.
func (v *verifier) columns() (*columns, error) {
	c := &columns{
		wordStarts: v.span(format.KindWordStarts, 0),
		wordText:   v.span(format.KindWordText, 0),
	}
	n := v.m.Order()
	for k := 1; k <= n; k++ {
		if k < n {
			c.starts[k-1] = v.span(format.KindChildStarts, k)
			c.backoffs[k-1], _ = v.section(format.KindBackoffs, k)
		}
		if k >= 2 {
			c.words[k-1] = v.span(format.KindLastWords, k)
		}
		c.probs[k-1], _ = v.section(format.KindProbabilities, k)
		if v.m.Version() >= 3 {
			starts, words, err := v.m.TrieColumns(k)
			if err != nil {
				return c, err
			}
			c.starts[k-1].b, c.words[k-1].b = starts, words
		}
	}
	return c, nil
}

// valueOffset returns the file offset of the value of entry i in a
// probabilities or back-offs section, plain or packed (spec §4.5).
func (v *verifier) valueOffset(e entry, i int) int64 {
	if e.Encoding != format.Packed {
		return e.Offset + 4*int64(i)
	}
	width := int64(0)
	if e.Length >= 4 {
		width = int64(u32(v.data[e.Offset:]))
	}
	return e.Offset + 8 + int64(i)*width/8
}

// gram returns the word ids of entry i of order k, by searching each
// parent in the child starts of the order below. It needs sound child
// starts (the prefix-closure check) to give the right answer, and never
// panics.
func (v *verifier) gram(cols *columns, k, i int) []uint32 {
	g := make([]uint32, k)
	for j := k; j >= 1; j-- {
		if j == 1 {
			g[0] = uint32(i)
			break
		}
		g[j-1] = v.m.WordAt(j, i)
		st := cols.starts[j-2]
		n := st.len32() - 1
		i = sort.Search(n, func(p int) bool { return int64(st.u32(p+1)) > int64(i) })
	}
	return g
}

// entryName names entry i of order k for problems: with its words once the
// trie is known to be sound.
func (v *verifier) entryName(cols *columns, k, i int) string {
	if !cols.named {
		return fmt.Sprintf("entry %d", i)
	}
	return fmt.Sprintf("entry %d (%q)", i, v.words(v.gram(cols, k, i)))
}

// words spells out word ids.
func (v *verifier) words(g []uint32) string {
	s := make([]string, len(g))
	for j, id := range g {
		s[j] = v.m.Word(id)
	}
	return strings.Join(s, " ")
}

// checkVocabulary checks every word's offsets, its UTF-8 and that the words
// ascend strictly bytewise (spec §4.3). The format reader checked the first
// and last offsets and the markers.
func (v *verifier) checkVocabulary(cols *columns) {
	c := Check{Name: CheckVocabulary, Status: Pass}
	defer func() { v.add(c) }()
	ws, text := cols.wordStarts, cols.wordText
	V := v.m.VocabSize()
	var prev []byte
	prevID := -1
	for id := 0; id < V && id+1 < ws.len32(); id++ {
		a, b := ws.u32(id), ws.u32(id+1)
		if a > b || uint64(b) > uint64(len(text.b)) {
			c.problem(ws.name, ws.at(id+1), "word id %d spans bytes [%d, %d), outside the %d bytes of word text", id, a, b, len(text.b))
			prevID = -1
			continue
		}
		w := text.b[a:b]
		if !utf8.Valid(w) {
			c.problem(text.name, text.off+int64(a), "word id %d (%q) is not valid UTF-8", id, w)
		}
		if prevID >= 0 && bytes.Compare(prev, w) >= 0 {
			c.problem(text.name, text.off+int64(a), "word id %d (%q) does not sort after word id %d (%q): the vocabulary must ascend bytewise without duplicates", id, w, prevID, prev)
		}
		prev, prevID = w, id
	}
	c.Detail = fmt.Sprintf("%d words, valid UTF-8, strictly ascending", V)
}

// checkPrefixClosure checks the child starts of every order below the top:
// non-decreasing from 0 to the number of entries of the order above, so
// that every entry of order k+1 has exactly one parent, the entry storing
// its first k words (spec §2, §4.6). In the trie this is prefix closure.
func (v *verifier) checkPrefixClosure(cols *columns) {
	c := Check{Name: CheckPrefixClosure, Status: Pass}
	defer func() { v.add(c) }()
	N := v.m.Order()
	for k := 1; k < N; k++ {
		st := cols.starts[k-1]
		n, above := v.m.Count(k), v.m.Count(k+1)
		if st.len32() != n+1 {
			c.problem(st.name, st.off, "%d child starts for %d entries", st.len32(), n)
			continue
		}
		for i := 0; i < n; i++ {
			a, b := st.u32(i), st.u32(i+1)
			if b < a {
				c.problem(st.name, st.at(i+1), "children of entry %d start at %d, before those of entry %d at %d: the entries of order %d in between have no stored context", i+1, b, i, a, k+1)
			}
			if uint64(b) > uint64(above) {
				c.problem(st.name, st.at(i+1), "children of entry %d start at %d, past the %d entries of order %d", i+1, b, above, k+1)
			}
		}
	}
	c.Detail = "child ranges well formed: the context of every stored n-gram is stored"
	if N == 1 {
		c.Detail = "a model of order 1 has no contexts to store"
	}
}

// checkIDs checks that every stored last word lies inside the vocabulary.
func (v *verifier) checkIDs(cols *columns) {
	c := Check{Name: CheckIDs, Status: Pass}
	defer func() { v.add(c) }()
	V := uint32(v.m.VocabSize())
	for k := 2; k <= v.m.Order(); k++ {
		w := cols.words[k-1]
		for i := 0; i < w.len32(); i++ {
			if id := w.u32(i); id >= V {
				c.problem(w.name, w.at(i), "entry %d holds word id %d, outside the vocabulary of %d words", i, id, V)
			}
		}
	}
	c.Detail = fmt.Sprintf("every word id below %d", V)
	cols.named = v.passed(CheckPrefixClosure) && c.Status == Pass
}

// checkOrder checks that the children of every entry ascend strictly by
// word id, which makes every order sorted lexicographically (spec §2, §4.4).
func (v *verifier) checkOrder(cols *columns) {
	c := Check{Name: CheckOrder, Status: Pass}
	defer func() { v.add(c) }()
	for k := 1; k < v.m.Order(); k++ {
		st, w := cols.starts[k-1], cols.words[k]
		for i := 0; i+1 < st.len32(); i++ {
			a, b := int(st.u32(i)), int(st.u32(i+1))
			for j := a + 1; j < b && j < w.len32(); j++ {
				if prev, cur := w.u32(j-1), w.u32(j); prev >= cur {
					c.problem(w.name, w.at(j), "entry %d (word id %d) does not come after its sibling entry %d (word id %d) under %s of order %d: entries must ascend", j, cur, j-1, prev, v.entryName(cols, k, i), k)
				}
			}
		}
	}
	c.Detail = "the entries under every context ascend by word id"
}

// checkValues checks every stored log10 probability and back-off weight,
// and every codebook.
func (v *verifier) checkValues(cols *columns) {
	c := Check{Name: CheckValues, Status: Pass}
	defer func() { v.add(c) }()
	m := v.m
	start := int(m.StartID())
	for k := 1; k <= m.Order(); k++ {
		v.checkCodebook(&c, k, false)
		ps := cols.probs[k-1]
		cb := len(m.Codebook(k, false))
		for i := 0; i < m.Count(k); i++ {
			p := float64(m.LogProbAt(k, i))
			isStart := k == 1 && i == start
			switch {
			case isStart && math.IsInf(p, -1):
			case isStart:
				c.problem(ps.Name(), v.valueOffset(ps, i), "the unigram <s> has log10 probability %v; <s> is never predicted and holds -Inf", p)
			case math.IsNaN(p) && cb > 0:
				idx, _ := m.Index(k, i, false)
				c.problem(ps.Name(), v.valueOffset(ps, i), "%s holds codebook index %d, outside the %d values of its codebook", v.entryName(cols, k, i), idx, cb)
			case math.IsNaN(p) || math.IsInf(p, 0):
				c.problem(ps.Name(), v.valueOffset(ps, i), "%s has log10 probability %v", v.entryName(cols, k, i), p)
			case p > 0:
				c.problem(ps.Name(), v.valueOffset(ps, i), "%s has log10 probability %v: a probability above 1", v.entryName(cols, k, i), p)
			}
		}
		if k == m.Order() {
			break
		}
		v.checkCodebook(&c, k, true)
		bs := cols.backoffs[k-1]
		cb = len(m.Codebook(k, true))
		for i := 0; i < m.Count(k); i++ {
			b := float64(m.LogBackoffAt(k, i))
			switch {
			case math.IsNaN(b) && cb > 0:
				idx, _ := m.Index(k, i, true)
				c.problem(bs.Name(), v.valueOffset(bs, i), "%s holds codebook index %d, outside the %d values of its codebook", v.entryName(cols, k, i), idx, cb)
			case math.IsNaN(b) || math.IsInf(b, 0):
				c.problem(bs.Name(), v.valueOffset(bs, i), "%s has log10 back-off weight %v", v.entryName(cols, k, i), b)
			}
		}
	}
	c.Detail = "no NaN or infinity (but the unigram <s>), no probability above 1, back-off weights finite"
}

// checkCodebook checks that a codebook, when the column has one, ascends
// strictly and holds no NaN (spec §4, kinds 10 and 11).
func (v *verifier) checkCodebook(c *Check, k int, backoff bool) {
	cb := v.m.Codebook(k, backoff)
	kind := format.KindProbCodebook
	if backoff {
		kind = format.KindBackoffCodebook
	}
	e, _ := v.section(kind, k)
	for j, x := range cb {
		switch {
		case math.IsNaN(float64(x)):
			c.problem(e.Name(), e.Offset+4*int64(j), "codebook value %d is NaN", j)
		case j > 0 && !(cb[j-1] < x):
			c.problem(e.Name(), e.Offset+4*int64(j), "codebook value %d (%v) does not ascend after %v", j, x, cb[j-1])
		}
	}
}
