// Package input opens the files the compiler reads (training text and count
// files), decompressing them by file-name extension: ".gz" (gzip) and ".zst"
// (zstd) are read through github.com/klauspost/compress; anything else is
// read as it is. The name "-" means standard input.
package input

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

// Stdin is the name under which standard input is read and reported.
const Stdin = "-"

// Open opens the named file (or standard input for "-") and returns a reader
// of its decompressed bytes. Closing it closes the file.
func Open(name string) (io.ReadCloser, error) {
	if name == Stdin {
		return io.NopCloser(os.Stdin), nil
	}
	f, err := os.Open(name)
	if err != nil {
		return nil, err
	}
	r, err := Decompress(name, f)
	if err != nil {
		f.Close()
		return nil, err
	}
	return &closer{Reader: r, close: func() error { r.Close(); return f.Close() }}, nil
}

// Decompress wraps r in the decompressor the name's extension asks for.
func Decompress(name string, r io.Reader) (io.ReadCloser, error) {
	switch {
	case strings.HasSuffix(name, ".gz"):
		z, err := gzip.NewReader(bufio.NewReader(r))
		if err != nil {
			return nil, fmt.Errorf("%s: not a gzip stream: %w", name, err)
		}
		return z, nil
	case strings.HasSuffix(name, ".zst"):
		z, err := zstd.NewReader(r, zstd.WithDecoderConcurrency(1))
		if err != nil {
			return nil, fmt.Errorf("%s: not a zstd stream: %w", name, err)
		}
		return z.IOReadCloser(), nil
	}
	return io.NopCloser(r), nil
}

type closer struct {
	io.Reader
	close func() error
}

func (c *closer) Close() error { return c.close() }

// Lines reads r line by line, calling fn with each line (without its line
// ending, "\r\n" or "\n") and its 1-based number. Lines of any length are
// accepted. It stops at the first error fn returns.
func Lines(r io.Reader, fn func(line []byte, n int) error) error {
	br := bufio.NewReaderSize(r, 1<<16)
	var long []byte
	n := 0
	for {
		chunk, err := br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			long = append(long, chunk...)
			continue
		}
		if len(long) > 0 {
			chunk = append(long, chunk...)
			long = long[:0]
		}
		if len(chunk) > 0 {
			n++
			line := chunk
			if line[len(line)-1] == '\n' {
				line = line[:len(line)-1]
				if len(line) > 0 && line[len(line)-1] == '\r' {
					line = line[:len(line)-1]
				}
			}
			if ferr := fn(line, n); ferr != nil {
				return ferr
			}
		}
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
	}
}
