package counts

import (
	"cmp"
	"fmt"
	"io"
	"slices"

	"ingot/compile/tables"
	"ingot/compile/text"
)

// A stream yields entries in increasing order (by length, then
// lexicographically) under ids of one shared vocabulary.
type stream interface {
	// next returns the next entry (ids valid until the next call, read
	// only) or io.EOF.
	next() ([]uint32, uint64, error)
}

// binSource is a binary count file being read as one of Load's sources.
type binSource struct {
	src int
	r   *Reader
	// entries, when not nil, are the entries per order its end record
	// announces (announced).
	entries []uint64
}

// readerStream maps a Reader's ids through a monotone remap (so the order
// of its entries is kept).
type readerStream struct {
	r     *Reader
	remap []uint32
	ids   []uint32
}

// at is where the reader stands after the entry last returned: that
// entry's index and its block's offset.
func (s *readerStream) at() position { return position{s.r.Index(), s.r.Offset()} }

// position is where an entry of a count file stands, for error messages.
type position struct {
	index  uint64
	offset int64
}

// identity reports whether the remap keeps every id.
func (s *readerStream) identity() bool {
	for i, id := range s.remap {
		if id != uint32(i) {
			return false
		}
	}
	return true
}

func (s *readerStream) next() ([]uint32, uint64, error) {
	ids, n, err := s.r.Next()
	if err != nil {
		return nil, 0, err
	}
	out := s.ids[:len(ids)]
	for i, id := range ids {
		out[i] = s.remap[id]
	}
	return out, n, nil
}

// countsStream walks a Counts: every order, zero counts and the unigram <s>
// left out, ids remapped monotonically.
type countsStream struct {
	c     *Counts
	remap []uint32
	start uint32
	k, i  int
	ids   []uint32
}

func (s *countsStream) next() ([]uint32, uint64, error) {
	for s.k <= len(s.c.Levels) {
		lv := &s.c.Levels[s.k-1]
		for s.i < len(lv.Counts) {
			i := s.i
			s.i++
			n := lv.Counts[i]
			if n == 0 || s.k == 1 && uint32(i) == s.start {
				continue
			}
			out := s.ids[:s.k]
			for j, id := range lv.Words[s.k*i : s.k*i+s.k] {
				out[j] = s.remap[id]
			}
			return out, n, nil
		}
		s.k++
		s.i = 0
	}
	return nil, 0, io.EOF
}

// unionVocab returns the sorted union of sorted word lists plus the three
// markers, and for each list the map from its ids to the union's.
func unionVocab(lists [][]string) ([]string, [][]uint32) {
	var all []string
	for _, l := range lists {
		all = append(all, l...)
	}
	all = append(all, tables.SentenceStart, tables.SentenceEnd, tables.Unknown)
	slices.Sort(all)
	all = slices.Compact(all)
	remaps := make([][]uint32, len(lists))
	for li, l := range lists {
		m := make([]uint32, len(l))
		j := 0
		for i, w := range l {
			for all[j] != w {
				j++
			}
			m[i] = uint32(j)
		}
		remaps[li] = m
	}
	return all, remaps
}

// merger runs a k-way merge of streams, summing equal entries.
type merger struct {
	streams []stream
	heads   [][]uint32 // current entry of each stream (copied)
	counts  []uint64
	live    []int      // streams not exhausted, kept as a binary heap on heads
	at      []position // where each count file's head stands
	taken   position   // where the entry next returned stood in its first stream
	// headTaken is set when fillOne has handed on the head of the one
	// stream.
	headTaken bool
}

func newMerger(streams []stream) (*merger, error) {
	m := &merger{streams: streams, heads: make([][]uint32, len(streams)), counts: make([]uint64, len(streams)), at: make([]position, len(streams))}
	for i := range streams {
		m.heads[i] = make([]uint32, 0, tables.MaxOrder)
		ok, err := m.advance(i)
		if err != nil {
			return nil, err
		}
		if ok {
			m.live = append(m.live, i)
		}
	}
	for i := len(m.live)/2 - 1; i >= 0; i-- {
		m.down(i)
	}
	return m, nil
}

// errStream wraps a stream's error with the stream's index.
type errStream struct {
	stream int
	err    error
}

func (e *errStream) Error() string { return e.err.Error() }
func (e *errStream) Unwrap() error { return e.err }

func (m *merger) advance(i int) (bool, error) {
	ids, n, err := m.streams[i].next()
	if err == io.EOF {
		return false, nil
	}
	if err != nil {
		return false, &errStream{i, err}
	}
	m.heads[i] = append(m.heads[i][:0], ids...)
	m.counts[i] = n
	if rs, ok := m.streams[i].(*readerStream); ok {
		m.at[i] = rs.at()
	}
	return true, nil
}

func (m *merger) less(a, b int) bool {
	c := compareEntry(m.heads[m.live[a]], m.heads[m.live[b]])
	return c < 0 || c == 0 && m.live[a] < m.live[b]
}

func (m *merger) down(i int) {
	n := len(m.live)
	for {
		l := 2*i + 1
		if l >= n {
			return
		}
		j := l
		if r := l + 1; r < n && m.less(r, l) {
			j = r
		}
		if !m.less(j, i) {
			return
		}
		m.live[i], m.live[j] = m.live[j], m.live[i]
		i = j
	}
}

// next returns the next distinct entry with its summed count and the
// lowest-numbered stream that held it (where it stood there is in
// m.taken), or io.EOF. The ids are valid until the next call.
func (m *merger) next(out []uint32) ([]uint32, uint64, int, error) {
	if len(m.live) == 0 {
		return nil, 0, 0, io.EOF
	}
	first := m.live[0]
	m.taken = m.at[first]
	if len(m.streams) == 1 {
		return m.nextOfOne(out)
	}
	out = append(out[:0], m.heads[first]...)
	var sum uint64
	for len(m.live) > 0 && compareEntry(m.heads[m.live[0]], out) == 0 {
		i := m.live[0]
		if s := sum + m.counts[i]; s < sum {
			return nil, 0, i, &errStream{i, fmt.Errorf("count of %d-gram overflows 64 bits", len(out))}
		} else {
			sum = s
		}
		ok, err := m.advance(i)
		if err != nil {
			return nil, 0, i, err
		}
		if !ok {
			last := len(m.live) - 1
			m.live[0] = m.live[last]
			m.live = m.live[:last]
		}
		m.down(0)
	}
	return out, sum, first, nil
}

// nextOfOne is next for a merge of one stream, which has nothing to sum:
// its entries come in strictly increasing order (a Reader checks it; a
// table holds each n-gram once), so the heap and the comparisons go.
func (m *merger) nextOfOne(out []uint32) ([]uint32, uint64, int, error) {
	out = append(out[:0], m.heads[0]...)
	n := m.counts[0]
	ok, err := m.advance(0)
	if err != nil {
		return nil, 0, 0, err
	}
	if !ok {
		m.live = m.live[:0]
	}
	return out, n, 0, nil
}

// mergeSources merges the text counts gathered in b with binary sources.
func mergeSources(order, maxSeen int, b *builder, bins []binSource, sources []Source) (*Counts, error) {
	ms, err := openMerge(b, bins, sources)
	if err != nil {
		return nil, err
	}
	m, vocab, textCounts, srcOf, streamErr := ms.m, ms.vocab, ms.textCounts, ms.srcOf, ms.streamErr
	start, _ := find(vocab, tables.SentenceStart)
	c := &Counts{Vocab: vocab, Levels: make([]Level, order)}
	uni := Level{Words: make([]uint32, len(vocab)), Counts: make([]uint64, len(vocab))}
	for i := range uni.Words {
		uni.Words[i] = uint32(i)
	}
	c.Levels[0] = uni
	// Orders 3 and up are linked (checking that each entry's prefix and
	// suffix are counted) on other goroutines, each order once the order
	// below it is complete (linkBehind), while this one stores the
	// entries.
	lb := startLinkBehind(len(vocab))
	defer lb.finish()
	ld := &loader{c: c, lb: lb, order: order, start: start, top: 1}
	// Room at once for the entries of each order that the largest file
	// announces (the merge holds at least as many).
	for k := 2; k <= order; k++ {
		var n uint64
		for _, s := range bins {
			if k <= len(s.entries) {
				n = max(n, s.entries[k-1])
			}
		}
		if n > 0 {
			c.Levels[k-1] = Level{Words: make([]uint32, 0, uint64(k)*n), Counts: make([]uint64, 0, n)}
			hugePagesOf(c.Levels[k-1].Words)
			hugePagesOf(c.Levels[k-1].Counts)
			if k == 2 {
				ld.parent2, ld.suffix2 = make([]int32, 0, n), make([]int32, 0, n)
			}
		}
	}
	// missing reports an entry g whose prefix (or suffix) is not counted.
	missing := func(g []uint32, prefixMissing bool, w where) error {
		miss, sub := "prefix", g[:len(g)-1]
		if !prefixMissing {
			miss, sub = "suffix", g[1:]
		}
		msg := fmt.Sprintf("%q has no count for its %s %q", joinWords(vocab, g), miss, joinWords(vocab, sub))
		if src := srcOf[w.from]; src >= 0 {
			return fmt.Errorf("%s: entry %d (block at offset %d): %s", sources[src].Name, w.at.index, w.at.offset, msg)
		}
		return b.textError(g, vocab, sources, msg)
	}
	var read readOutcome
	if s, ok := m.streams[0].(*readerStream); ok && len(m.streams) == 1 {
		read = ld.readOne(m, s)
	} else {
		read = ld.readMerged(m)
	}
	if read.bad != nil {
		return nil, missing(read.bad.g, read.bad.prefixMissing, read.bad.where)
	}
	if read.err == nil {
		ld.endOrder()
	}
	// The first entry that linkBehind found lacking its prefix or suffix,
	// once every entry sent to it is linked, comes before an error of the
	// read after it.
	if f := lb.finish(); f != nil {
		w := f.where
		if ld.one {
			w = ld.whereOf(f.k, f.i)
		}
		return nil, missing(c.Gram(f.k, f.i), f.prefixMissing, w)
	}
	if read.err != nil {
		return nil, streamErr(read.err)
	}
	maxSeen = max(maxSeen, ld.maxSeen)
	links := lb.links
	c.Links = &links
	if maxSeen == 0 {
		return nil, fmt.Errorf("no n-grams in %s", names(sources))
	}
	if maxSeen < order {
		// Binary files record the order they were counted at: counted at
		// order or above, the missing orders have no n-gram to hold. So
		// when every n-gram of the top order is a whole sentence.
		counted := textCounts == nil
		for _, s := range bins {
			counted = counted && s.r.Header().Order >= order
		}
		if !counted && !c.wholeSentences(maxSeen) {
			return nil, fmt.Errorf("counts hold orders up to %d, order %d asked", maxSeen, order)
		}
		c.Truncate(maxSeen)
	}
	for _, n := range c.Levels[0].Counts {
		if n > 0 {
			return c, nil
		}
	}
	return nil, fmt.Errorf("no unigram counts in %s", names(sources))
}

// loader stores the entries of a merge in a Counts, order by order, and
// hands the runs of entries of orders 3 and up to a linkBehind.
type loader struct {
	c       *Counts
	lb      *linkBehind
	order   int
	start   uint32 // the id of <s>
	maxSeen int    // the highest order met
	top     int    // the highest order stored so far
	task    *linkTask
	// The links of order 2, found as its entries are stored.
	parent2, suffix2 []int32
	// With one count file read straight (one): where its entries stand,
	// kept per block rather than per entry (whereOf).
	one    bool
	first  [tables.MaxOrder + 1]uint64 // the file's index of order k's first entry
	blocks []blockStart
}

// blockStart is the file's index of the first entry read from a block,
// and the block's offset.
type blockStart struct {
	index  uint64
	offset int64
}

// readOutcome is how reading a merge ended: at an order-2 entry whose
// prefix or suffix is not counted, at an error of the merge, or (both nil)
// at its end or at an entry linkBehind found lacking.
type readOutcome struct {
	bad *unlinked
	err error
}

// unlinked is an entry found lacking its prefix or suffix as it is read.
type unlinked struct {
	g             []uint32
	prefixMissing bool
	where         where
}

// add stores the entry g (order k = len(g)) with count n; w tells where it
// stood, kept for orders 3 and up when the loader reads more than one
// file. It returns the entry when it is of order 2 and lacks its prefix or
// suffix.
func (ld *loader) add(g []uint32, n uint64, w func() where) *unlinked {
	k := len(g)
	if k > ld.order {
		return nil
	}
	ld.maxSeen = max(ld.maxSeen, k)
	c := ld.c
	if k == 1 {
		c.Levels[0].Counts[g[0]] = n
		return nil
	}
	for ld.top < k {
		ld.endOrder()
		ld.top++
	}
	if k == 2 {
		// Unigrams are looked up directly.
		uni := c.Levels[0].Counts
		if hasPrefix, hasSuffix := g[0] == ld.start || uni[g[0]] > 0, g[1] == ld.start || uni[g[1]] > 0; !hasPrefix || !hasSuffix {
			return &unlinked{g: g, prefixMissing: !hasPrefix, where: w()}
		}
		ld.parent2 = append(tables.Grow(ld.parent2, 1), int32(g[0]))
		ld.suffix2 = append(tables.Grow(ld.suffix2, 1), int32(g[1]))
	}
	lv := &c.Levels[k-1]
	lv.Words = append(tables.Grow(lv.Words, k), g...)
	lv.Counts = append(tables.Grow(lv.Counts, 1), n)
	if k >= 3 {
		if ld.task == nil {
			ld.task = &linkTask{k: k, lo: len(lv.Counts) - 1, room: cap(lv.Counts)}
			if !ld.one {
				ld.task.where = ld.lb.whereRoom()
			}
		}
		ld.task.n++
		if !ld.one {
			ld.task.where = append(ld.task.where, w())
		}
	}
	return nil
}

// send hands the run of entries gathered to the linkBehind.
func (ld *loader) send() {
	if t := ld.task; t != nil {
		t.words = ld.c.Levels[t.k-1].Words[t.k*t.lo : t.k*(t.lo+t.n)]
		ld.lb.tasks <- t
		ld.task = nil
	}
}

// endOrder completes the highest order stored.
func (ld *loader) endOrder() {
	ld.send()
	if ld.top >= 2 {
		ld.lb.tasks <- &linkTask{k: ld.top, end: true, words: ld.c.Levels[ld.top-1].Words, parent: ld.parent2, suffix: ld.suffix2}
	}
}

// readMerged stores the entries of the merge m, decoded and merged on
// another goroutine a few batches ahead (readAhead).
func (ld *loader) readMerged(m *merger) readOutcome {
	a := readAhead(m)
	defer a.Close()
	for {
		bt := a.nextBatch()
		for x := range bt.entries {
			e := &bt.entries[x]
			if bad := ld.add(e.ids, e.count, func() where { return where{e.from, e.at} }); bad != nil {
				return readOutcome{bad: bad}
			}
		}
		ld.send()
		if ld.lb.failed.Load() || bt.err == io.EOF {
			return readOutcome{}
		}
		if bt.err != nil {
			return readOutcome{err: bt.err}
		}
	}
}

// readOne stores the entries of the merge m of one count file s, read
// straight from it on this goroutine: no batches to hand over, no copies
// in the merger, and where each entry stands kept per block.
func (ld *loader) readOne(m *merger, s *readerStream) readOutcome {
	ld.one = true
	if len(m.live) == 0 {
		return readOutcome{}
	}
	identity := s.identity()
	// The file's blocks are read and decompressed on another goroutine.
	s.r.ReadAhead()
	defer s.r.StopAhead()
	// The head the merger read first.
	g, n, at := m.heads[0], m.counts[0], m.at[0]
	m.live = m.live[:0]
	var ids []uint32
	for {
		k := len(g)
		if k != ld.top && k >= 3 && k <= ld.order {
			ld.first[k] = at.index
		}
		if nb := len(ld.blocks); nb == 0 || ld.blocks[nb-1].offset != at.offset {
			ld.blocks = append(ld.blocks, blockStart{at.index, at.offset})
		}
		if bad := ld.add(g, n, func() where { return where{0, at} }); bad != nil {
			return readOutcome{bad: bad}
		}
		if ld.task != nil && ld.task.n == aheadBatch {
			ld.send()
			if ld.lb.failed.Load() {
				return readOutcome{}
			}
		}
		var err error
		g, n, err = s.r.Next()
		if err == io.EOF {
			return readOutcome{}
		}
		if err != nil {
			ld.send()
			return readOutcome{err: &errStream{0, err}}
		}
		if !identity {
			ids = ids[:0]
			for _, id := range g {
				ids = append(ids, s.remap[id])
			}
			g = ids
		}
		at = s.at()
	}
}

// whereOf returns where entry i of order k stood in the one count file
// readOne read.
func (ld *loader) whereOf(k, i int) where {
	index := ld.first[k] + uint64(i)
	b, _ := slices.BinarySearchFunc(ld.blocks, index, func(b blockStart, x uint64) int { return cmp.Compare(b.index, x) })
	if b == len(ld.blocks) || ld.blocks[b].index > index {
		b--
	}
	return where{0, position{index, ld.blocks[b].offset}}
}

func hasEntries(b *builder) bool {
	for k := range b.grams {
		if b.grams[k].len() > 0 {
			return true
		}
	}
	return false
}

// textError reports msg at the text line where the n-gram g (ids of vocab)
// was first seen.
func (b *builder) textError(g []uint32, vocab []string, sources []Source, msg string) error {
	prov := make([]uint32, len(g))
	for i, id := range g {
		prov[i] = b.ids[vocab[id]]
	}
	t := &b.grams[len(g)-1]
	if i := b.lookup(prov); i >= 0 {
		return &text.Error{File: sources[t.file[i]].Name, Line: t.line[i], Msg: msg}
	}
	return fmt.Errorf("%s", msg)
}

func joinWords(vocab []string, g []uint32) string {
	s := ""
	for i, id := range g {
		if i > 0 {
			s += " "
		}
		s += vocab[id]
	}
	return s
}

// merging is a k-way merge of count sources under their union vocabulary.
type merging struct {
	m          *merger
	vocab      []string
	textCounts *Counts // the text sources' counts, or nil
	streams    []stream
	srcOf      []int // source index of each stream, -1 for the text counts
	streamErr  func(error) error
}

// openMerge starts the merge of the text counts gathered in b with the
// binary sources.
func openMerge(b *builder, bins []binSource, sources []Source) (*merging, error) {
	ms := &merging{}
	lists := [][]string{}
	if hasEntries(b) {
		ms.textCounts = b.finish(nil, nil)
		lists = append(lists, ms.textCounts.Vocab)
	}
	for _, s := range bins {
		lists = append(lists, s.r.Header().Vocab)
	}
	vocab, remaps := unionVocab(lists)
	ms.vocab = vocab
	if ms.textCounts != nil {
		st, _ := ms.textCounts.ID(tables.SentenceStart)
		ms.streams = append(ms.streams, &countsStream{c: ms.textCounts, remap: remaps[0], start: st, k: 1, ids: make([]uint32, tables.MaxOrder)})
		ms.srcOf = append(ms.srcOf, -1)
		remaps = remaps[1:]
	}
	for i, s := range bins {
		ms.streams = append(ms.streams, &readerStream{r: s.r, remap: remaps[i], ids: make([]uint32, tables.MaxOrder)})
		ms.srcOf = append(ms.srcOf, s.src)
	}
	ms.streamErr = func(err error) error {
		if es, ok := err.(*errStream); ok {
			if src := ms.srcOf[es.stream]; src >= 0 {
				return fmt.Errorf("%s: %w", sources[src].Name, es.err)
			}
			return es.err
		}
		return err
	}
	m, err := newMerger(ms.streams)
	if err != nil {
		return nil, ms.streamErr(err)
	}
	ms.m = m
	return ms, nil
}
