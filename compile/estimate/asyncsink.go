package estimate

import (
	"sync/atomic"

	"ingot/compile/tables"
)

// asyncSink hands the entries to a Sink on a goroutine of its own, in
// batches, so that writing the model (the sink's work, and the log10 of
// the values) runs on a second core beside the estimate. The sink sees the same entries in the same
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

// sinkBatch holds up to sinkBatchEntries entries in arrays made once,
// filled by index: appending to slices would store a slice header per
// entry and field, a write barrier each while the collector runs.
type sinkBatch struct {
	n        int      // entries
	nids     int      // ids[:nids] in use
	ids      []uint32 // every entry's words, one after the other
	k        []uint8  // each entry's order
	rank     []uint32
	prob     []float64
	backoff  []float64
	children []uint64
	flags    []uint8 // noProb, top
}

func newSinkBatch() *sinkBatch {
	return &sinkBatch{ids: make([]uint32, sinkBatchEntries*tables.MaxOrder), k: make([]uint8, sinkBatchEntries),
		rank: make([]uint32, sinkBatchEntries), prob: make([]float64, sinkBatchEntries), backoff: make([]float64, sinkBatchEntries),
		children: make([]uint64, sinkBatchEntries), flags: make([]uint8, sinkBatchEntries)}
}

const (
	noProbFlag = 1 << iota // the entry is <s>: log10 probability tables.NoProb
	topFlag                // the entry is of the top order: no back-off weight
)

func (b *sinkBatch) reset() { b.n, b.nids = 0, 0 }

func newAsyncSink(sink Sink) *asyncSink {
	a := &asyncSink{full: make(chan *sinkBatch, 2), free: make(chan *sinkBatch, 3), done: make(chan error, 1)}
	for range 3 {
		a.free <- newSinkBatch()
	}
	a.batch = <-a.free
	go func() {
		var err error
		for b := range a.full {
			if err == nil {
				off := 0
				for i, k := range b.k[:b.n] {
					ids := b.ids[off : off+int(k)]
					off += int(k)
					lp := log10f32(b.prob[i])
					if b.flags[i]&noProbFlag != 0 {
						lp = tables.NoProb
					}
					var lb float32
					if b.flags[i]&topFlag == 0 {
						lb = log10f32(b.backoff[i])
					}
					if err = sink.Add(ids, b.rank[i], lp, lb, b.children[i]); err != nil {
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

// add queues one entry, its probability and back-off weight (the sink
// is given their log10, computed on its goroutine; noProb: the log10
// probability tables.NoProb; top: no back-off weight). An error the sink
// gave for an earlier entry is returned once a batch has found it, or by
// close.
func (a *asyncSink) add(ids []uint32, rank uint32, prob, backoff float64, children uint64, noProb, top bool) error {
	if a.err != nil {
		return a.err
	}
	b := a.batch
	i := b.n
	b.nids += copy(b.ids[b.nids:], ids)
	b.k[i] = uint8(len(ids))
	b.rank[i] = rank
	b.prob[i] = prob
	b.backoff[i] = backoff
	b.children[i] = children
	var f uint8
	if noProb {
		f |= noProbFlag
	}
	if top {
		f |= topFlag
	}
	b.flags[i] = f
	b.n++
	if b.n < sinkBatchEntries {
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
	if a.batch.n > 0 {
		a.full <- a.batch
	}
	close(a.full)
	a.err = <-a.done
	return a.err
}
