package counts

import "sync"

// blockAhead reads and decompresses a Reader's blocks on a goroutine of
// its own, a few blocks ahead of the goroutine that decodes their entries:
// reading the file, checking each frame's CRC-32C and zstd then overlap
// the decoding of the entries (and what the caller does with them). The
// blocks, their checks and the errors are those of the Reader alone, in
// the same order: the goroutine reads up to the end record's tag, or the
// first error, and stops there; the Reader reads the end record itself.
type blockAhead struct {
	full chan aheadBlock
	free chan []byte
	stop chan struct{}
	wg   sync.WaitGroup
}

// aheadBlock is a block read ahead, or what stopped the reading.
type aheadBlock struct {
	b   rawBlock
	err error
}

// ReadAhead makes r read and decompress its blocks on another goroutine,
// ahead of Next. StopAhead must be called once r is no longer read.
func (r *Reader) ReadAhead() {
	if r.ahead != nil || r.done || r.err != nil {
		return
	}
	const blocks = 3
	// Room in each channel for every buffer: the Reader's own, and blocks
	// more.
	a := &blockAhead{full: make(chan aheadBlock, blocks+1), free: make(chan []byte, blocks+1), stop: make(chan struct{})}
	for range blocks {
		a.free <- nil
	}
	src, prevK := &r.blockSource, r.blockK
	a.wg.Add(1)
	go func() {
		defer a.wg.Done()
		defer close(a.full)
		for {
			var dst []byte
			select {
			case dst = <-a.free:
			case <-a.stop:
				return
			}
			b, err := src.readBlock(prevK, dst)
			a.full <- aheadBlock{b, err} // never blocks: it holds every buffer
			if err != nil || b.k == 0 {
				return
			}
			prevK = b.k
		}
	}()
	r.ahead = a
}

// take returns the next block read ahead, taking back the memory of the
// block before (done).
func (a *blockAhead) take(done []byte) (rawBlock, error) {
	if done != nil {
		select {
		case a.free <- done:
		default:
		}
	}
	x := <-a.full
	if x.err == nil && x.b.k == 0 {
		// The goroutine has stopped at the end record's tag: the Reader
		// reads on from there.
		a.wg.Wait()
	}
	return x.b, x.err
}

// StopAhead stops the goroutine ReadAhead started, and waits for it. The
// Reader reads on by itself only if it had reached the end record.
func (r *Reader) StopAhead() {
	if r.ahead == nil {
		return
	}
	close(r.ahead.stop)
	r.ahead.wg.Wait()
	r.ahead = nil
}
