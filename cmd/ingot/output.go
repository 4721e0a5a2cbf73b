package main

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"
)

// writeOutput writes a command's output file atomically: into a temporary
// file in the target directory, synced, then renamed into place. A path
// ending in .gz or .zst is compressed accordingly. On any
// error the temporary file is removed and nothing appears at path. The path
// "-" (or "") writes to stdout instead.
func writeOutput(path string, stdout io.Writer, fn func(w io.Writer) error) error {
	if path == "" || path == "-" {
		bw := bufio.NewWriterSize(stdout, 1<<16)
		if err := fn(bw); err != nil {
			return err
		}
		return bw.Flush()
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	ok := false
	defer func() {
		if !ok {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	bw := bufio.NewWriterSize(tmp, 1<<20)
	w, finish, err := compressor(path, bw)
	if err != nil {
		return err
	}
	if err := fn(w); err != nil {
		return err
	}
	if err := finish(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err := tmp.Sync(); err != nil {
		return fmt.Errorf("syncing %s: %w", path, err)
	}
	if err := tmp.Close(); err != nil {
		return fmt.Errorf("closing %s: %w", path, err)
	}
	if err := os.Chmod(tmp.Name(), 0o644); err != nil {
		return err
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	ok = true
	return nil
}

// compressor compresses what is written by the path's extension: ".gz"
// (gzip) and ".zst" (zstd), as the inputs are read. finish flushes the
// compressed stream.
func compressor(path string, w io.Writer) (io.Writer, func() error, error) {
	switch {
	case strings.HasSuffix(path, ".gz"):
		z := gzip.NewWriter(w)
		return z, z.Close, nil
	case strings.HasSuffix(path, ".zst"):
		z, err := zstd.NewWriter(w, zstd.WithEncoderConcurrency(1))
		if err != nil {
			return nil, nil, err
		}
		return z, z.Close, nil
	}
	return w, func() error { return nil }, nil
}
