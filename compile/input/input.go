// Package input opens the files the compiler reads (training text, held-out
// text, count files and word lists) and splits them into lines.
//
// Compression is recognised by its magic bytes, on files and on standard
// input alike: gzip (1f 8b) and zstd (28 b5 2f fd) streams are read through
// github.com/klauspost/compress; anything else is read as it is. A file
// named .gz or .zst that does not start with the matching magic is an
// error. The name "-" means standard input.
//
// Lines end with "\n" or "\r\n". A byte-order mark (EF BB BF) at the very
// start of the input is skipped; anywhere else it is an error naming the
// line, as is a carriage return that does not end a line (text with
// CR-only line endings would otherwise read as one line). No line may be
// longer than the line-length cap (SetMaxLine, 16 MiB by default), so that
// no input, a decompression bomb included, makes a reader hold more than
// the cap in memory for one line.
package input

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"sync/atomic"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"

	"ingot/format/files"
)

// Stdin is the name under which standard input is read and reported.
const Stdin = "-"

// DefaultMaxLine is the line-length cap unless SetMaxLine changes it.
const DefaultMaxLine = 16 << 20

// maxZstdWindow caps the window a zstd stream may ask the decoder to keep
// (the largest that zstd's long mode uses by default, 2^27 bytes).
const maxZstdWindow = 128 << 20

var maxLine atomic.Int64

func init() { maxLine.Store(DefaultMaxLine) }

// SetMaxLine sets the line-length cap, in bytes, for every reader of this
// package in the process; n < 1 restores the default. It returns the cap
// in force before.
func SetMaxLine(n int64) int64 {
	if n < 1 {
		n = DefaultMaxLine
	}
	return maxLine.Swap(n)
}

// MaxLine returns the line-length cap in force.
func MaxLine() int64 { return maxLine.Load() }

// Error reports bad input with the file and line where it was found.
type Error struct {
	File string // empty until a caller that knows the name fills it in
	Line int
	Msg  string
}

func (e *Error) Error() string { return fmt.Sprintf("%s:%d: %s", e.File, e.Line, e.Msg) }

// Named gives err the file name: an *Error without one gets name; any other
// error is wrapped as "name: err".
func Named(name string, err error) error {
	if err == nil {
		return nil
	}
	var e *Error
	if errors.As(err, &e) {
		if e.File == "" {
			e.File = name
		}
		return err
	}
	return fmt.Errorf("%s: %w", name, err)
}

// Open opens the named file (or standard input for "-") and returns a reader
// of its decompressed bytes. Closing it closes the file. A named pipe is
// read as a stream (it may block until a writer comes); a directory is an
// error.
func Open(name string) (io.ReadCloser, error) {
	if name == Stdin {
		r, err := Decompress("stdin", os.Stdin)
		if err != nil {
			return nil, err
		}
		return r, nil
	}
	f, err := os.Open(name)
	if err != nil {
		return nil, err
	}
	if st, err := f.Stat(); err == nil && st.IsDir() {
		f.Close()
		return nil, &os.PathError{Op: "read", Path: name, Err: errors.New("is a directory")}
	}
	return decompressFile(name, f)
}

// OpenRegular is Open for inputs that must be regular files (count files):
// a device, a directory or a named pipe is refused at once, without
// blocking. "-" still means standard input.
func OpenRegular(name string) (io.ReadCloser, error) {
	if name == Stdin {
		return Open(name)
	}
	f, _, err := files.OpenRegular(name)
	if err != nil {
		return nil, err
	}
	return decompressFile(name, f)
}

func decompressFile(name string, f *os.File) (io.ReadCloser, error) {
	r, err := Decompress(name, f)
	if err != nil {
		f.Close()
		return nil, err
	}
	return &closer{Reader: r, close: func() error { r.Close(); return f.Close() }}, nil
}

var (
	gzipMagic = []byte{0x1f, 0x8b}
	zstdMagic = []byte{0x28, 0xb5, 0x2f, 0xfd}
)

// Decompress wraps r in the decompressor its first bytes call for; name is
// used in errors, and its extension (.gz, .zst) makes the matching magic
// required.
func Decompress(name string, r io.Reader) (io.ReadCloser, error) {
	rc, _, err := decompress(name, r)
	return rc, err
}

// decompress is Decompress that also reports whether r is read as stored
// (no decompressor).
func decompress(name string, r io.Reader) (io.ReadCloser, bool, error) {
	br := bufio.NewReaderSize(r, 1<<16)
	head, err := br.Peek(len(zstdMagic))
	if err != nil && err != io.EOF && err != bufio.ErrBufferFull {
		return nil, false, fmt.Errorf("%s: %w", name, err)
	}
	switch {
	case bytes.HasPrefix(head, gzipMagic):
		z, err := gzip.NewReader(br)
		if err != nil {
			return nil, false, fmt.Errorf("%s: not a gzip stream: %w", name, err)
		}
		return z, false, nil
	case bytes.HasPrefix(head, zstdMagic):
		z, err := zstd.NewReader(br, zstd.WithDecoderConcurrency(1), zstd.WithDecoderMaxWindow(maxZstdWindow))
		if err != nil {
			return nil, false, fmt.Errorf("%s: not a zstd stream: %w", name, err)
		}
		return z.IOReadCloser(), false, nil
	case strings.HasSuffix(name, ".gz"):
		return nil, false, fmt.Errorf("%s: not a gzip stream: it does not start with the gzip magic bytes 1f 8b", name)
	case strings.HasSuffix(name, ".zst"):
		return nil, false, fmt.Errorf("%s: not a zstd stream: it does not start with the zstd magic bytes 28 b5 2f fd", name)
	}
	return io.NopCloser(br), true, nil
}

type closer struct {
	io.Reader
	close func() error
}

func (c *closer) Close() error { return c.close() }

var byteOrderMark = []byte{0xef, 0xbb, 0xbf}

// Lines reads r line by line, calling fn with each line (without its line
// ending, "\r\n" or "\n") and its 1-based number. It skips a byte-order
// mark at the start of r, and stops with an *Error (File left empty; see
// Named) at a line longer than the cap, a byte-order mark elsewhere, or a
// carriage return that does not end a line. It stops at the first error fn
// returns.
func Lines(r io.Reader, fn func(line []byte, n int) error) error {
	limit := MaxLine()
	br := bufio.NewReaderSize(r, 1<<16)
	if head, _ := br.Peek(len(byteOrderMark)); bytes.Equal(head, byteOrderMark) {
		br.Discard(len(byteOrderMark))
	}
	var long []byte
	n := 0
	for {
		chunk, err := br.ReadSlice('\n')
		if err == bufio.ErrBufferFull {
			if int64(len(long)+len(chunk)) > limit {
				return tooLong(n+1, limit)
			}
			if cr := loneCR(chunk); cr {
				return crOnly(n + 1)
			}
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
			}
			if int64(len(line)) > limit {
				return tooLong(n, limit)
			}
			if len(line) > 0 && line[len(line)-1] == '\r' {
				line = line[:len(line)-1]
			}
			if bytes.IndexByte(line, '\r') >= 0 {
				return crOnly(n)
			}
			if bytes.Contains(line, byteOrderMark) {
				return &Error{Line: n, Msg: "byte-order mark (U+FEFF) inside the text: only one at the very start of a file is skipped"}
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

// loneCR reports a carriage return that is followed by something other
// than a line feed within b.
func loneCR(b []byte) bool {
	for i := bytes.IndexByte(b, '\r'); i >= 0 && i+1 < len(b); {
		if b[i+1] != '\n' {
			return true
		}
		j := bytes.IndexByte(b[i+1:], '\r')
		if j < 0 {
			return false
		}
		i += 1 + j
	}
	return false
}

func tooLong(n int, limit int64) error {
	return &Error{Line: n, Msg: fmt.Sprintf("line longer than %d bytes, the line-length cap (raise it with --max-line if the input is right)", limit)}
}

func crOnly(n int) error {
	return &Error{Line: n, Msg: "carriage return inside a line: lines must end with LF or CR LF; CR-only line endings are not read"}
}
