// Package extsort sorts more fixed-width records than fit in memory: it
// sorts what fits (a least-significant-digit radix sort, H. H. Seward
// (1954), "Information sorting in the application of electronic digital
// computers to business operations", MIT; as in D. E. Knuth, The Art of
// Computer Programming vol. 3, section 5.2.5), spills each sorted run to a
// file, and merges the runs (a k-way merge on a binary heap). Records are
// a fixed number of uint32 words, ordered lexicographically word by word;
// equal records are interchangeable, so the output is the same whatever
// the budget.
package extsort

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
)

// Sorter collects records and returns them sorted.
type Sorter struct {
	width   int
	key     int // words that order the records
	dir     string
	name    string
	buf     []uint32
	tmp     []uint32 // the radix sort's second buffer
	maxRecs int
	runs    []string
	spilled int64
	nruns   int
	done    bool
}

// New returns a Sorter of records of width words that holds at most
// about budget bytes in memory, spilling runs to files in dir (which must
// exist) named after name.
func New(dir, name string, width int, budget int64) *Sorter {
	return NewKeyed(dir, name, width, width, budget)
}

// NewKeyed is New for records ordered by their first key words only:
// records whose keys are equal come out in the order they were added (the
// sort is stable), whatever the budget.
func NewKeyed(dir, name string, width, key int, budget int64) *Sorter {
	if key < 1 || key > width {
		panic(fmt.Sprintf("extsort: key of %d words in records of %d", key, width))
	}
	per := int64(8 * width) // the records and the radix sort's copy
	recs := budget / per
	if recs < 1024 {
		recs = 1024
	}
	return &Sorter{width: width, key: key, dir: dir, name: name, maxRecs: int(recs)}
}

// Expect makes room at once for n records to come (as many as the budget
// holds, at most), so that the buffer is not grown and copied as they
// are added.
func (s *Sorter) Expect(n int) {
	if c := min(n, s.maxRecs) * s.width; cap(s.buf) < c {
		s.buf = append(make([]uint32, 0, c), s.buf...)
	}
}

// Spilled returns the bytes written to runs so far.
func (s *Sorter) Spilled() int64 { return s.spilled }

// Runs returns the number of runs spilled so far.
func (s *Sorter) Runs() int { return s.nruns }

// Add adds one record (copied).
func (s *Sorter) Add(rec []uint32) error {
	if len(rec) != s.width {
		return fmt.Errorf("extsort: record of %d words in a sorter of %d", len(rec), s.width)
	}
	if len(s.buf)/s.width >= s.maxRecs {
		if err := s.spill(); err != nil {
			return err
		}
	}
	if len(s.buf)+s.width > cap(s.buf) {
		// Grow, never beyond the budget's records.
		c := min(max(2*cap(s.buf), (1<<16)*s.width), s.maxRecs*s.width)
		s.buf = append(make([]uint32, 0, c), s.buf...)
	}
	s.buf = append(s.buf, rec...)
	return nil
}

// sortBuf sorts the buffer's records.
func (s *Sorter) sortBuf() {
	if cap(s.tmp) < len(s.buf) {
		s.tmp = make([]uint32, len(s.buf))
	}
	if sorted := radixSort(s.buf, s.tmp[:len(s.buf)], s.width, s.key); len(sorted) > 0 && &sorted[0] != &s.buf[0] {
		s.buf, s.tmp = sorted, s.buf
	}
}

// radixSort sorts the records of buf (width words each) by the bytes of
// their first key words, least significant first: the last key word's low
// byte to the first word's high byte, each pass a stable counting sort
// from one buffer to the other (tmp, as long as buf). A byte that every
// record shares is skipped, so word ids below 2^16 cost two passes a word.
// It returns the buffer that holds the sorted records.
func radixSort(buf, tmp []uint32, width, key int) []uint32 {
	n := len(buf) / width
	if n < 2 {
		return buf
	}
	digits := 4 * key
	counts := make([][256]int, digits)
	for i := 0; i < len(buf); i += width {
		for w, v := range buf[i : i+key] {
			c := counts[4*w:]
			c[0][v&0xff]++
			c[1][v>>8&0xff]++
			c[2][v>>16&0xff]++
			c[3][v>>24]++
		}
	}
	src, dst := buf, tmp
	var offsets [256]int
	for d := digits - 1; d >= 0; d-- {
		// Digits in order of significance: d = 4w + 3 - b is byte b
		// (from the low end) of word w.
		w, b := d/4, 3-d%4
		c := &counts[4*w+b]
		if c[src[w]>>(8*b)&0xff] == n {
			continue // every record has this byte
		}
		sum := 0
		for x := range offsets {
			offsets[x] = sum
			sum += c[x] * width
		}
		shift := 8 * b
		for i := 0; i < len(src); i += width {
			x := src[i+w] >> shift & 0xff
			o := offsets[x]
			offsets[x] = o + width
			for j := range width {
				dst[o+j] = src[i+j]
			}
		}
		src, dst = dst, src
	}
	return src
}

func (s *Sorter) spill() error {
	s.sortBuf()
	path := filepath.Join(s.dir, fmt.Sprintf("%s-%04d.run", s.name, len(s.runs)))
	f, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("spill run: %w", err)
	}
	s.runs = append(s.runs, path)
	s.nruns++
	b := make([]byte, 0, 1<<18)
	for i, v := range s.buf {
		b = binary.LittleEndian.AppendUint32(b, v)
		if len(b) == cap(b) || i == len(s.buf)-1 {
			if _, err = f.Write(b); err != nil {
				break
			}
			b = b[:0]
		}
	}
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("spill run: %w", err)
	}
	s.spilled += int64(len(s.buf)) * 4
	s.buf = s.buf[:0]
	return nil
}

// Iter yields sorted records.
type Iter struct {
	s     *Sorter
	mem   bool // in-memory case: the records are the sorter's buffer
	pos   int
	runs  []*run
	heap  []int
	first bool
	out   []uint32
}

type run struct {
	f   *os.File
	r   *bufio.Reader
	rec []uint32
	b   []byte
}

func (r *run) next() (bool, error) {
	if _, err := io.ReadFull(r.r, r.b); err != nil {
		if err == io.EOF {
			return false, nil
		}
		return false, fmt.Errorf("spill run: %w", err)
	}
	for i := range r.rec {
		r.rec[i] = binary.LittleEndian.Uint32(r.b[4*i:])
	}
	return true, nil
}

// Sort ends the input and returns an iterator over the records in order.
// Close the iterator to remove the runs.
func (s *Sorter) Sort() (*Iter, error) {
	if s.done {
		return nil, errors.New("extsort: Sort called twice")
	}
	s.done = true
	it := &Iter{s: s, first: true}
	if len(s.runs) == 0 {
		s.sortBuf()
		s.tmp = nil
		it.mem = true
		return it, nil
	}
	if len(s.buf) > 0 {
		if err := s.spill(); err != nil {
			return nil, err
		}
	}
	s.buf, s.tmp = nil, nil
	readBuf := 1 << 16
	for _, p := range s.runs {
		f, err := os.Open(p)
		if err != nil {
			it.Close()
			return nil, fmt.Errorf("spill run: %w", err)
		}
		r := &run{f: f, r: bufio.NewReaderSize(f, readBuf), rec: make([]uint32, s.width), b: make([]byte, 4*s.width)}
		it.runs = append(it.runs, r)
		ok, err := r.next()
		if err != nil {
			it.Close()
			return nil, err
		}
		if ok {
			it.heap = append(it.heap, len(it.runs)-1)
		}
	}
	for i := len(it.heap)/2 - 1; i >= 0; i-- {
		it.down(i)
	}
	return it, nil
}

func (it *Iter) less(a, b int) bool {
	k := it.s.key
	c := slices.Compare(it.runs[it.heap[a]].rec[:k], it.runs[it.heap[b]].rec[:k])
	return c < 0 || c == 0 && it.heap[a] < it.heap[b]
}

func (it *Iter) down(i int) {
	n := len(it.heap)
	for {
		l := 2*i + 1
		if l >= n {
			return
		}
		j := l
		if r := l + 1; r < n && it.less(r, l) {
			j = r
		}
		if !it.less(j, i) {
			return
		}
		it.heap[i], it.heap[j] = it.heap[j], it.heap[i]
		i = j
	}
}

// Next returns the next record (valid until the next call), or ok false at
// the end.
func (it *Iter) Next() (rec []uint32, ok bool, err error) {
	if it.mem || len(it.runs) == 0 {
		w := it.s.width
		if it.pos+w > len(it.s.buf) {
			return nil, false, nil
		}
		it.pos += w
		return it.s.buf[it.pos-w : it.pos], true, nil
	}
	if !it.first {
		// Advance the run whose record was returned last.
		top := it.runs[it.heap[0]]
		more, err := top.next()
		if err != nil {
			return nil, false, err
		}
		if !more {
			last := len(it.heap) - 1
			it.heap[0] = it.heap[last]
			it.heap = it.heap[:last]
		}
		if len(it.heap) > 0 {
			it.down(0)
		}
	}
	it.first = false
	if len(it.heap) == 0 {
		return nil, false, nil
	}
	it.out = append(it.out[:0], it.runs[it.heap[0]].rec...)
	return it.out, true, nil
}

// Close releases the records and removes the runs.
func (it *Iter) Close() {
	for _, r := range it.runs {
		r.f.Close()
	}
	it.runs = nil
	for _, p := range it.s.runs {
		os.Remove(p)
	}
	it.s.runs = nil
	it.s.buf = nil
	it.s.tmp = nil
	it.mem = false
}
