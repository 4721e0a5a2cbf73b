package format

import (
	"bytes"
	"fmt"
	"math"
	"strings"
	"unicode/utf8"
)

// Rule is one structural rule of full verification (spec/FORMAT.md §6.3),
// as CheckStructure applies it.
type Rule int

// The structural rules, in the order CheckStructure applies them.
const (
	// RuleVocabulary: every word's offsets lie inside the word text, the
	// words are valid UTF-8 and ascend strictly bytewise; in version 3 the
	// word hash holds each id exactly once, where a lookup finds it.
	RuleVocabulary Rule = iota + 1
	// RuleChildStarts: child starts do not decrease and stay within the
	// order above, so every entry has one stored parent (prefix closure);
	// in version 3 every Elias-Fano sequence and contexts section is well
	// formed and every key decodes.
	RuleChildStarts
	// RuleWordIDs: every last word id is below the vocabulary size.
	RuleWordIDs
	// RuleSiblingOrder: the children of every entry ascend strictly.
	RuleSiblingOrder
	// RuleValues: no stored value is NaN or +Inf, no codebook index lies
	// outside its codebook, and codebooks ascend strictly.
	RuleValues
	// RuleSuffixClosed: when the summary flags the model suffix-closed,
	// every stored k-gram's (k-1)-word suffix is stored.
	RuleSuffixClosed
)

// Rules is a set of rules.
type Rules uint32

// Has reports whether r is in the set.
func (s Rules) Has(r Rule) bool { return s&(1<<r) != 0 }

func (s *Rules) add(r Rule) { *s |= 1 << r }

// checker carries one run of CheckStructure.
type checker struct {
	m      *Model
	report func(Rule, Problem) bool
	stop   bool
	failed Rules
	named  bool // the trie is sound: name entries by their words
}

func (c *checker) problem(r Rule, section string, offset int64, format string, args ...any) {
	c.failed.add(r)
	if !c.stop && !c.report(r, Problem{Section: section, Offset: offset, Msg: fmt.Sprintf(format, args...)}) {
		c.stop = true
	}
}

// CheckStructure applies every structural rule of full verification to the
// model, which Open accepted, and calls report with each defect found and
// the rule it breaks, rule by rule, until report returns false. It returns the rules it applied: a
// rule is skipped when an earlier one it needs failed (the sibling order
// needs sound child starts; the values of a version-3 model, the word ids
// and the sibling order need a trie that decodes; the suffix rule needs a
// sound trie and applies only to a model flagged suffix-closed). Both
// Model.Verify and the verify package check structure through it.
func (m *Model) CheckStructure(report func(Rule, Problem) bool) (applied Rules) {
	c := &checker{m: m, report: report}
	applied.add(RuleVocabulary)
	c.vocabulary()
	applied.add(RuleChildStarts)
	if err := m.decodeErr(); err != nil {
		fe, _ := err.(*FormatError)
		if fe == nil {
			fe = &FormatError{Section: "file", Msg: err.Error()}
		}
		c.problem(RuleChildStarts, fe.Section, fe.Offset, "%s", fe.Msg)
		return applied
	}
	c.childStarts()
	applied.add(RuleWordIDs)
	c.wordIDs()
	if !c.failed.Has(RuleChildStarts) {
		applied.add(RuleSiblingOrder)
		c.siblingOrder()
	}
	c.named = c.failed&(1<<RuleChildStarts|1<<RuleWordIDs) == 0
	applied.add(RuleValues)
	c.values()
	if m.SuffixClosed() && c.failed&(1<<RuleChildStarts|1<<RuleWordIDs|1<<RuleSiblingOrder) == 0 {
		applied.add(RuleSuffixClosed)
		c.suffixClosed()
	}
	return applied
}

func (c *checker) vocabulary() {
	m := c.m
	var prev []byte
	prevID := -1
	if m.startsCoded {
		all := make([]uint64, m.vocabSize+1)
		if err := m.wordStartsEF.decodeAll(all); err != nil {
			name, at := m.sectionOffset(KindWordStarts, 0, 0)
			c.problem(RuleVocabulary, name, at, "%v", err)
			return
		}
	}
	for id := 0; id < m.vocabSize; id++ {
		a, b, ok := m.wordSpan(uint32(id))
		if !ok {
			name, at := m.sectionOffset(KindWordStarts, 0, 4*id+4)
			if m.startsCoded {
				name, at = m.sectionOffset(KindWordStarts, 0, 0)
			}
			c.problem(RuleVocabulary, name, at, "word id %d spans bytes [%d, %d), outside the %d bytes of word text", id, a, b, len(m.wordText))
			prevID = -1
			continue
		}
		w := m.wordText[a:b]
		name, at := m.sectionOffset(KindWordText, 0, int(a))
		if !utf8.Valid(w) {
			c.problem(RuleVocabulary, name, at, "word id %d (%q) is not valid UTF-8", id, w)
		}
		if prevID >= 0 && bytes.Compare(prev, w) >= 0 {
			c.problem(RuleVocabulary, name, at, "word id %d (%q) does not sort after word id %d (%q): the vocabulary must ascend bytewise without duplicates", id, w, prevID, prev)
		}
		prev, prevID = w, id
	}
	if m.version >= 3 {
		if err := m.checkWordHash(); err != nil {
			fe := err.(*FormatError)
			c.problem(RuleVocabulary, fe.Section, fe.Offset, "%s", fe.Msg)
		}
	}
}

// childStarts checks the child starts of every order below the top, in
// place (versions 1 and 2) or decoded (version 3, whose decoding already
// checked them).
func (c *checker) childStarts() {
	m := c.m
	for k := 1; k < m.order; k++ {
		starts, _, _ := m.trie(k)
		n, above := m.Count(k), m.Count(k+1)
		name, off := m.sectionOffset(KindChildStarts, k, 0)
		if len(starts) != 4*(n+1) {
			c.problem(RuleChildStarts, name, off, "%d child starts for %d entries", len(starts)/4, n)
			continue
		}
		for i := 0; i < n; i++ {
			a, b := u32(starts[4*i:]), u32(starts[4*i+4:])
			if b < a {
				c.problem(RuleChildStarts, name, off+4*int64(i+1), "children of entry %d start at %d, before those of entry %d at %d: the entries of order %d in between have no stored context", i+1, b, i, a, k+1)
			}
			if uint64(b) > uint64(above) {
				c.problem(RuleChildStarts, name, off+4*int64(i+1), "children of entry %d start at %d, past the %d entries of order %d", i+1, b, above, k+1)
			}
		}
	}
}

func (c *checker) wordIDs() {
	m := c.m
	V := uint64(m.vocabSize)
	for k := 2; k <= m.order; k++ {
		_, words, _ := m.trie(k)
		name, off := m.sectionOffset(KindLastWords, k, 0)
		for i := 0; 4*i+4 <= len(words); i++ {
			if id := u32(words[4*i:]); uint64(id) >= V {
				c.problem(RuleWordIDs, name, off+4*int64(i), "entry %d holds word id %d, outside the vocabulary of %d words", i, id, V)
			}
		}
	}
}

func (c *checker) siblingOrder() {
	m := c.m
	for k := 1; k < m.order; k++ {
		starts, _, _ := m.trie(k)
		_, words, _ := m.trie(k + 1)
		name, off := m.sectionOffset(KindLastWords, k+1, 0)
		n := len(words) / 4
		for i := 0; 4*i+8 <= len(starts); i++ {
			a, b := int(u32(starts[4*i:])), int(u32(starts[4*i+4:]))
			for j := a + 1; j < b && j < n; j++ {
				if prev, cur := u32(words[4*j-4:]), u32(words[4*j:]); prev >= cur {
					c.problem(RuleSiblingOrder, name, off+4*int64(j), "entry %d (word id %d) does not come after its sibling entry %d (word id %d) under %s of order %d: entries must ascend", j, cur, j-1, prev, c.entryName(k, i), k)
				}
			}
		}
	}
}

// entryName names entry i of order k in messages: with its words once the
// trie is known to be sound.
func (c *checker) entryName(k, i int) string {
	if !c.named {
		return fmt.Sprintf("entry %d", i)
	}
	return fmt.Sprintf("entry %d (%q)", i, c.m.words(c.m.Gram(k, i, nil)))
}

// words spells out word ids, separated by spaces.
func (m *Model) words(g []uint32) string {
	s := make([]string, len(g))
	for j, id := range g {
		s[j] = m.Word(id)
	}
	return strings.Join(s, " ")
}

func (c *checker) values() {
	m := c.m
	for k := 1; k <= m.order; k++ {
		lv := &m.levels[k-1]
		c.codebook(KindProbCodebook, k, &lv.probs)
		c.tiers(KindProbabilities, k, &lv.probs)
		for i := 0; i < m.Count(k); i++ {
			p := float64(lv.probs.at(i))
			if !math.IsNaN(p) && !math.IsInf(p, 1) {
				continue
			}
			name, at := m.ValueOffset(k, i, false)
			if idx, ok := m.Index(k, i, false); ok && math.IsNaN(p) {
				c.problem(RuleValues, name, at, "%s holds codebook index %d, outside the %d values of its codebook", c.entryName(k, i), idx, len(lv.probs.codebook)/4)
				continue
			}
			c.problem(RuleValues, name, at, "%s has log10 probability %v", c.entryName(k, i), p)
		}
		if k == m.order {
			break
		}
		c.codebook(KindBackoffCodebook, k, &lv.backoffs)
		c.tiers(KindBackoffs, k, &lv.backoffs)
		for i := 0; i < m.Count(k); i++ {
			b := float64(m.LogBackoffAt(k, i))
			if !math.IsNaN(b) && !math.IsInf(b, 1) {
				continue
			}
			name, at := m.ValueOffset(k, i, true)
			if idx, ok := m.Index(k, i, true); ok && math.IsNaN(b) {
				c.problem(RuleValues, name, at, "%s holds codebook index %d, outside the %d values of its codebook", c.entryName(k, i), idx, len(lv.backoffs.codebook)/4)
				continue
			}
			c.problem(RuleValues, name, at, "%s has log10 back-off weight %v", c.entryName(k, i), b)
		}
	}
}

// codebook checks the codebook of a quantized column: no NaN level, levels
// strictly ascending (spec/FORMAT.md §4, kinds 10 and 11).
func (c *checker) codebook(kind SectionKind, k int, col *column) {
	levels := len(col.codebook) / 4
	for j := 0; j < levels; j++ {
		x := floatAt(col.codebook, j)
		name, at := c.m.sectionOffset(kind, k, 4*j)
		switch {
		case math.IsNaN(float64(x)):
			c.problem(RuleValues, name, at, "codebook value %d is NaN", j)
		case j > 0 && !(floatAt(col.codebook, j-1) < x):
			c.problem(RuleValues, name, at, "codebook value %d (%v) does not ascend after %v", j, x, floatAt(col.codebook, j-1))
		}
	}
}

// tiers checks the table, escape counters and escape count of a tiered
// column (spec/FORMAT.md §4.8.6).
func (c *checker) tiers(kind SectionKind, k int, col *column) {
	if col.tier == nil {
		return
	}
	for _, p := range checkTiers(col.tier, col.packed, col.n, len(col.codebook)/4) {
		name, at := c.m.sectionOffset(kind, k, int(p.Offset))
		c.problem(RuleValues, name, at, "%s", p.Msg)
	}
}

// suffixClosed checks that the suffix of every stored n-gram of order 3 and
// up is stored (a bigram's suffix is a unigram), through the suffix links
// (SuffixLink), which one pass per order finds.
func (c *checker) suffixClosed() {
	m := c.m
	if m.order < 3 {
		return
	}
	t := m.suffixes()
	if t == nil {
		return // the trie does not decode: reported by the child-start rule
	}
	for k := 3; k <= m.order; k++ {
		name, off := m.sectionOffset(KindLastWords, k, 0)
		for e, s := range t.link[k-1] {
			if s != noNode {
				continue
			}
			g := m.Gram(k, e, nil)
			c.problem(RuleSuffixClosed, name, off+4*int64(e), "entry %d (%q) is stored but its suffix %q is not, though the model is flagged suffix-closed", e, m.words(g), m.words(g[1:]))
			if c.stop {
				return
			}
		}
	}
}

// ValueOffset names the section that stores the probability (backoff
// false) or back-off weight of entry i of order k and returns the offset of
// the value's first byte: where a message about the value points. For a
// packed column it is the byte holding the index's first bit; a version-3
// entry with no stored weight points at the start of its contexts section.
func (m *Model) ValueOffset(k, i int, backoff bool) (section string, offset int64) {
	kind, col := KindProbabilities, (*column)(nil)
	if k >= 1 && k <= m.order {
		col = &m.levels[k-1].probs
		if backoff {
			kind, col = KindBackoffs, &m.levels[k-1].backoffs
		}
	}
	if backoff && m.version >= 3 && k >= 1 && k < m.order {
		marked, r := m.levels[k-1].marks.rank(uint64(i))
		if !marked {
			return m.sectionOffset(KindContexts, k, 0)
		}
		i = int(r)
	}
	if col != nil && col.tier != nil {
		t := col.tier
		return m.sectionOffset(kind, k, tierHeader+len(t.table)+len(t.counters)+int(uint64(i)*uint64(t.bits)/8))
	}
	if col != nil && col.packed != nil {
		return m.sectionOffset(kind, k, packedHeader+int(uint64(i)*uint64(col.bits)/8))
	}
	return m.sectionOffset(kind, k, 4*i)
}

// gallop returns the first index in [lo, hi) of the plain uint32 column
// words whose value is at least w, or hi: it steps forward 1, 2, 4, ...
// and then halves the last step, so a search that moves a short way costs
// little.
func gallop(words []byte, lo, hi uint64, w uint32) uint64 {
	if lo >= hi || u32(words[4*lo:]) >= w {
		return lo
	}
	end := hi
	for step := uint64(1); ; step *= 2 {
		probe := lo + step
		if probe >= hi {
			break
		}
		if u32(words[4*probe:]) >= w {
			end = probe
			break
		}
		lo = probe
	}
	lo++ // words[lo-1] < w: the answer lies in [lo, end]
	for lo < end {
		mid := lo + (end-lo)/2
		if u32(words[4*mid:]) < w {
			lo = mid + 1
		} else {
			end = mid
		}
	}
	return lo
}
