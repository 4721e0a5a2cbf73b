package format

import (
	"encoding/binary"
	"fmt"
	"io"
	"os"
)

// spill is an append-only run of bytes of the stream writer in a file of
// its own (a section being written, or values and bit streams kept for a
// section written later), made at the first write, read back in pieces as
// often as needed, so that a model larger than memory can be written.
// (Holding them in memory instead, where a budget allowed, cost more: the
// garbage collector's work on slices grown and dropped every order
// outweighed the system calls, measured 2026-12-03.)
type spill struct {
	path string
	f    *os.File
	// buf[:m] is written, not yet in the file (a bufio.Writer cost about
	// three times as much per value, measured 2026-12-03; and m is an
	// index, not a resliced buf: storing a slice per value costs a write
	// barrier each while the collector runs)
	buf []byte
	m   int
	n   int64 // bytes written
}

// spillBuffer is the size of a spill file's write and read buffers.
const spillBuffer = 1 << 16

func newSpill(path string) *spill { return &spill{path: path} }

func (s *spill) open() error {
	f, err := os.Create(s.path)
	if err != nil {
		return err
	}
	s.f, s.buf, s.m = f, make([]byte, spillBuffer), 0
	return nil
}

// room makes room for n bytes in the buffer (n <= spillBuffer), opening
// the file at the first write.
func (s *spill) room(n int) error {
	if s.f == nil {
		return s.open()
	}
	if s.m+n > len(s.buf) {
		return s.flush()
	}
	return nil
}

func (s *spill) write(b []byte) error {
	s.n += int64(len(b))
	for len(b) > 0 {
		if err := s.room(1); err != nil {
			return err
		}
		m := copy(s.buf[s.m:], b)
		s.m, b = s.m+m, b[m:]
	}
	return nil
}

// put64 appends x, little-endian.
func (s *spill) put64(x uint64) error {
	if err := s.room(8); err != nil {
		return err
	}
	s.n += 8
	binary.LittleEndian.PutUint64(s.buf[s.m:], x)
	s.m += 8
	return nil
}

// put32 appends x, little-endian.
func (s *spill) put32(x uint32) error {
	if err := s.room(4); err != nil {
		return err
	}
	s.n += 4
	binary.LittleEndian.PutUint32(s.buf[s.m:], x)
	s.m += 4
	return nil
}

// flush writes what is buffered to the file.
func (s *spill) flush() error {
	if s.m == 0 {
		return nil
	}
	_, err := s.f.Write(s.buf[:s.m])
	s.m = 0
	return err
}

// patch overwrites the bytes at off with b (written before).
func (s *spill) patch(off int64, b []byte) error {
	if err := s.flush(); err != nil {
		return err
	}
	_, err := s.f.WriteAt(b, off)
	return err
}

// each calls fn with the bytes written, in order, in pieces of a multiple
// of 8 bytes (but the last), valid during the call only.
func (s *spill) each(fn func([]byte) error) error {
	if err := s.flush(); err != nil {
		return err
	}
	buf := make([]byte, spillBuffer)
	for off := int64(0); off < s.n; {
		m, err := s.f.ReadAt(buf[:min(int64(len(buf)), s.n-off)], off)
		if err != nil && !(err == io.EOF && off+int64(m) == s.n) {
			return fmt.Errorf("reading back %s: %w", s.path, err)
		}
		if err := fn(buf[:m]); err != nil {
			return err
		}
		off += int64(m)
	}
	return nil
}

// values calls fn with the little-endian 64-bit values written (put64),
// in order.
func (s *spill) values(fn func(i, x uint64) error) error {
	i := uint64(0)
	return s.each(func(b []byte) error {
		for ; len(b) >= 8; b = b[8:] {
			if err := fn(i, binary.LittleEndian.Uint64(b)); err != nil {
				return err
			}
			i++
		}
		return nil
	})
}

// release removes the spill's file. It is safe to call more than once.
func (s *spill) release() {
	if s.f != nil {
		s.f.Close()
		s.f, s.buf = nil, nil
		os.Remove(s.path)
	}
}

// cursor reads the 64-bit values of a spill (put64) one at a time.
type cursor struct {
	s   *spill
	buf []byte
	pos int
	off int64 // where the file's next piece starts
}

// cursor returns a cursor at the first value.
func (s *spill) cursor() (*cursor, error) {
	if err := s.flush(); err != nil {
		return nil, err
	}
	return &cursor{s: s, buf: make([]byte, 0, spillBuffer)}, nil
}

func (c *cursor) next() (uint64, error) {
	if c.pos+8 > len(c.buf) {
		m := min(int64(cap(c.buf)), c.s.n-c.off) &^ 7
		if m == 0 {
			return 0, fmt.Errorf("reading back %s: %w", c.s.path, io.ErrUnexpectedEOF)
		}
		c.buf = c.buf[:m]
		if _, err := c.s.f.ReadAt(c.buf, c.off); err != nil {
			return 0, fmt.Errorf("reading back %s: %w", c.s.path, err)
		}
		c.off += m
		c.pos = 0
	}
	x := binary.LittleEndian.Uint64(c.buf[c.pos:])
	c.pos += 8
	return x, nil
}
