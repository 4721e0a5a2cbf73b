package counts

import (
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"sync"

	"ingot/compile/tables"
)

// Spooled is a set of count files merged (duplicates summed) into one
// sorted file per order in a directory, for a reader that passes over each
// order several times without holding it in memory: the bounded-memory
// estimator. Unigram counts are kept in memory, dense over the vocabulary
// as in Counts.
//
// The files are private to the process and read several times each, so
// they hold fixed-width records (k little-endian 32-bit word ids, then a
// 64-bit count), which read back at the speed of a copy, rather than the
// compressed, varint-coded blocks of a count file, whose decoding would
// cost each pass as much as reading the input once.
type Spooled struct {
	Vocab    []string
	Unigrams []uint64 // count of each word (0 for <s>)
	// Entries[k-1] is the number of entries of order k (len(Vocab) at
	// order 1). len(Entries) is the order held.
	Entries []uint64
	paths   []string // paths[k-1] for k >= 2
}

// Order returns the highest order held.
func (s *Spooled) Order() int { return len(s.Entries) }

// Spool reads count files like Load, with the same rules for orders the
// counts cannot hold, and writes the merged counts of each order k >= 2 to
// a file in dir. Binary files are streamed; text files are read into
// memory first (as Load reads them). Unlike Load it does not check that
// every prefix and suffix is counted: the estimator that reads the files
// checks that as it passes over them.
func Spool(order int, sources []Source, dir string) (*Spooled, error) {
	return SpoolOrders(order, sources, dir, nil)
}

// SpoolOrders is Spool that, when done is not nil, calls done(part) on its
// goroutine as soon as the file of an order k >= 2 is complete, k
// increasing by one from 2, while the orders above it are still being
// read (count files hold their orders one after another): part holds the
// vocabulary, the unigram counts and orders 1..k (part.Order() == k), and
// may be opened and read on another goroutine from then on. The orders
// complete when the merge ends are announced after Spool's checks have
// passed. Nothing is announced after an order that is missing, and
// announced orders may belong to counts that Spool then refuses: its
// error is the one that counts.
func SpoolOrders(order int, sources []Source, dir string, done func(part *Spooled)) (*Spooled, error) {
	return SpoolTail(order, sources, dir, done, nil)
}

// SpoolTail is SpoolOrders that, when done and started are not nil, also
// calls started(t), on its goroutine, as soon as the first entry of the
// highest order asked (order) is read, every order below it announced
// (done): t reads that order's file while it is being written
// (Tail.Open), for a reader that keeps up with the spool.
func SpoolTail(order int, sources []Source, dir string, done func(part *Spooled), started func(t *Tail)) (*Spooled, error) {
	if order < 1 || order > tables.MaxOrder {
		return nil, fmt.Errorf("order %d outside 1..%d", order, tables.MaxOrder)
	}
	b, bins, maxSeen, err := readSources(order, sources)
	if err != nil {
		return nil, err
	}
	ms, err := openMerge(b, bins, sources)
	if err != nil {
		return nil, err
	}
	b = nil
	vocab := ms.vocab
	sp := &Spooled{Vocab: vocab, Unigrams: make([]uint64, len(vocab)), paths: make([]string, order)}
	outs := make([]*spoolWriter, order+1)
	defer func() {
		for _, o := range outs {
			if o != nil && o.f != nil {
				o.f.Close()
				o.f = nil
				if o.tail != nil {
					o.tail.update(o.written, true, errSpoolStopped)
				}
			}
		}
	}()
	// The sources are decoded and merged on another goroutine while this
	// one writes the entries.
	a := readAhead(ms.m)
	defer a.Close()
	// announced is the highest order handed to done (1: none yet).
	announced := 1
	announce := func(upTo int) error {
		for ; done != nil && announced < upTo; announced++ {
			o := outs[announced+1]
			if o == nil {
				done = nil // an order is missing: Spool refuses the counts
				break
			}
			if err := o.close(); err != nil {
				return fmt.Errorf("spooling counts: %w", err)
			}
			part := &Spooled{Vocab: vocab, Unigrams: sp.Unigrams, Entries: make([]uint64, announced+1), paths: sp.paths[: announced+1 : announced+1]}
			part.Entries[0] = uint64(len(vocab))
			for j := 2; j <= announced+1; j++ {
				part.Entries[j-1] = outs[j].n
			}
			done(part)
		}
		return nil
	}
	for {
		bt := a.nextBatch()
		for x := range bt.entries {
			g, n := bt.entries[x].ids, bt.entries[x].count
			k := len(g)
			if k > order {
				continue
			}
			if k > maxSeen && done != nil {
				// Orders come one after another: the ones below k
				// are complete.
				if err := announce(k - 1); err != nil {
					return nil, err
				}
			}
			maxSeen = max(maxSeen, k)
			if k == 1 {
				sp.Unigrams[g[0]] = n
				continue
			}
			o := outs[k]
			if o == nil {
				p := filepath.Join(dir, fmt.Sprintf("order-%d.records", k))
				f, err := os.Create(p)
				if err != nil {
					return nil, fmt.Errorf("spooling counts: %w", err)
				}
				o = &spoolWriter{f: f, buf: make([]byte, spoolBuffer)}
				outs[k] = o
				sp.paths[k-1] = p
				if k == order && done != nil && started != nil {
					o.tail = &Tail{k: k, path: p, wake: make(chan struct{})}
					started(o.tail)
				}
			}
			if err := o.add(g, n); err != nil {
				return nil, fmt.Errorf("spooling counts: %w", err)
			}
		}
		if bt.err == io.EOF {
			break
		}
		if bt.err != nil {
			return nil, ms.streamErr(bt.err)
		}
	}
	if maxSeen == 0 {
		return nil, fmt.Errorf("no n-grams in %s", names(sources))
	}
	sp.Entries = make([]uint64, maxSeen)
	sp.Entries[0] = uint64(len(vocab))
	for k := 2; k <= maxSeen; k++ {
		o := outs[k]
		if o == nil {
			return nil, fmt.Errorf("counts hold no %d-gram but some of order %d", k, maxSeen)
		}
		if err := o.close(); err != nil {
			return nil, fmt.Errorf("spooling counts: %w", err)
		}
		sp.Entries[k-1] = o.n
	}
	sp.paths = sp.paths[:maxSeen]
	if maxSeen < order {
		counted := ms.textCounts == nil
		for _, s := range bins {
			counted = counted && s.r.Header().Order >= order
		}
		if !counted {
			whole, err := sp.wholeSentences(maxSeen)
			if err != nil {
				return nil, err
			}
			if !whole {
				return nil, fmt.Errorf("counts hold orders up to %d, order %d asked", maxSeen, order)
			}
		}
	}
	for _, n := range sp.Unigrams {
		if n > 0 {
			if err := announce(sp.Order()); err != nil {
				return nil, err
			}
			return sp, nil
		}
	}
	return nil, fmt.Errorf("no unigram counts in %s", names(sources))
}

// wholeSentences reports whether every entry of order k (k >= 2) begins
// with <s> and ends with </s>.
func (s *Spooled) wholeSentences(k int) (bool, error) {
	start, ok1 := find(s.Vocab, tables.SentenceStart)
	end, ok2 := find(s.Vocab, tables.SentenceEnd)
	if k < 2 || !ok1 || !ok2 {
		return false, nil
	}
	r, err := s.Open(k)
	if err != nil {
		return false, err
	}
	defer r.Close()
	for {
		g, _, err := r.Next()
		if err == io.EOF {
			return true, nil
		}
		if err != nil {
			return false, err
		}
		if g[0] != start || g[k-1] != end {
			return false, nil
		}
	}
}

// spoolBuffer is the size of a spool file's write and read buffers.
const spoolBuffer = 1 << 18

// spoolWriter writes the records of one order.
type spoolWriter struct {
	f   *os.File
	buf []byte // spoolBuffer bytes, buf[:m] written (an index, not a
	// resliced buf: storing a slice per entry costs a write barrier each
	// while the collector runs)
	m       int
	n       uint64
	written int64 // bytes in the file
	tail    *Tail // told of every write, when not nil
}

func (w *spoolWriter) add(g []uint32, n uint64) error {
	size := recordSize(len(g))
	if w.m+size > len(w.buf) {
		if err := w.flush(); err != nil {
			return err
		}
	}
	putRecord(w.buf[w.m:w.m+size], g, n)
	w.m += size
	w.n++
	return nil
}

// recordSize is the size of a spooled entry of order k: each id in 4
// bytes, then the count in 8, little-endian.
func recordSize(k int) int { return 4*k + 8 }

// putRecord writes the entry g with count n into b, recordSize(len(g))
// bytes.
func putRecord(b []byte, g []uint32, n uint64) {
	for i, id := range g {
		binary.LittleEndian.PutUint32(b[4*i:], id)
	}
	binary.LittleEndian.PutUint64(b[4*len(g):], n)
}

// readRecord reads the entry in b, recordSize(len(ids)) bytes, into ids
// and returns its count.
func readRecord(b []byte, ids []uint32) uint64 {
	for i := range ids {
		ids[i] = binary.LittleEndian.Uint32(b[4*i:])
	}
	return binary.LittleEndian.Uint64(b[4*len(ids):])
}

func (w *spoolWriter) flush() error {
	if _, err := w.f.Write(w.buf[:w.m]); err != nil {
		return err
	}
	w.written += int64(w.m)
	w.m = 0
	if w.tail != nil {
		w.tail.update(w.written, false, nil)
	}
	return nil
}

// close writes what is buffered and closes the file; once closed, it does
// nothing.
func (w *spoolWriter) close() error {
	if w.f == nil {
		return nil
	}
	err := w.flush()
	if cerr := w.f.Close(); err == nil {
		err = cerr
	}
	w.f = nil
	if w.tail != nil {
		if err == nil {
			w.tail.update(w.written, true, nil)
		} else {
			w.tail.update(w.written, true, errSpoolStopped)
		}
	}
	return err
}

// errSpoolStopped is what a Tail's reader returns when the spool of its
// order stopped short (the spool's own error says why).
var errSpoolStopped = errors.New("spooling stopped before the order was complete")

// Tail is the file of one order of counts while SpoolTail writes it: its
// readers (Open) read the entries written so far and wait for more, until
// the order is complete.
type Tail struct {
	k    int
	path string
	mu   sync.Mutex
	// Under mu:
	written int64 // bytes in the file
	done    bool
	err     error
	wake    chan struct{} // closed (and replaced) at each change
}

// Order returns the order of the entries.
func (t *Tail) Order() int { return t.k }

func (t *Tail) update(written int64, done bool, err error) {
	t.mu.Lock()
	defer t.mu.Unlock()
	if t.done {
		return
	}
	t.written, t.done, t.err = written, done, err
	close(t.wake)
	t.wake = make(chan struct{})
}

// Open returns a reader of the order's entries, in order, that waits for
// entries not yet written (or until ctx is done).
func (t *Tail) Open(ctx context.Context) (*TailReader, error) {
	f, err := os.Open(t.path)
	if err != nil {
		return nil, err
	}
	return &TailReader{t: t, ctx: ctx, f: f, buf: make([]byte, 0, spoolBuffer), ids: make([]uint32, t.k)}, nil
}

// TailReader reads the entries of a Tail.
type TailReader struct {
	t    *Tail
	ctx  context.Context
	f    *os.File
	buf  []byte
	pos  int
	read int64 // bytes read from the file
	ids  []uint32
	n    uint64 // entries returned
}

// Close closes the file.
func (r *TailReader) Close() error { return r.f.Close() }

// Entries returns the number of entries read so far (all of them, once
// Next has returned io.EOF).
func (r *TailReader) Entries() uint64 { return r.n }

// Next returns the next entry (ids valid until the next call) and its
// count, or io.EOF after the last, waiting for the spool where needed.
func (r *TailReader) Next() ([]uint32, uint64, error) {
	k := r.t.k
	size := recordSize(k)
	for r.pos+size > len(r.buf) {
		t := r.t
		t.mu.Lock()
		written, done, err, wake := t.written, t.done, t.err, t.wake
		t.mu.Unlock()
		if written > r.read {
			rest := copy(r.buf[:cap(r.buf)], r.buf[r.pos:])
			m := int(min(written-r.read, int64(cap(r.buf)-rest)))
			if _, err := io.ReadFull(r.f, r.buf[rest:rest+m]); err != nil {
				return nil, 0, fmt.Errorf("%s: spooled order %d: %w", t.path, k, err)
			}
			r.read += int64(m)
			r.buf, r.pos = r.buf[:rest+m], 0
			continue
		}
		if done {
			if err != nil {
				return nil, 0, err
			}
			if r.pos < len(r.buf) {
				return nil, 0, fmt.Errorf("%s: spooled order %d ends within an entry", t.path, k)
			}
			return nil, 0, io.EOF
		}
		select {
		case <-wake:
		case <-r.ctx.Done():
			return nil, 0, r.ctx.Err()
		}
	}
	n := readRecord(r.buf[r.pos:r.pos+size], r.ids)
	r.pos += size
	r.n++
	return r.ids, n, nil
}

// SpoolReader reads the entries of one order of Spooled counts.
type SpoolReader struct {
	f    *os.File
	path string
	k    int
	buf  []byte
	pos  int
	ids  []uint32
	left uint64 // entries not yet read
}

// Close closes the file.
func (r *SpoolReader) Close() error { return r.f.Close() }

// Next returns the next entry (ids valid until the next call) and its
// count, or io.EOF after the last.
func (r *SpoolReader) Next() ([]uint32, uint64, error) {
	if r.left == 0 {
		return nil, 0, io.EOF
	}
	size := recordSize(r.k)
	if r.pos+size > len(r.buf) {
		rest := copy(r.buf[:cap(r.buf)], r.buf[r.pos:])
		n, err := io.ReadAtLeast(r.f, r.buf[rest:cap(r.buf)], size-rest)
		if err != nil {
			return nil, 0, fmt.Errorf("%s: spooled order %d ends early: %w", r.path, r.k, err)
		}
		r.buf, r.pos = r.buf[:rest+n], 0
	}
	n := readRecord(r.buf[r.pos:r.pos+size], r.ids)
	r.pos += size
	r.left--
	return r.ids, n, nil
}

// Open returns a reader of the entries of order k >= 2, in order.
func (s *Spooled) Open(k int) (*SpoolReader, error) {
	if k < 2 || k > len(s.Entries) {
		return nil, fmt.Errorf("spooled counts: no order %d", k)
	}
	f, err := os.Open(s.paths[k-1])
	if err != nil {
		return nil, err
	}
	return &SpoolReader{f: f, path: s.paths[k-1], k: k, buf: make([]byte, 0, spoolBuffer), ids: make([]uint32, k), left: s.Entries[k-1]}, nil
}

// StatEntries returns the number of entries that a binary count file
// announces in its end record, reading only its header and end record; ok
// is false for anything else (a text or compressed file, standard input,
// a file that is not regular).
func StatEntries(path string) (n uint64, ok bool) {
	f, err := os.Open(path)
	if err != nil {
		return 0, false
	}
	defer f.Close()
	fi, err := f.Stat()
	if err != nil || !fi.Mode().IsRegular() {
		return 0, false
	}
	var hdr [headerSize]byte
	if _, err := io.ReadFull(f, hdr[:]); err != nil || !IsBinary(hdr[:]) {
		return 0, false
	}
	order := int(hdr[12]) | int(hdr[13])<<8 | int(hdr[14])<<16 | int(hdr[15])<<24
	if order < 1 || order > tables.MaxOrder {
		return 0, false
	}
	t, err := ReadEnd(f, fi.Size(), order)
	if err != nil {
		return 0, false
	}
	for _, e := range t.Entries {
		n += e
	}
	return n, true
}
