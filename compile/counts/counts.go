// Package counts turns training text into n-gram counts and reads and
// writes count files, merging shards and checking that they describe a
// consistent set of n-grams. It is the only package that reads or writes
// count files; spec/COUNTS.md specifies both forms byte by byte.
//
// A count file comes in two forms, told apart by their first bytes, never
// by the file name:
//
//   - binary (what count writes by default): a header with the highest
//     order and the sorted word list, then blocks of sorted entries, each
//     block compressed with zstd and checked by CRC-32C, then an end record
//     with the entries and the sum of the counts per order. Writer and
//     Reader stream it.
//   - text, for interchange: one entry per line, the count first, a tab,
//     then the words joined by single spaces ("12<TAB>the cat").
//
// Lines and entries may come in any order across files, and an n-gram may
// appear several times, in one text file or across shards: its counts are
// summed. Orders 1..N are all present; the unigram <s> is implicit (it is
// never predicted, so never counted).
//
// Counting follows the sentence rules of the estimators: a sentence
// t1 .. tm becomes <s> t1 .. tm </s>, and for every predicted position and
// every order k whose span fits inside the sentence, the k-gram ending there
// is counted once. N-grams never cross sentences.
package counts

import (
	"bufio"
	"encoding/binary"
	"io"
	"slices"
	"strconv"
	"strings"

	"ingot/compile/tables"
)

// Counts holds the n-gram counts of orders 1..Order in the sort order of the
// model tables: words are ids into the bytewise-sorted Vocab, level 1 is dense
// over the vocabulary (count 0 for <s>, and for <unk> when it was never seen),
// and level k >= 2 lists k-grams in lexicographic order of their ids.
type Counts struct {
	Vocab  []string
	Levels []Level
	// Links, when not nil, are the links of Levels (tables.Link), as Load
	// found them while it checked the counts. Whoever changes the word
	// ids of Levels sets it to nil.
	Links *tables.Links
}

// Level holds the k-grams of one order and their counts.
type Level struct {
	Words  []uint32 // k ids per entry
	Counts []uint64
}

// Order returns the highest order held.
func (c *Counts) Order() int { return len(c.Levels) }

// Len returns the number of entries at order k.
func (c *Counts) Len(k int) int { return len(c.Levels[k-1].Counts) }

// Gram returns the ids of entry i at order k (aliasing the table).
func (c *Counts) Gram(k, i int) []uint32 { return c.Levels[k-1].Words[k*i : k*i+k] }

// ID returns the id of word w.
func (c *Counts) ID(w string) (uint32, bool) {
	i, ok := slices.BinarySearch(c.Vocab, w)
	return uint32(i), ok
}

// Find returns the index of g at order len(g), or -1.
func (c *Counts) Find(g []uint32) int {
	k := len(g)
	if k == 0 || k > len(c.Levels) {
		return -1
	}
	if k == 1 {
		if int(g[0]) < len(c.Vocab) {
			return int(g[0])
		}
		return -1
	}
	words := c.Levels[k-1].Words
	n := len(words) / k
	lo, hi := 0, n
	for lo < hi {
		m := int(uint(lo+hi) >> 1)
		if tables.Compare(words[k*m:k*m+k], g) < 0 {
			lo = m + 1
		} else {
			hi = m
		}
	}
	if lo < n && tables.Compare(words[k*lo:k*lo+k], g) == 0 {
		return lo
	}
	return -1
}

// Truncate keeps orders 1..n only.
func (c *Counts) Truncate(n int) {
	if n < len(c.Levels) {
		c.Levels = c.Levels[:n]
		if c.Links != nil && len(c.Links.Parent) > n {
			c.Links = c.Links.Lowest(n)
		}
	}
}

// WriteTo writes the counts in the text form: orders in increasing order,
// n-grams in byte order of their words within each order, each line the
// count, a tab and the words. The unigram <s> and zero counts are not
// written.
func (c *Counts) WriteTo(w io.Writer) (int64, error) {
	bw := bufio.NewWriterSize(w, 1<<16)
	var total int64
	var line []byte
	for k := 1; k <= len(c.Levels); k++ {
		lv := &c.Levels[k-1]
		for i, n := range lv.Counts {
			if n == 0 {
				continue
			}
			line = appendTextLine(line[:0], c.Vocab, lv.Words[k*i:k*i+k], n)
			m, err := bw.Write(line)
			total += int64(m)
			if err != nil {
				return total, err
			}
		}
	}
	return total, bw.Flush()
}

// appendTextLine appends one line of the text form.
func appendTextLine(line []byte, vocab []string, g []uint32, n uint64) []byte {
	line = strconv.AppendUint(line, n, 10)
	line = append(line, '\t')
	for j, id := range g {
		if j > 0 {
			line = append(line, ' ')
		}
		line = append(line, vocab[id]...)
	}
	return append(line, '\n')
}

// builder collects n-grams under provisional ids (in order of first sight).
type builder struct {
	order int
	ids   map[string]uint32
	words []string
	grams []gramTable // grams[k-1]
	key   []byte
}

// gramTable holds the distinct k-grams of one order seen so far.
type gramTable struct {
	k     int
	index map[string]uint32 // packed provisional ids -> entry
	ids   []uint32          // k provisional ids per entry
	count []uint64
	file  []int32 // where the entry was first seen (count files only)
	line  []int
}

func (g *gramTable) len() int { return len(g.count) }

func (g *gramTable) gram(i int) []uint32 { return g.ids[g.k*i : g.k*i+g.k] }

func newBuilder(order int) *builder {
	b := &builder{order: order, ids: map[string]uint32{}}
	for k := 1; k <= order; k++ {
		b.grams = append(b.grams, gramTable{k: k, index: map[string]uint32{}})
	}
	for _, m := range []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown} {
		b.id(m)
	}
	return b
}

func (b *builder) id(w string) uint32 {
	if id, ok := b.ids[w]; ok {
		return id
	}
	id := uint32(len(b.words))
	w = strings.Clone(w)
	b.ids[w] = id
	b.words = append(b.words, w)
	return id
}

func (b *builder) pack(g []uint32) []byte {
	b.key = b.key[:0]
	for _, id := range g {
		b.key = binary.LittleEndian.AppendUint32(b.key, id)
	}
	return b.key
}

// lookup returns the entry index of g, or -1.
func (b *builder) lookup(g []uint32) int {
	if i, ok := b.grams[len(g)-1].index[string(b.pack(g))]; ok {
		return int(i)
	}
	return -1
}

// add counts the n-gram g (provisional ids) n times. It reports false when
// the sum would overflow.
func (b *builder) add(g []uint32, n uint64, file int32, line int) bool {
	t := &b.grams[len(g)-1]
	key := b.pack(g)
	if i, ok := t.index[string(key)]; ok {
		if t.count[i]+n < t.count[i] {
			return false
		}
		t.count[i] += n
		return true
	}
	t.index[string(key)] = uint32(len(t.count))
	t.ids = append(t.ids, g...)
	t.count = append(t.count, n)
	t.file = append(t.file, file)
	t.line = append(t.line, line)
	return true
}

// remapLevel returns the k-grams with ids (k per entry) and counts, each id
// replaced by remap[id], sorted, n-grams that became equal merged.
func remapLevel(k int, ids []uint32, count []uint64, remap []uint32) Level {
	flat := make([]uint32, len(ids))
	for i, id := range ids {
		flat[i] = remap[id]
	}
	return sortMerge(k, flat, count)
}

// sortMerge returns the level of k-grams whose ids are flat (k per entry)
// with the given counts, sorted, n-grams that are equal merged.
func sortMerge(k int, flat []uint32, count []uint64) Level {
	n := len(count)
	perm := make([]int32, n)
	for i := range perm {
		perm[i] = int32(i)
	}
	slices.SortFunc(perm, func(x, y int32) int {
		return tables.Compare(flat[k*int(x):k*int(x)+k], flat[k*int(y):k*int(y)+k])
	})
	lv := Level{Words: make([]uint32, 0, k*n), Counts: make([]uint64, 0, n)}
	for j, i := range perm {
		g := flat[k*int(i) : k*int(i)+k]
		if j > 0 && tables.Compare(lv.Words[len(lv.Words)-k:], g) == 0 {
			lv.Counts[len(lv.Counts)-1] += count[i]
			continue
		}
		lv.Words = append(lv.Words, g...)
		lv.Counts = append(lv.Counts, count[i])
	}
	return lv
}

// finish sorts the vocabulary and every order. replace, when not nil, maps a
// word to the word that stands for it (min word count, fixed word list);
// n-grams that become equal are merged. The words of extra join the
// vocabulary even when they have no count.
func (b *builder) finish(replace func(word string) string, extra []string) *Counts {
	final := map[string]bool{tables.SentenceStart: true, tables.SentenceEnd: true, tables.Unknown: true}
	for _, w := range extra {
		final[w] = true
	}
	target := make([]string, len(b.words))
	for id, w := range b.words {
		t := w
		if replace != nil {
			t = replace(w)
		}
		target[id] = t
		final[t] = true
	}
	vocab := make([]string, 0, len(final))
	for w := range final {
		vocab = append(vocab, w)
	}
	slices.Sort(vocab)
	newID := make(map[string]uint32, len(vocab))
	for i, w := range vocab {
		newID[w] = uint32(i)
	}
	remap := make([]uint32, len(b.words))
	for id := range b.words {
		remap[id] = newID[target[id]]
	}
	c := &Counts{Vocab: vocab, Levels: make([]Level, b.order)}
	uni := Level{Words: make([]uint32, len(vocab)), Counts: make([]uint64, len(vocab))}
	for i := range vocab {
		uni.Words[i] = uint32(i)
	}
	t1 := &b.grams[0]
	for i := 0; i < t1.len(); i++ {
		uni.Counts[remap[t1.ids[i]]] += t1.count[i]
	}
	c.Levels[0] = uni
	for k := 2; k <= b.order; k++ {
		t := &b.grams[k-1]
		c.Levels[k-1] = remapLevel(k, t.ids, t.count, remap)
	}
	return c
}
