package main

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/zstd"

	"ingot/format/files"
)

// writeOutput writes a command's output file atomically: into a temporary
// file in the target directory, synced, then renamed into place. A path
// ending in .gz or .zst is compressed accordingly. On any
// error the temporary file is removed and nothing appears at path. The path
// "-" (or "") writes to stdout instead.
//
// A new file gets mode 0666 as the umask leaves it; a file replaced keeps
// its mode. A path that is a symbolic link writes the file it points to.
func writeOutput(ctx context.Context, path string, stdout io.Writer, fn func(w io.Writer) error) error {
	return writeOutputMode(ctx, path, 0o666, false, stdout, fn)
}

// writeOutputMode is writeOutput with the new file's permissions (before
// the umask), and with exclusive set, refusing to replace an existing file
// even one that appears while the output is written.
func writeOutputMode(ctx context.Context, path string, mode os.FileMode, exclusive bool, stdout io.Writer, fn func(w io.Writer) error) error {
	if path == "" || path == "-" {
		bw := bufio.NewWriterSize(stdout, 1<<16)
		if err := fn(bw); err != nil {
			return err
		}
		return bw.Flush()
	}
	if real, err := filepath.EvalSymlinks(path); err == nil {
		path = real
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	pending := pendingFrom(ctx)
	tmp, err := pending.createTemp(dir, "."+base+".tmp-", mode)
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	defer pending.remove(tmp.Name())
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
	if exclusive {
		if err := files.PublishExclusive(tmp.Name(), path); err != nil {
			return fmt.Errorf("cannot write %s: %w", path, err)
		}
		ok = true
		return nil
	}
	if err := files.KeepMode(tmp.Name(), path); err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
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

// pendingOutputs tracks the temporary files being written, so that an
// interrupted run (SIGINT, SIGTERM) can remove them before it exits.
type pendingOutputs struct {
	mu      sync.Mutex
	files   map[string]bool
	stopped bool // interrupted: no new temporary files
}

// createTemp creates a temporary file and records it, under the lock that
// removeAll takes: an interrupt that arrives meanwhile removes it too.
func (p *pendingOutputs) createTemp(dir, prefix string, perm os.FileMode) (*os.File, error) {
	if p == nil {
		return files.CreateTemp(dir, prefix, perm)
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stopped {
		return nil, fmt.Errorf("interrupted")
	}
	f, err := files.CreateTemp(dir, prefix, perm)
	if err == nil {
		p.files[f.Name()] = true
	}
	return f, err
}

// MkdirTemp makes a temporary directory (spill runs) and records it, under
// the same lock; removeAll removes it with everything in it.
func (p *pendingOutputs) MkdirTemp(dir, pattern string) (string, error) {
	if p == nil {
		return os.MkdirTemp(dir, pattern)
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	if p.stopped {
		return "", fmt.Errorf("interrupted")
	}
	d, err := os.MkdirTemp(dir, pattern)
	if err == nil {
		p.files[d] = true
	}
	return d, err
}

// Forget drops a directory its owner removed.
func (p *pendingOutputs) Forget(dir string) { p.remove(dir) }

func (p *pendingOutputs) remove(name string) {
	if p == nil {
		return
	}
	p.mu.Lock()
	defer p.mu.Unlock()
	delete(p.files, name)
}

// removeAll deletes every pending temporary file and directory.
func (p *pendingOutputs) removeAll() {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.stopped = true
	for name := range p.files {
		removeWhileWritten(name)
		delete(p.files, name)
	}
}

// removeWhileWritten removes a file or a directory that another goroutine
// may still be adding files to (a spill run started just before the
// interrupt): os.RemoveAll fails when a file appears between its listing
// and the directory's own removal, so it is tried again until the
// directory is gone, after which nothing can be created in it.
func removeWhileWritten(name string) {
	for attempt := 0; attempt < 200; attempt++ {
		if err := os.RemoveAll(name); err == nil {
			return
		}
		time.Sleep(5 * time.Millisecond)
	}
}

type pendingKey struct{}

func pendingFrom(ctx context.Context) *pendingOutputs {
	if ctx == nil {
		return nil
	}
	p, _ := ctx.Value(pendingKey{}).(*pendingOutputs)
	return p
}

// withInterruptCleanup returns a context carrying a pendingOutputs and
// starts watching for SIGINT and SIGTERM: on either, the pending temporary
// files are removed and the process exits with 128 + the signal number, as
// shells report it. stop ends the watch.
func withInterruptCleanup(stderr io.Writer) (ctx context.Context, stop func()) {
	p := &pendingOutputs{files: map[string]bool{}}
	ctx = context.WithValue(context.Background(), pendingKey{}, p)
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, syscall.SIGINT, syscall.SIGTERM)
	done := make(chan struct{})
	go func() {
		select {
		case sig := <-sigs:
			p.removeAll()
			fmt.Fprintf(stderr, "ingot: interrupted by %v; no output written\n", sig)
			code := 128 + int(sig.(syscall.Signal))
			os.Exit(code)
		case <-done:
		}
	}()
	return ctx, func() { signal.Stop(sigs); close(done) }
}
