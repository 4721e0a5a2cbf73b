// Package extsort sorts more fixed-width records than fit in memory: it
// sorts what fits, spills each sorted run to a file, and merges the runs
// (a k-way merge on a binary heap). Records are a fixed number of uint32
// words, ordered lexicographically word by word; equal records are
// interchangeable, so the output is the same whatever the budget.
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
	dir     string
	name    string
	buf     []uint32
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
	per := int64(4*width + 4)
	recs := budget / per
	if recs < 1024 {
		recs = 1024
	}
	return &Sorter{width: width, dir: dir, name: name, maxRecs: int(recs)}
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
	if s.buf == nil {
		s.buf = make([]uint32, 0, min(s.maxRecs, 1<<16)*s.width)
	}
	s.buf = append(s.buf, rec...)
	return nil
}

func compare(a, b []uint32) int {
	for i := range a {
		if a[i] != b[i] {
			if a[i] < b[i] {
				return -1
			}
			return 1
		}
	}
	return 0
}

// sorted returns the permutation that sorts the buffer.
func (s *Sorter) sorted() []int32 {
	w := s.width
	n := len(s.buf) / w
	perm := make([]int32, n)
	for i := range perm {
		perm[i] = int32(i)
	}
	slices.SortFunc(perm, func(x, y int32) int {
		return compare(s.buf[w*int(x):w*int(x)+w], s.buf[w*int(y):w*int(y)+w])
	})
	return perm
}

func (s *Sorter) spill() error {
	perm := s.sorted()
	path := filepath.Join(s.dir, fmt.Sprintf("%s-%04d.run", s.name, len(s.runs)))
	f, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("spill run: %w", err)
	}
	s.runs = append(s.runs, path)
	s.nruns++
	bw := bufio.NewWriterSize(f, 1<<18)
	w := s.width
	var b [4]byte
	for _, i := range perm {
		for _, v := range s.buf[w*int(i) : w*int(i)+w] {
			binary.LittleEndian.PutUint32(b[:], v)
			bw.Write(b[:])
		}
	}
	err = bw.Flush()
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
	perm  []int32 // in-memory case
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
		it.perm = s.sorted()
		return it, nil
	}
	if len(s.buf) > 0 {
		if err := s.spill(); err != nil {
			return nil, err
		}
	}
	s.buf = nil
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
	c := compare(it.runs[it.heap[a]].rec, it.runs[it.heap[b]].rec)
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
	if it.perm != nil || len(it.runs) == 0 {
		if it.pos >= len(it.perm) {
			return nil, false, nil
		}
		w := it.s.width
		i := int(it.perm[it.pos])
		it.pos++
		return it.s.buf[w*i : w*i+w], true, nil
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
	it.perm = nil
}
