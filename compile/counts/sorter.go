package counts

import (
	"bufio"
	"fmt"
	"io"
	"math/bits"
	"os"
	"path/filepath"
	"slices"
	"unsafe"

	"github.com/klauspost/compress/zstd"

	"ingot/compile/tables"
)

// gramHash is an open-addressing hash table, with linear probing, of the
// n-grams of orders 1..n that one worker counts. An n-gram is keyed by two
// integers packed in one uint64: the record index of its prefix (the
// n-gram without its last word; none for a unigram) and its last word id.
// Counting the n-grams that end at one position of a sentence, given the
// records of those that ended at the position before, costs one probe per
// order from 2 up (a unigram's record is found by its word, in uni) and
// one integer comparison per probe; no n-gram is ever hashed as a list of
// words. Records are kept in insertion order, so a prefix's
// record always comes before its extensions'; what the table holds is
// known exactly (bytesPerRecord). A slot holds, above the record index, a
// tag: bits of the key's hash, so that a probe passes over most slots of
// other keys without reading their records.
//
// The n-grams of the highest order, when top is set, take no record: no
// n-gram extends them, so nothing needs their record, and most of them
// are new (a record, a probe that misses the cache, and a share of the
// slot array's doublings each). Each occurrence appends its key to tops
// instead, and the sort (sortEntries) sums the repeated ones.
type gramHash struct {
	// pages hold the records, 1<<recPageBits to a page: a table grows a
	// page at a time and never copies its records (nor clears them twice).
	pages   [][]gramRec
	n       int      // records held
	order   []uint8  // order of each record
	slots   []uint32 // tag | record index + 1, 0 when empty; at most half full
	tagMask uint32   // the bits of a slot that hold the tag
	touched uint64   // what addRow read ahead (kept so that the reads stay)
	uni     []uint32 // record + 1 of each word's unigram, 0 when none: unigrams take no slot
	top     int      // the order counted in tops (0: none, every order in records)
	tops    []uint64 // key of each occurrence of an n-gram of order top
	maxCap  int      // records the budget allows (and keys in tops)
	limit   int      // records allowed now: maxCap, or less for a large vocabulary (see setWords)
}

type gramRec struct {
	key   uint64 // (prefix record + 1) << 32 | last word; the prefix part is 0 for a unigram
	count uint64
}

// bytesPerRecord bounds what one record costs, whatever the order: the
// record (key and count, 16 bytes), its order (1), and three slots of 4
// bytes (the slot array holds at most two per record the budget allows,
// and while it doubles the old array, half as long, is still held), and,
// with a list of the top order's keys (withTops), one key of 8 bytes there
// (the list holds at most as many keys as the table records). The sort
// reuses the slot array (a uint64 per record) and sorts the list in place,
// so it costs nothing more. The records are allocated a page at a time:
// up to one page (4 MiB) beyond.
func bytesPerRecord(withTops bool) int64 {
	if withTops {
		return 16 + 1 + 3*4 + 8
	}
	return 16 + 1 + 3*4
}

// unlimited is the record cap of a table without a budget.
const unlimited = 1 << 31

func gramKey(prefix uint32, word uint32) uint64 { return uint64(prefix+1)<<32 | uint64(word) }

// recPageBits is the log2 of the records in a page.
const recPageBits = 18

// newGramHash returns a table of at most maxCap records; top > 1 counts
// the n-grams of that order in a list of keys (at most maxCap too).
func newGramHash(maxCap, top int) *gramHash {
	t := &gramHash{maxCap: maxCap, limit: maxCap}
	if top > 1 {
		t.top = top
	}
	t.makeSlots(min(1<<12, 2*maxCap))
	if maxCap < unlimited {
		t.order = make([]uint8, 0, maxCap) // untouched pages cost nothing
		if t.top > 0 {
			t.tops = make([]uint64, 0, maxCap)
		}
	}
	return t
}

func (t *gramHash) len() int { return t.n }

// rec returns record i.
func (t *gramHash) rec(i uint32) *gramRec {
	return &t.pages[i>>recPageBits][i&(1<<recPageBits-1)]
}

// sortKeyBits is the width of a sorted entry's key: 64, narrower only in
// tests, so that small inputs reach the limits large ones reach.
var sortKeyBits = 64

// setWords lowers the limit so that a sorted entry (sortEntries) fits in
// 64 bits with a vocabulary of v words: two record positions and a word
// rank. With 2^16 words or fewer, up to 2^24-1 records; with more
// words, the table spills sooner.
func (t *gramHash) setWords(v int) {
	b := (sortKeyBits - bits.Len(uint(v))) / 2
	t.limit = t.maxCap
	if b < 31 && 1<<b-1 < t.limit {
		t.limit = 1<<b - 1
	}
}

// room reports whether k more records (or k-1 and a key of the top
// order) fit.
func (t *gramHash) room(k int) bool {
	return t.n+k <= t.limit && (t.top == 0 || len(t.tops) < t.maxCap)
}

// makeSlots replaces the slot array by an empty one of size entries. A
// record index + 1 never exceeds the number of records, which never
// exceeds size (the table is at most half full, one over while it grows),
// so it fits the bits below bits.Len(size); those above hold the tag.
func (t *gramHash) makeSlots(size int) {
	t.slots = nil // the old array can go before the new one is made
	t.slots = make([]uint32, size)
	hugePages(unsafe.Slice((*byte)(unsafe.Pointer(&t.slots[0])), 4*size))
	t.tagMask = ^uint32(0) << bits.Len(uint(size))
}

// slot returns the key's first slot to probe and its tag.
func (t *gramHash) slot(key uint64) (int, uint32) {
	key ^= key >> 33
	key *= 0xff51afd7ed558ccd
	key ^= key >> 33
	// The slot from the hash's high bits, the tag from its low ones.
	hi, _ := bits.Mul64(key, uint64(len(t.slots)))
	return int(hi), uint32(key) & t.tagMask
}

// add counts the n-gram key (of order k) n times and returns its record.
// The caller makes sure there is room for a new record. Counts saturate at
// the largest uint64 rather than wrap (no text holds 2^64 tokens).
func (t *gramHash) add(key uint64, k int, n uint64) uint32 {
	if k == t.top {
		panic("counts: the top order is counted by addRow")
	}
	if k == 1 {
		return t.addUnigram(uint32(key), n)
	}
	h, tag := t.slot(key)
	return t.addAt(key, k, n, h, tag)
}

// addUnigram counts the unigram word n times and returns its record.
func (t *gramHash) addUnigram(word uint32, n uint64) uint32 {
	if int(word) >= len(t.uni) {
		t.uni = append(t.uni, make([]uint32, max(int(word)+1, 2*len(t.uni), 1<<10)-len(t.uni))...)
	}
	if r := t.uni[word]; r != 0 {
		rec := t.rec(r - 1)
		rec.count = satAdd(rec.count, n)
		return r - 1
	}
	i := t.newRecord(uint64(word), 1, n)
	t.uni[word] = i + 1
	return i
}

// newRecord appends a record.
func (t *gramHash) newRecord(key uint64, k int, n uint64) uint32 {
	i := uint32(t.n)
	p := int(i >> recPageBits)
	if p == len(t.pages) {
		page := make([]gramRec, 1<<recPageBits)
		hugePages(unsafe.Slice((*byte)(unsafe.Pointer(&page[0])), 16<<recPageBits))
		t.pages = append(t.pages, page)
	}
	t.pages[p][i&(1<<recPageBits-1)] = gramRec{key, n}
	t.n++
	t.order = append(t.order, uint8(k))
	return i
}

// addRow counts once each the n-grams keys[k] of order k+1 (those ending
// at one position of a sentence; keys[0] a unigram, at least one) and
// appends their records to dst (for the top order, which has none,
// noRecord). Their
// first slots, and the records these name when the tags match, are read
// before any is counted: the keys do not depend on one another, so the
// cache misses of the probes overlap instead of coming one after another.
func (t *gramHash) addRow(dst []uint32, keys []uint64) []uint32 {
	var at [tables.MaxOrder]int
	var tags [tables.MaxOrder]uint32
	var first [tables.MaxOrder]uint32
	keys = keys[:min(len(keys), tables.MaxOrder)]
	var topKey uint64
	withTop := len(keys) == t.top
	if withTop {
		topKey = keys[len(keys)-1]
		keys = keys[:len(keys)-1]
	}
	for k := 1; k < len(keys); k++ {
		at[k], tags[k] = t.slot(keys[k])
		first[k] = t.slots[at[k]]
	}
	var touch uint64
	for k := 1; k < len(keys); k++ {
		if s := first[k]; s != 0 && s&t.tagMask == tags[k] {
			touch += t.rec((s &^ t.tagMask) - 1).count
		}
	}
	t.touched = touch
	size := len(t.slots)
	dst = append(dst, t.addUnigram(uint32(keys[0]), 1))
	for k := 1; k < len(keys); k++ {
		key := keys[k]
		if len(t.slots) != size { // grown: the slots moved
			at[k], tags[k] = t.slot(key)
		}
		dst = append(dst, t.addAt(key, k+1, 1, at[k], tags[k]))
	}
	if withTop {
		t.tops = append(t.tops, topKey)
		dst = append(dst, noRecord)
	}
	return dst
}

// noRecord stands for the record of an n-gram of the top order.
const noRecord = ^uint32(0)

// addAt is add from the key's first slot h and its tag.
func (t *gramHash) addAt(key uint64, k int, n uint64, h int, tag uint32) uint32 {
	for {
		s := t.slots[h]
		if s == 0 {
			break
		}
		if s&t.tagMask == tag {
			r := s &^ t.tagMask
			if rec := t.rec(r - 1); rec.key == key {
				rec.count = satAdd(rec.count, n)
				return r - 1
			}
		}
		if h++; h == len(t.slots) {
			h = 0
		}
	}
	i := t.newRecord(key, k, n)
	t.slots[h] = tag | (i + 1)
	if 2*t.n > len(t.slots) {
		t.grow()
	}
	return i
}

// addGram counts g n times, its prefixes (if new) with count 0; the caller
// makes sure there is room for len(g) records.
func (t *gramHash) addGram(g []uint32, n uint64) {
	r := t.add(uint64(g[0]), 1, 0)
	for k := 2; k <= len(g); k++ {
		r = t.add(gramKey(r, g[k-1]), k, 0)
	}
	rec := t.rec(r)
	rec.count = satAdd(rec.count, n)
}

func satAdd(a, b uint64) uint64 {
	if c := a + b; c >= a {
		return c
	}
	return ^uint64(0)
}

// grow doubles the slot array (to at most two slots per record allowed).
func (t *gramHash) grow() {
	t.makeSlots(min(2*len(t.slots), 2*t.maxCap))
	// A batch of records at a time: their first slots are read before any
	// is placed, so that the cache misses overlap.
	const batch = 16
	var at [batch]int
	var tags [batch]uint32
	var first [batch]uint32
	for lo := 0; lo < t.n; lo += batch {
		hi := min(lo+batch, t.n)
		for i := lo; i < hi; i++ {
			at[i-lo], tags[i-lo] = t.slot(t.rec(uint32(i)).key)
			first[i-lo] = t.slots[at[i-lo]]
		}
		for i := lo; i < hi; i++ {
			if t.order[i] == 1 {
				continue // unigrams are found through t.uni
			}
			h := at[i-lo]
			for t.slots[h] != 0 {
				if h++; h == len(t.slots) {
					h = 0
				}
			}
			t.slots[h] = tags[i-lo] | uint32(i+1)
		}
		t.touched += uint64(first[0])
	}
}

// reset empties the table, keeping its memory.
func (t *gramHash) reset() {
	t.n = 0
	t.order = t.order[:0]
	clear(t.slots)
	clear(t.uni)
	t.tops = t.tops[:0]
}

// sortedEntries is a table's n-grams in entry order (by order, then by the
// sorted ranks of their words): per order, a sorted list of entries, each
// packing the position of its prefix in the list of the order below, the
// rank of its last word and its count, in that order from the high bits
// (while sorting, the record in place of the count). A count too large for
// its nb bits is all ones there and is found in big.
// nb bits hold any position or record (at most the table's length), so
// 2nb+wb must not exceed 64: setWords keeps the table that small.
type sortedEntries struct {
	levels [][]uint64
	wb, nb uint     // bits of a word rank and of a record (or position)
	big    []uint64 // counts of 2^nb-1 or more, in entry order
}

func (se *sortedEntries) word(e uint64) uint32 { return uint32(e>>se.nb) & (1<<se.wb - 1) }
func (se *sortedEntries) prefix(e uint64) int  { return int(e >> (se.nb + se.wb)) }

// gram writes into ids (len k) the word ranks of entry j of order k. at
// holds, per order, the entry whose words ids holds (-1: none; ids[:l+1]
// are the words of entry at[l] of order l+1): the walk down the prefixes
// stops at the first it meets, so that, in entry order, where n-grams
// share their prefixes, a call costs about one read.
func (se *sortedEntries) gram(k, j int, ids []uint32, at []int) {
	for l := k - 1; l >= 0 && at[l] != j; l-- {
		e := se.levels[l][j]
		ids[l] = se.word(e)
		at[l] = j
		j = se.prefix(e)
	}
}

// sortEntries sorts the records under the word ranks rank (rank[id] is the
// position of word id in the sorted word list). The table can then only be
// read through the result, and reset. Sorting order k needs the positions
// of order k-1 in its sorted list: once an order is sorted, each of its
// records keeps its position in place of its key, which only the records
// of that order needed. The entries live in the slot array (at least two
// uint32 per record), which counting no longer needs.
func (t *gramHash) sortEntries(rank []uint32, order int) *sortedEntries {
	n := t.n
	se := &sortedEntries{wb: uint(bits.Len(uint(len(rank)))), nb: uint(bits.Len(uint(n)))}
	if se.wb+2*se.nb > uint(sortKeyBits) {
		panic(fmt.Sprintf("counts: %d records and %d words do not fit a sort key", n, len(rank)))
	}
	var all []uint64
	if n > 0 {
		if len(t.slots) < 2*n || uintptr(unsafe.Pointer(&t.slots[0]))%8 != 0 {
			panic("counts: slot array too short or misaligned for the sort")
		}
		all = unsafe.Slice((*uint64)(unsafe.Pointer(&t.slots[0])), n)
	}
	se.levels = t.entriesByOrder(all, rank, order, se)
	for k, lv := range se.levels {
		if k+1 == t.top {
			se.levels[k] = t.sortTops(rank, se)
			continue
		}
		t.placePrefixes(lv, se)
		sortUint64s(lv)
		t.settle(lv, se)
	}
	return se
}

// sortTops makes the entries of the top order from the list of its keys,
// once the order below is settled: in place, each key becomes an entry
// (its prefix's position, its word's rank), the list is sorted, and each
// run of equal entries becomes one with the run's length as its count.
func (t *gramHash) sortTops(rank []uint32, se *sortedEntries) []uint64 {
	shift := se.nb + se.wb
	lv := t.tops
	for j, key := range lv {
		lv[j] = t.rec(uint32(key>>32)-1).key<<shift | uint64(rank[uint32(key)])<<se.nb
	}
	sortUint64s(lv)
	full := uint64(1)<<se.nb - 1
	m := 0
	for i := 0; i < len(lv); {
		e := lv[i]
		j := i + 1
		for j < len(lv) && lv[j] == e {
			j++
		}
		c := uint64(j - i)
		if c >= full {
			se.big = append(se.big, c)
			c = full
		}
		lv[m] = e | c
		m++
		i = j
	}
	return lv[:m]
}

// entriesByOrder fills all with one entry per record, grouped by order
// (the records of each order in table order), and returns the groups. An
// entry holds, from the high bits, its prefix's record + 1 (0 for a
// unigram), its word's rank and its record.
func (t *gramHash) entriesByOrder(all []uint64, rank []uint32, order int, se *sortedEntries) [][]uint64 {
	var size [tables.MaxOrder + 1]int
	for _, k := range t.order {
		size[k]++
	}
	levels := make([][]uint64, order)
	var next [tables.MaxOrder + 1]int
	at := 0
	for k := 1; k <= order; k++ {
		levels[k-1] = all[at : at+size[k]]
		next[k] = at
		at += size[k]
	}
	for i := range t.n {
		r := t.rec(uint32(i))
		k := t.order[i]
		all[next[k]] = r.key>>32<<(se.nb+se.wb) | uint64(rank[uint32(r.key)])<<se.nb | uint64(i)
		next[k]++
	}
	return levels
}

// placePrefixes replaces the prefix record in each entry of lv by the
// prefix's position, which its key holds once its order is sorted.
func (t *gramHash) placePrefixes(lv []uint64, se *sortedEntries) {
	shift := se.nb + se.wb
	for j, e := range lv {
		if p := e >> shift; p > 0 {
			lv[j] = t.rec(uint32(p-1)).key<<shift | e&(1<<shift-1)
		}
	}
}

// settle gives each record of the sorted lv its position in place of its
// key, and each entry its record's count in place of the record (the
// counts that do not fit, at least the table's length, go to a list in
// entry order).
func (t *gramHash) settle(lv []uint64, se *sortedEntries) {
	full := uint64(1)<<se.nb - 1
	for j, e := range lv {
		r := t.rec(uint32(e & full))
		r.key = uint64(j)
		c := r.count
		if c >= full {
			se.big = append(se.big, c)
			c = full
		}
		lv[j] = e&^full | c
	}
}

// sorter gathers n-grams under ids of a growing word list (not sorted),
// in memory up to a budget, spilling sorted runs (binary count files) to a
// directory beyond it, and hands back the sorted streams to merge.
type sorter struct {
	order int
	words *[]string // id -> word, appended to by the owner
	table *gramHash
	dir   string // where runs go ("" : never spill)
	name  string // prefix of run file names
	runs  []string
	spilt int64 // bytes written to runs
	// known is how many words (ids 0..known-1) the table's records can
	// name: the list's length when the n-grams being added were admitted.
	// The owner interns a sentence's words before counting it, so at the
	// sentence's first spill check the list may already be longer, and a
	// table filled under the shorter list's limit would not fit a sort key
	// ranked over the longer one (setWords); a spill ranks these alone.
	known int
}

// newSorter returns a sorter whose tables hold at most budget bytes (0: no
// limit; then it never spills).
//
// withTops counts the n-grams of the highest order in a list of keys (see
// gramHash), for a sorter fed by counting only (worker.countSentence):
// each occurrence once.
func newSorter(order int, words *[]string, budget int64, dir, name string, withTops bool) *sorter {
	maxCap := unlimited
	if budget > 0 {
		maxCap = int(min(budget/bytesPerRecord(withTops), unlimited-1))
		if maxCap < 1<<10 {
			maxCap = 1 << 10
		}
	}
	top := 0
	if withTops {
		top = order
	}
	return &sorter{order: order, words: words, table: newGramHash(maxCap, top), dir: dir, name: name}
}

// add counts g n times, spilling first if the table is full.
func (s *sorter) add(g []uint32, n uint64) error {
	s.table.setWords(len(*s.words))
	if !s.table.room(len(g)) {
		if err := s.spill(); err != nil {
			return err
		}
	}
	s.known = len(*s.words)
	s.table.addGram(g, n)
	return nil
}

// rank returns the sorted list of the first n words and each id's
// position in it.
func (s *sorter) rank(n int) ([]string, []uint32) {
	words := (*s.words)[:n]
	order := make([]int32, len(words))
	for i := range order {
		order[i] = int32(i)
	}
	slices.SortFunc(order, func(a, b int32) int {
		switch x, y := words[a], words[b]; {
		case x < y:
			return -1
		case x > y:
			return 1
		}
		return 0
	})
	sorted := make([]string, len(words))
	rank := make([]uint32, len(words))
	for r, id := range order {
		sorted[r] = words[id]
		rank[id] = uint32(r)
	}
	return sorted, rank
}

// spill writes the table as one sorted run and empties it.
func (s *sorter) spill() error {
	if s.dir == "" {
		return fmt.Errorf("counts: the n-gram table is full and there is no directory to spill to")
	}
	vocab, rank := s.rank(s.known)
	st := newTableStream(s.table.sortEntries(rank, s.order))
	path := filepath.Join(s.dir, fmt.Sprintf("%s-%04d.run", s.name, len(s.runs)))
	f, err := os.OpenFile(path, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o600)
	if err != nil {
		return err
	}
	s.runs = append(s.runs, path)
	bw := bufio.NewWriterSize(f, 1<<20)
	w, err := newWriterLevel(bw, Header{Order: s.order, Vocab: vocab}, zstd.SpeedFastest)
	if err == nil {
		for {
			g, n, nerr := st.next()
			if nerr == io.EOF {
				break
			}
			if err = w.Add(g, n); err != nil {
				break
			}
		}
	}
	if err == nil {
		err = w.Close()
	}
	if err == nil {
		err = bw.Flush()
	}
	if st, serr := f.Stat(); serr == nil {
		s.spilt += st.Size()
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("spilling to %s: %w", path, err)
	}
	s.table.reset()
	return nil
}

// streams returns the runs and the in-memory remainder as sorted streams,
// each with its word list, and a function closing the runs' files.
func (s *sorter) streams() ([]stream, [][]string, func(), error) {
	var streams []stream
	var lists [][]string
	var files []*os.File
	closeAll := func() {
		for _, f := range files {
			f.Close()
		}
	}
	for _, path := range s.runs {
		f, err := os.Open(path)
		if err != nil {
			closeAll()
			return nil, nil, nil, err
		}
		files = append(files, f)
		r, err := NewReader(f)
		if err != nil {
			closeAll()
			return nil, nil, nil, fmt.Errorf("%s: %w", path, err)
		}
		streams = append(streams, &readerStream{r: r, ids: make([]uint32, tables.MaxOrder)})
		lists = append(lists, r.Header().Vocab)
	}
	if s.table.len() > 0 {
		vocab, rank := s.rank(len(*s.words))
		streams = append(streams, newTableStream(s.table.sortEntries(rank, s.order)))
		lists = append(lists, vocab)
	}
	return streams, lists, closeAll, nil
}

// tableStream walks a sorted table in entry order, the records counted 0
// times (prefixes kept only to key their extensions, and <s>) left out,
// ids mapped through a monotone remap (set by the merge; nil: none).
type tableStream struct {
	se    *sortedEntries
	k, j  int
	big   int // next of se.big
	remap []uint32
	ranks []uint32 // words of the last n-gram, unmapped (sortedEntries.gram)
	at    []int    // entries that ranks holds (sortedEntries.gram)
	ids   []uint32
}

func newTableStream(se *sortedEntries) *tableStream {
	st := &tableStream{se: se, k: 1, ranks: make([]uint32, tables.MaxOrder), at: make([]int, tables.MaxOrder), ids: make([]uint32, tables.MaxOrder)}
	for i := range st.at {
		st.at[i] = -1
	}
	return st
}

func (st *tableStream) setRemap(m []uint32) {
	for i, id := range m {
		if id != uint32(i) {
			st.remap = m
			return
		}
	}
	st.remap = nil // the identity (one worker's words are the union)
}

func (st *readerStream) setRemap(m []uint32) { st.remap = m }

func (st *tableStream) next() ([]uint32, uint64, error) {
	full := uint64(1)<<st.se.nb - 1
	for st.k <= len(st.se.levels) {
		lv := st.se.levels[st.k-1]
		for st.j < len(lv) {
			j := st.j
			st.j++
			n := lv[j] & full
			if n == 0 {
				continue
			}
			if n == full {
				n = st.se.big[st.big]
				st.big++
			}
			ranks := st.ranks[:st.k]
			st.se.gram(st.k, j, ranks, st.at)
			if st.remap == nil {
				return ranks, n, nil // the caller only reads them
			}
			out := st.ids[:st.k] // mapped apart: ranks must stay as gram left it
			for i, id := range ranks {
				out[i] = st.remap[id]
			}
			return out, n, nil
		}
		st.k++
		st.j = 0
	}
	return nil, 0, io.EOF
}

// hugePagesOf is hugePages for the memory of s up to its capacity, before
// it is first written.
func hugePagesOf[E any](s []E) {
	if cap(s) > 0 {
		s = s[:1]
		hugePages(unsafe.Slice((*byte)(unsafe.Pointer(unsafe.SliceData(s))), uintptr(cap(s))*unsafe.Sizeof(s[0])))
	}
}

// HugePagesOf asks the kernel to back the memory of s, up to its
// capacity, with huge pages where it can (a hint): for a large array
// probed at random, made and not yet written.
func HugePagesOf[E any](s []E) { hugePagesOf(s) }
