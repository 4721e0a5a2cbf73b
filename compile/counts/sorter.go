package counts

import (
	"bufio"
	"fmt"
	"io"
	"math/bits"
	"os"
	"path/filepath"
	"slices"

	"github.com/klauspost/compress/zstd"

	"ingot/compile/tables"
)

// gramSet is an open-addressing hash table of n-grams of orders 1..n with
// their counts: fixed-size records (n ids, a length, a count) in segments
// of segRecords, so that adding an n-gram costs one hash and, mostly, one
// probe, memory grows with use without copying, and what it holds is
// known exactly. The slot array doubles as it fills.
type gramSet struct {
	n      int
	segs   []segment
	size   int      // records held
	slots  []uint32 // record+1, 0 when empty; at most half full
	maxCap int      // records at most
}

type segment struct {
	ids    []uint32 // n per record
	klen   []uint8
	counts []uint64
}

const segShift = 16
const segRecords = 1 << segShift

// bytesPerRecord bounds what one record costs: n ids, a length, a count,
// and three slots (two in the table, at most half full, and one more while
// the slot array doubles).
func bytesPerRecord(n int) int64 { return int64(4*n + 1 + 8 + 3*4) }

// unlimited is the record cap of a set without a budget.
const unlimited = 1 << 31

func newGramSet(n, maxCap int) *gramSet {
	return &gramSet{n: n, maxCap: maxCap, slots: make([]uint32, min(1<<12, 2*maxCap))}
}

func (s *gramSet) len() int { return s.size }

// rec returns record i's ids (all n), length and count.
func (s *gramSet) rec(i int) ([]uint32, *uint8, *uint64) {
	sg := &s.segs[i>>segShift]
	j := i & (segRecords - 1)
	return sg.ids[s.n*j : s.n*j+s.n], &sg.klen[j], &sg.counts[j]
}

func (s *gramSet) gram(i int) []uint32 {
	ids, k, _ := s.rec(i)
	return ids[:*k]
}

func (s *gramSet) count(i int) uint64 {
	_, _, c := s.rec(i)
	return *c
}

func hashIDs(g []uint32) uint64 {
	h := uint64(len(g)) * 0x9e3779b97f4a7c15
	for _, id := range g {
		h = (h ^ uint64(id)) * 0xff51afd7ed558ccd
		h ^= h >> 32
	}
	return h
}

// slot maps a hash onto 0..len(slots)-1 (multiply and keep the high word).
func (s *gramSet) slot(h uint64) int {
	hi, _ := bits.Mul64(h, uint64(len(s.slots)))
	return int(hi)
}

// add counts g n times; it reports false when a new record is needed and
// the set is full. Counts saturate at the largest uint64 rather than wrap
// (no text holds 2^64 tokens).
func (s *gramSet) add(g []uint32, n uint64) bool {
	h := s.slot(hashIDs(g))
	for {
		r := s.slots[h]
		if r == 0 {
			break
		}
		ids, k, c := s.rec(int(r - 1))
		if int(*k) == len(g) && slices.Equal(ids[:len(g)], g) {
			v := *c + n
			if v < n {
				v = ^uint64(0)
			}
			*c = v
			return true
		}
		if h++; h == len(s.slots) {
			h = 0
		}
	}
	i := s.size
	if i >= s.maxCap {
		return false
	}
	if 2*(i+1) > len(s.slots) {
		s.grow()
		return s.add(g, n)
	}
	if i>>segShift == len(s.segs) {
		s.segs = append(s.segs, segment{
			ids:  make([]uint32, s.n*segRecords),
			klen: make([]uint8, segRecords), counts: make([]uint64, segRecords)})
	}
	s.size++
	ids, k, c := s.rec(i)
	copy(ids, g)
	clear(ids[len(g):])
	*k, *c = uint8(len(g)), n
	s.slots[h] = uint32(i + 1)
	return true
}

// grow doubles the slot array (to at most two slots per record allowed).
func (s *gramSet) grow() {
	size := min(2*len(s.slots), 2*s.maxCap)
	s.slots = nil
	s.slots = make([]uint32, size)
	for i := 0; i < s.size; i++ {
		h := s.slot(hashIDs(s.gram(i)))
		for s.slots[h] != 0 {
			if h++; h == len(s.slots) {
				h = 0
			}
		}
		s.slots[h] = uint32(i + 1)
	}
}

// reset empties the set, keeping its memory.
func (s *gramSet) reset() {
	s.size = 0
	clear(s.slots)
}

// sortInPlace maps every id through rank (in place: the set can then only
// be read in the returned order or reset) and returns the record indexes
// in entry order (length, then ids), the unigram <s> (id start before
// ranking) left out. The order is kept in the slot array: two counting
// sorts (by first word, then, stably, by length) and a comparison sort of
// each run of records sharing both, on the words after the first.
func (s *gramSet) sortInPlace(rank []uint32, start uint32) []uint32 {
	rs := uint32(len(rank))
	if int(start) < len(rank) {
		rs = rank[start]
	}
	a := s.slots[:0]
	for i := 0; i < s.size; i++ {
		ids, k, _ := s.rec(i)
		for j := range ids[:*k] {
			ids[j] = rank[ids[j]]
		}
		if *k == 1 && ids[0] == rs {
			continue
		}
		a = append(a, uint32(i))
	}
	n := len(a)
	tmp := s.slots[n : 2*n]
	first := func(i uint32) int { ids, _, _ := s.rec(int(i)); return int(ids[0]) }
	length := func(i uint32) int { _, k, _ := s.rec(int(i)); return int(*k) }
	countingSort(a, tmp, len(rank), first)
	countingSort(tmp, a, tables.MaxOrder+1, length)
	for lo := 0; lo < n; {
		k, f := length(a[lo]), first(a[lo])
		hi := lo + 1
		for hi < n && length(a[hi]) == k && first(a[hi]) == f {
			hi++
		}
		if hi-lo > 1 && k > 1 {
			slices.SortFunc(a[lo:hi], func(x, y uint32) int {
				return tables.Compare(s.gram(int(x))[1:], s.gram(int(y))[1:])
			})
		}
		lo = hi
	}
	return a
}

// countingSort moves src into dst ordered by key (0..keys-1), stably.
func countingSort(src, dst []uint32, keys int, key func(uint32) int) {
	pos := make([]int, keys+1)
	for _, i := range src {
		pos[key(i)+1]++
	}
	for j := 1; j <= keys; j++ {
		pos[j] += pos[j-1]
	}
	for _, i := range src {
		k := key(i)
		dst[pos[k]] = i
		pos[k]++
	}
}

// sorter gathers n-grams under ids of a growing word list (not sorted),
// in memory up to a budget, spilling sorted runs (binary count files) to a
// directory beyond it, and hands back the sorted streams to merge.
type sorter struct {
	order int
	words *[]string // id -> word, appended to by the owner
	start uint32    // id of <s>
	set   *gramSet
	dir   string // where runs go ("" : never spill)
	name  string // prefix of run file names
	runs  []string
	spilt int64 // bytes written to runs
}

// newSorter returns a sorter whose tables hold at most budget bytes (0: no
// limit; then it never spills).
func newSorter(order int, words *[]string, start uint32, budget int64, dir, name string) *sorter {
	maxCap := unlimited
	if budget > 0 {
		maxCap = int(min(budget/bytesPerRecord(order), unlimited-1))
		if maxCap < 1<<10 {
			maxCap = 1 << 10
		}
	}
	return &sorter{order: order, words: words, start: start, set: newGramSet(order, maxCap), dir: dir, name: name}
}

func (s *sorter) add(g []uint32, n uint64) error {
	if s.set.add(g, n) {
		return nil
	}
	if err := s.spill(); err != nil {
		return err
	}
	s.set.add(g, n)
	return nil
}

// rank returns the sorted word list and each id's position in it.
func (s *sorter) rank() ([]string, []uint32) {
	words := *s.words
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

// spill writes the set as one sorted run and empties it.
func (s *sorter) spill() error {
	if s.dir == "" {
		return fmt.Errorf("counts: the n-gram table is full and there is no directory to spill to")
	}
	vocab, rank := s.rank()
	perm := s.set.sortInPlace(rank, s.start)
	path := filepath.Join(s.dir, fmt.Sprintf("%s-%04d.run", s.name, len(s.runs)))
	f, err := os.OpenFile(path, os.O_CREATE|os.O_EXCL|os.O_WRONLY, 0o600)
	if err != nil {
		return err
	}
	s.runs = append(s.runs, path)
	bw := bufio.NewWriterSize(f, 1<<20)
	w, err := newWriterLevel(bw, Header{Order: s.order, Vocab: vocab}, zstd.SpeedFastest)
	if err == nil {
		for _, i := range perm {
			if err = w.Add(s.set.gram(int(i)), s.set.count(int(i))); err != nil {
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
	s.set.reset()
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
	if s.set.len() > 0 {
		vocab, rank := s.rank()
		perm := s.set.sortInPlace(rank, s.start)
		streams = append(streams, &setStream{s: s.set, perm: perm, ids: make([]uint32, tables.MaxOrder)})
		lists = append(lists, vocab)
	}
	return streams, lists, closeAll, nil
}

// setStream walks a gramSet in sorted order, ids mapped through a monotone
// remap (set by the merge).
type setStream struct {
	s     *gramSet
	perm  []uint32
	pos   int
	remap []uint32
	ids   []uint32
}

func (st *setStream) setRemap(m []uint32)    { st.remap = m }
func (st *readerStream) setRemap(m []uint32) { st.remap = m }

func (st *setStream) next() ([]uint32, uint64, error) {
	if st.pos == len(st.perm) {
		return nil, 0, io.EOF
	}
	i := int(st.perm[st.pos])
	st.pos++
	g := st.s.gram(i)
	out := st.ids[:len(g)]
	for j, id := range g {
		out[j] = st.remap[id]
	}
	return out, st.s.count(i), nil
}
