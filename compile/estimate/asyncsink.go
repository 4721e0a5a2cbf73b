package estimate

import "sync/atomic"

// asyncSink hands the entries to a Sink on a goroutine of its own, in
// batches, so that writing the model (the sink's work) runs on a second
// core beside the estimate. The sink sees the same entries in the same
// order as when called directly, so it writes the same bytes.
type asyncSink struct {
	batch  *sinkBatch
	full   chan *sinkBatch // to the writer
	free   chan *sinkBatch // back from it
	done   chan error      // the writer's first error, when it ends
	failed atomic.Bool     // the writer has had an error
	err    error
	closed bool
}

// sinkBatchEntries is the number of entries sent at a time.
const sinkBatchEntries = 1 << 13

type sinkBatch struct {
	ids      []uint32 // every entry's words, one after the other
	k        []uint8  // each entry's order
	rank     []uint32
	logProb  []float32
	logBack  []float32
	children []uint64
}

func (b *sinkBatch) reset() {
	b.ids, b.k, b.rank, b.logProb, b.logBack, b.children = b.ids[:0], b.k[:0], b.rank[:0], b.logProb[:0], b.logBack[:0], b.children[:0]
}

func newAsyncSink(sink Sink) *asyncSink {
	a := &asyncSink{full: make(chan *sinkBatch, 2), free: make(chan *sinkBatch, 3), done: make(chan error, 1)}
	for range 3 {
		a.free <- &sinkBatch{}
	}
	a.batch = <-a.free
	go func() {
		var err error
		for b := range a.full {
			if err == nil {
				off := 0
				for i, k := range b.k {
					ids := b.ids[off : off+int(k)]
					off += int(k)
					if err = sink.Add(ids, b.rank[i], b.logProb[i], b.logBack[i], b.children[i]); err != nil {
						a.failed.Store(true)
						break
					}
				}
			}
			b.reset()
			a.free <- b
		}
		a.done <- err
	}()
	return a
}

// Add queues one entry; an error the sink gave for an earlier one is
// returned once a batch has found it, or by close.
func (a *asyncSink) Add(ids []uint32, rank uint32, logProb, logBackoff float32, children uint64) error {
	if a.err != nil {
		return a.err
	}
	b := a.batch
	b.ids = append(b.ids, ids...)
	b.k = append(b.k, uint8(len(ids)))
	b.rank = append(b.rank, rank)
	b.logProb = append(b.logProb, logProb)
	b.logBack = append(b.logBack, logBackoff)
	b.children = append(b.children, children)
	if len(b.k) < sinkBatchEntries {
		return nil
	}
	if a.failed.Load() {
		return a.close()
	}
	a.full <- b
	a.batch = <-a.free
	return nil
}

// close hands the last batch to the sink, waits for it and returns the
// sink's first error. It is safe to call more than once.
func (a *asyncSink) close() error {
	if a.closed {
		return a.err
	}
	a.closed = true
	if len(a.batch.k) > 0 {
		a.full <- a.batch
	}
	close(a.full)
	a.err = <-a.done
	return a.err
}
