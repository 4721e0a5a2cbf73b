package input

import (
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"hash"
	"io"
	"os"

	"ingot/format/files"
)

// Hashed is an input opened by OpenRegularHashed: it reads as OpenRegular
// does, and every byte of the file as stored (before decompression) passes
// through SHA-256 on the way.
type Hashed struct {
	io.ReadCloser
	raw io.Reader // the file through the hash
	// stored is the file when it is read as stored (not decompressed,
	// not standard input), for ReadAt and Stat.
	stored *os.File
	h      hash.Hash
	n      counter
}

type counter int64

func (c *counter) Write(p []byte) (int, error) { *c += counter(len(p)); return len(p), nil }

// OpenRegularHashed is OpenRegular that also digests the stored bytes, for
// a record of what a command read (Digest). "-" is standard input.
func OpenRegularHashed(name string) (*Hashed, error) {
	h := &Hashed{h: sha256.New()}
	var f *os.File
	if name == Stdin {
		f = os.Stdin
	} else {
		var err error
		if f, _, err = files.OpenRegular(name); err != nil {
			return nil, err
		}
	}
	h.raw = io.TeeReader(f, io.MultiWriter(h.h, &h.n))
	shown := name
	if name == Stdin {
		shown = "stdin"
	}
	r, plain, err := decompress(shown, h.raw)
	if err != nil {
		if f != os.Stdin {
			f.Close()
		}
		return nil, err
	}
	if plain && f != os.Stdin {
		h.stored = f
	}
	h.ReadCloser = &closer{Reader: r, close: func() error {
		r.Close()
		if f == os.Stdin {
			return nil
		}
		return f.Close()
	}}
	return h, nil
}

// Digest reads what the reader has not yet taken of the stored bytes and
// returns the length and hex SHA-256 of all of them. Call it once, after
// reading and before Close.
func (h *Hashed) Digest() (int64, string, error) {
	if _, err := io.Copy(io.Discard, h.raw); err != nil {
		return 0, "", err
	}
	return int64(h.n), hex.EncodeToString(h.h.Sum(nil)), nil
}

// errNotStored is ReadAt's and Stat's error for an input that is not read
// as stored.
var errNotStored = errors.New("input: not a regular file read as stored")

// ReadAt reads the file as stored at off, without moving the stream nor
// passing the bytes through the digest (a reader of a count file looks at
// its end record first this way). It fails for a decompressed file and
// standard input.
func (h *Hashed) ReadAt(p []byte, off int64) (int, error) {
	if h.stored == nil {
		return 0, errNotStored
	}
	return h.stored.ReadAt(p, off)
}

// Stat describes the file as stored, when ReadAt can read it.
func (h *Hashed) Stat() (os.FileInfo, error) {
	if h.stored == nil {
		return nil, errNotStored
	}
	return h.stored.Stat()
}
