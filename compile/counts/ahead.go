package counts

import (
	"io"
	"sync"

	"ingot/compile/tables"
)

// aheadBatch is how many merged entries the merge goroutine hands over at
// a time.
const aheadBatch = 4096

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
	pos        int
}

// readAhead starts reading m ahead. Close must be called.
func readAhead(m *merger) *ahead {
	const batches = 4
	a := &ahead{full: make(chan *batch, batches), free: make(chan *batch, batches), stop: make(chan struct{})}
	for range batches {
		// Room for the longest entries: ids never move once appended.
		a.free <- &batch{ids: make([]uint32, 0, aheadBatch*tables.MaxOrder), entries: make([]merged, 0, aheadBatch)}
	}
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

// next returns the next merged entry (valid until the next call) or the
// error that ended the merge (io.EOF at its end).
func (a *ahead) next() (*merged, error) {
	for a.cur == nil || a.pos == len(a.cur.entries) {
		if a.cur != nil {
			if a.cur.err != nil {
				return nil, a.cur.err
			}
			a.free <- a.cur
		}
		b, ok := <-a.full
		if !ok {
			return nil, io.EOF
		}
		a.cur, a.pos = b, 0
	}
	e := &a.cur.entries[a.pos]
	a.pos++
	return e, nil
}

// Close stops the merge goroutine and waits for it.
func (a *ahead) Close() {
	close(a.stop)
	a.wg.Wait()
}
