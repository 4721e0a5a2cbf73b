package counts

import (
	"maps"
	"slices"

	"ingot/compile/tables"
	"ingot/compile/vocab"
)

// UseVocabulary makes the counter map every token onto the fixed word list
// l while counting: a token outside the list (a literal <unk> included)
// counts as <unk>, and the n-grams that become equal are summed. The
// listed words all join the vocabulary, with count 0 when never seen. Call
// it before adding text. With a list, Counts ignores its minWordCount (the
// list fixes the vocabulary).
func (c *Counter) UseVocabulary(l *vocab.List) { c.vocab = l }

// MapVocabulary returns c with its vocabulary fixed to the word list l, as
// the estimation notes pin it for count files: every word outside l (other
// than <s> and </s>) becomes <unk>, the counts of n-grams that become equal
// are summed, and every listed word is in the vocabulary, with count 0 when
// it has none. c is not changed.
func (c *Counts) MapVocabulary(l *vocab.List) *Counts {
	final := map[string]bool{tables.SentenceStart: true, tables.SentenceEnd: true, tables.Unknown: true}
	for _, w := range l.Words() {
		final[w] = true
	}
	vocabulary := slices.Sorted(maps.Keys(final))
	out := &Counts{Vocab: vocabulary, Levels: make([]Level, c.Order())}
	remap := make([]uint32, len(c.Vocab))
	for id, w := range c.Vocab {
		i, _ := out.ID(l.Map(w))
		remap[id] = i
	}
	uni := Level{Words: make([]uint32, len(vocabulary)), Counts: make([]uint64, len(vocabulary))}
	for i := range uni.Words {
		uni.Words[i] = uint32(i)
	}
	for id, n := range c.Levels[0].Counts {
		uni.Counts[remap[id]] += n
	}
	out.Levels[0] = uni
	for k := 2; k <= c.Order(); k++ {
		out.Levels[k-1] = remapLevel(k, c.Levels[k-1].Words, c.Levels[k-1].Counts, remap)
	}
	return out
}
