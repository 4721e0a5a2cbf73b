package main

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// writeOutput writes a command's output file atomically: into a temporary
// file in the target directory, synced, then renamed into place. On any
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
	if err := fn(bw); err != nil {
		return err
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
