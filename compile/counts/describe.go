package counts

import (
	"bufio"
	"fmt"
	"io"
	"os"
)

// FileInfo describes a binary count file from its header and end record.
type FileInfo struct {
	Size          int64
	LayoutVersion int
	Order         int
	Words         int
	Totals        Totals
}

// IsBinaryFile reports whether the named file is a regular file that starts
// with the magic of a binary count file. It never opens anything else (a
// pipe would block).
func IsBinaryFile(path string) bool { return IsBinary(fileHead(path, len(Magic))) }

// IsTextFile reports whether the named file is a regular file whose first
// bytes read as the text form (LooksLikeText). It never opens anything
// else.
func IsTextFile(path string) bool { return LooksLikeText(fileHead(path, 64)) }

// fileHead returns up to n first bytes of the named file when it is a
// regular one, else nothing.
func fileHead(path string, n int) []byte {
	if fi, err := os.Stat(path); err != nil || !fi.Mode().IsRegular() {
		return nil
	}
	f, err := os.Open(path)
	if err != nil {
		return nil
	}
	defer f.Close()
	head := make([]byte, n)
	k, _ := io.ReadFull(f, head)
	return head[:k]
}

// Describe reads the header and end record of the named binary count file
// (not its blocks: Dump and Load check those).
func Describe(path string) (*FileInfo, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	r, err := NewReader(f)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	h := r.Header()
	end, err := ReadEnd(f, st.Size(), h.Order)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &FileInfo{Size: st.Size(), LayoutVersion: BinaryVersion, Order: h.Order, Words: len(h.Vocab), Totals: end}, nil
}

// Dump writes the entries of a binary count file in the text form, one
// line each ("count<TAB>words"); order > 0 keeps that order only. Every
// block is checked as it is read.
func Dump(w io.Writer, name string, r io.Reader, order int) error {
	cr, err := NewReader(r)
	if err != nil {
		return fmt.Errorf("%s: %w", name, err)
	}
	vocab := cr.Header().Vocab
	bw := bufio.NewWriterSize(w, 1<<16)
	var line []byte
	for {
		ids, n, err := cr.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if order > 0 && len(ids) != order {
			continue
		}
		line = appendTextLine(line[:0], vocab, ids, n)
		if _, err := bw.Write(line); err != nil {
			return err
		}
	}
	return bw.Flush()
}
