package estimate

import (
	"encoding/binary"
	"fmt"
	"io"
	"os"
)

// Column files: fixed-width little-endian values in entry order, written
// and read through a buffer of columnBuffer bytes (a value costs a bounds
// check and a load, a system call comes once per buffer).

const columnBuffer = 1 << 18

type colWriter struct {
	f   *os.File
	buf []byte // columnBuffer bytes, buf[:n] written
	n   int    // (an index, not a resliced buf: storing a slice per value
	// costs a write barrier each while the collector runs)
}

func (s *streamer) createCol(name string) (*colWriter, error) {
	f, err := os.Create(s.path(name))
	if err != nil {
		return nil, err
	}
	return &colWriter{f: f, buf: make([]byte, columnBuffer)}, nil
}

func (c *colWriter) flush() error {
	_, err := c.f.Write(c.buf[:c.n])
	c.n = 0
	if err != nil {
		return fmt.Errorf("column %s: %w", c.f.Name(), err)
	}
	return nil
}

func (c *colWriter) put64(v uint64) error {
	if c.n+8 > len(c.buf) {
		if err := c.flush(); err != nil {
			return err
		}
	}
	binary.LittleEndian.PutUint64(c.buf[c.n:], v)
	c.n += 8
	return nil
}

func (c *colWriter) put32(v uint32) error {
	if c.n+4 > len(c.buf) {
		if err := c.flush(); err != nil {
			return err
		}
	}
	binary.LittleEndian.PutUint32(c.buf[c.n:], v)
	c.n += 4
	return nil
}

// close writes what is buffered and closes the file.
func (c *colWriter) close() error {
	err := c.flush()
	if cerr := c.f.Close(); err == nil {
		err = cerr
	}
	return err
}

type colReader struct {
	f   *os.File
	buf []byte
	pos int
	off int64 // the file offset of buf[0]
}

func openCol(path string) (*colReader, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	return &colReader{f: f, buf: make([]byte, 0, columnBuffer)}, nil
}

// fill makes at least n bytes readable from pos.
func (c *colReader) fill(n int) error {
	rest := copy(c.buf[:cap(c.buf)], c.buf[c.pos:])
	c.off += int64(c.pos)
	m, err := io.ReadAtLeast(c.f, c.buf[rest:cap(c.buf)], n-rest)
	c.buf, c.pos = c.buf[:rest+m], 0
	if err != nil {
		return fmt.Errorf("column %s ends early, at byte %d: %w", c.f.Name(), c.off+int64(rest+m), err)
	}
	return nil
}

func (c *colReader) get64() (uint64, error) {
	if c.pos+8 > len(c.buf) {
		if err := c.fill(8); err != nil {
			return 0, err
		}
	}
	v := binary.LittleEndian.Uint64(c.buf[c.pos:])
	c.pos += 8
	return v, nil
}

func (c *colReader) get32() (uint32, error) {
	if c.pos+4 > len(c.buf) {
		if err := c.fill(4); err != nil {
			return 0, err
		}
	}
	v := binary.LittleEndian.Uint32(c.buf[c.pos:])
	c.pos += 4
	return v, nil
}

func (c *colReader) close() { c.f.Close() }

// gather yields from[i] for the positions i of a column of 32-bit values,
// looked up gatherBatch at a time in a loop of their own: the positions
// are random (an entry's suffix), so each look-up is a cache miss, and
// misses that do not wait for each other overlap.
type gather struct {
	col  *colReader
	from []float64
	left uint64 // positions not yet read
	at   []uint32
	buf  []float64
	pos  int
}

const gatherBatch = 1 << 12

func (g *gather) next() (float64, error) {
	if g.pos == len(g.buf) {
		n := int(min(g.left, gatherBatch))
		if n == 0 {
			return 0, fmt.Errorf("column %s: more values asked than it holds", g.col.f.Name())
		}
		g.at = g.at[:0]
		for range n {
			i, err := g.col.get32()
			if err != nil {
				return 0, err
			}
			g.at = append(g.at, i)
		}
		g.buf = g.buf[:0]
		for _, i := range g.at {
			g.buf = append(g.buf, g.from[i])
		}
		g.left -= uint64(n)
		g.pos = 0
	}
	v := g.buf[g.pos]
	g.pos++
	return v, nil
}
