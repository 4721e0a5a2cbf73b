package counts

import (
	"io"
	"sync"

	"ingot/compile/tables"
)

// aheadBatch is how many merged entries the merge goroutine hands over at
// a time.
const aheadBatch = 256

// merged is one entry of a merge read ahead: its ids, summed count, the
// lowest-numbered stream that held it and, when that stream is a count
// file, where it stood there (for error messages).
type merged struct {
	ids   []uint32
	count uint64
	from  int
	at    position
}

// batch is a run of merged entries, their ids back to back, and what ended
// the merge after them (nil while it goes on).
type batch struct {
	ids     []uint32
	entries []merged
	err     error
}

// ahead runs a merger on its own goroutine, a few batches ahead of the
// goroutine that consumes its entries, so that decoding the sources
// (zstd, varints, the k-way merge) overlaps what the consumer does with
// each entry. The entries come in the merger's order whatever GOMAXPROCS.
type ahead struct {
	full, free chan *batch
	stop       chan struct{}
	wg         sync.WaitGroup
	cur        *batch
}

// readAhead starts reading m ahead. Close must be called.
func readAhead(m *merger) *ahead {
	const batches = 4
	a := &ahead{full: make(chan *batch, batches), free: make(chan *batch, batches), stop: make(chan struct{})}
	for range batches {
		// Room for the longest entries: ids never move once appended.
		a.free <- &batch{ids: make([]uint32, 0, aheadBatch*tables.MaxOrder), entries: make([]merged, 0, aheadBatch)}
	}
	// One count file, the common case, is read straight into the batches.
	one, _ := m.streams[0].(*readerStream)
	if len(m.streams) != 1 {
		one = nil
	}
	identity := one != nil && one.identity()
	a.wg.Add(1)
	go func() {
		defer a.wg.Done()
		defer close(a.full)
		var g []uint32
		for {
			var b *batch
			select {
			case b = <-a.free:
			case <-a.stop:
				return
			}
			b.ids, b.entries, b.err = b.ids[:0], b.entries[:0], nil
			if one != nil {
				b.err = m.fillOne(one, identity, b)
			}
			for len(b.entries) < aheadBatch && b.err == nil {
				var n uint64
				var from int
				g, n, from, b.err = m.next(g)
				if b.err != nil {
					break
				}
				b.ids = append(b.ids, g...)
				ids := b.ids[len(b.ids)-len(g):]
				b.entries = append(b.entries, merged{ids: ids, count: n, from: from, at: m.taken})
			}
			a.full <- b // never blocks: it holds every batch
			if b.err != nil {
				return
			}
		}
	}()
	return a
}

// nextBatch returns the next batch of merged entries, handing the one
// returned before back to the merge goroutine. Its err, when not nil, ends
// the merge after its entries (io.EOF at the merge's end). It returns nil
// after a batch that ended the merge.
func (a *ahead) nextBatch() *batch {
	if a.cur != nil {
		if a.cur.err != nil {
			return nil
		}
		a.free <- a.cur
		a.cur = nil
	}
	b, ok := <-a.full
	if !ok {
		return &batch{err: io.EOF}
	}
	a.cur = b
	return b
}

// Close stops the merge goroutine and waits for it.
func (a *ahead) Close() {
	close(a.stop)
	a.wg.Wait()
}

// fillOne fills b with the entries of a merge of the one count file s
// (m.streams[0]): the head the merger holds, then entries read straight
// from the file, without the copies into the merger's heads (nor the
// remap when identity says it keeps every id). It returns
// what ended the merge, or nil when b is full.
func (m *merger) fillOne(s *readerStream, identity bool, b *batch) error {
	if len(m.live) == 0 {
		return io.EOF
	}
	if !m.headTaken {
		m.headTaken = true
		b.ids = append(b.ids, m.heads[0]...)
		b.entries = append(b.entries, merged{ids: b.ids[len(b.ids)-len(m.heads[0]):], count: m.counts[0], at: m.at[0]})
	}
	for len(b.entries) < aheadBatch {
		ids, n, err := s.r.Next()
		if err == io.EOF {
			m.live = m.live[:0]
			return io.EOF
		}
		if err != nil {
			return &errStream{0, err}
		}
		from := len(b.ids)
		if identity {
			b.ids = append(b.ids, ids...)
		} else {
			for _, id := range ids {
				b.ids = append(b.ids, s.remap[id])
			}
		}
		b.entries = append(b.entries, merged{ids: b.ids[from:], count: n, at: s.at()})
	}
	return nil
}
