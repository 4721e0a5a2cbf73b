package counts

import (
	"encoding/binary"
	"hash/crc32"
	"io"
	"sync"

	"github.com/klauspost/compress/zstd"
)

// blockPipe compresses a Writer's blocks on several goroutines and writes
// them to the underlying writer in the order they were made, so that the
// file is the same, byte for byte, as one Writer compressing each block
// in turn (each block is a zstd frame of its own, made with the same
// options). While the owner encodes the next blocks' entries, the others
// are compressed on the other cores.
type blockPipe struct {
	w      io.Writer
	jobs   chan *blockJob // to the compressors
	order  chan *blockJob // to the goroutine writing, in the order made
	free   chan *blockJob
	wg     sync.WaitGroup // the compressors and the writing goroutine
	mu     sync.Mutex
	err    error // the first write error
	closed bool
}

// blockJob is one block on its way through a blockPipe.
type blockJob struct {
	raw, packed []byte
	k, entries  int
	ready       chan struct{}
}

// newBlockPipe starts n compressors (zstd encoders made by newEnc) and the
// goroutine that writes to w. close must be called.
func newBlockPipe(w io.Writer, n int, newEnc func() (*zstd.Encoder, error)) (*blockPipe, error) {
	encs := make([]*zstd.Encoder, n)
	for i := range encs {
		var err error
		if encs[i], err = newEnc(); err != nil {
			return nil, err
		}
	}
	inFlight := 2*n + 1
	p := &blockPipe{w: w, jobs: make(chan *blockJob, inFlight), order: make(chan *blockJob, inFlight), free: make(chan *blockJob, inFlight)}
	for range inFlight {
		p.free <- &blockJob{ready: make(chan struct{}, 1)}
	}
	for _, enc := range encs {
		p.wg.Add(1)
		go func() {
			defer p.wg.Done()
			defer enc.Close()
			for j := range p.jobs {
				j.packed = enc.EncodeAll(j.raw, j.packed[:0])
				j.ready <- struct{}{}
			}
		}()
	}
	p.wg.Add(1)
	go func() {
		defer p.wg.Done()
		for j := range p.order {
			<-j.ready
			if p.failed() == nil {
				if err := writeBlock(p.w, j.k, j.entries, len(j.raw), j.packed); err != nil {
					p.mu.Lock()
					p.err = err
					p.mu.Unlock()
				}
			}
			p.free <- j
		}
	}()
	return p, nil
}

func (p *blockPipe) failed() error {
	p.mu.Lock()
	defer p.mu.Unlock()
	return p.err
}

// put hands over the block raw (order k, entries entries) and returns an
// empty buffer in its place, or the first write error so far.
func (p *blockPipe) put(raw []byte, k, entries int) ([]byte, error) {
	if err := p.failed(); err != nil {
		return raw, err
	}
	j := <-p.free
	j.raw, raw = raw, j.raw[:0]
	j.k, j.entries = k, entries
	p.order <- j
	p.jobs <- j
	return raw, nil
}

// close waits for every block handed over to be written and stops the
// goroutines; it returns the first write error.
func (p *blockPipe) close() error {
	if !p.closed {
		p.closed = true
		close(p.jobs)
		close(p.order)
		p.wg.Wait()
	}
	return p.failed()
}

// writeBlock writes a block's header and its packed bytes.
func writeBlock(w io.Writer, k, entries, raw int, packed []byte) error {
	var h [blockHeaderSize]byte
	le := binary.LittleEndian
	h[0] = byte(k)
	le.PutUint32(h[1:], uint32(entries))
	le.PutUint32(h[5:], uint32(raw))
	le.PutUint32(h[9:], uint32(len(packed)))
	le.PutUint32(h[13:], crc32.Checksum(packed, castagnoli))
	if _, err := w.Write(h[:]); err != nil {
		return err
	}
	_, err := w.Write(packed)
	return err
}
