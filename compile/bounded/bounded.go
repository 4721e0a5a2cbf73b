// Package bounded compiles counts into a model within a memory budget:
// the counts are merged into one sorted file per order on disk
// (counts.SpoolOrders), estimated in passes over them
// (estimate.EstimateStreamed: each order linked to the one below in memory,
// by an estimate.Linker as soon as the order is spooled, the top order as
// it is spooled, or sorted on disk)
// and the model is written section by section as it is produced
// (format.StreamWriter; its top order by a format.TopWriter on a goroutine
// of its own). The model is byte for byte the one the in-memory
// path writes. It also decides which path a compile takes.
package bounded

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"os"
	"strings"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/format"
)

// InMemoryBytesPerNGram is the peak resident memory the in-memory compiler
// is taken to need per n-gram of its counts, the figure by which
// InMemoryFits predicts whether counts fit a budget. Measured: 209 MiB for
// 1.79 M n-grams of order 1 to 5 (Kneser-Ney), 122 bytes per n-gram; 200
// leaves room for text count files and for garbage not yet collected.
const InMemoryBytesPerNGram = 200

// textBytesPerNGram is the size of one line of a text count file, about.
const textBytesPerNGram = 20

// InMemoryFits predicts whether compiling the named count files in memory
// stays within budget bytes: binary files by the entries their end records
// announce, plain text files by their size. A compressed file or standard
// input, whose size says nothing, does not fit.
func InMemoryFits(names []string, budget int64) bool {
	var need int64
	for _, name := range names {
		if n, ok := counts.StatEntries(name); ok {
			need += int64(n) * InMemoryBytesPerNGram
			continue
		}
		fi, err := os.Stat(name)
		if name == "-" || err != nil || !fi.Mode().IsRegular() || strings.HasSuffix(name, ".gz") || strings.HasSuffix(name, ".zst") {
			return false
		}
		need += fi.Size() / textBytesPerNGram * InMemoryBytesPerNGram
	}
	return need <= budget
}

// Options bounds a compile.
type Options struct {
	// Memory is the budget in bytes; two orders' links, or the sort
	// buffers, take half of it.
	Memory int64
	// TempDir is where a private directory for the spooled counts, sort
	// runs and model sections is made ("": the system's temporary
	// directory). Model.Close removes it.
	TempDir string
	// Temp, when not nil, makes that directory and is told when it is
	// gone (so that an interrupted process removes it).
	Temp counts.TempTracker
	// Log receives the passes and spills; nil: none.
	Log *slog.Logger
}

// Model is a model estimated on disk, ready to be written.
type Model struct {
	// Order is the order built: the one asked, or lower when the counts
	// hold no longer n-gram (as with counts.Load).
	Order  int
	Result *estimate.StreamResult
	sw     *format.StreamWriter
	dir    string
	temp   counts.TempTracker
}

// Estimate reads the count sources and estimates the model opt asks for
// (opt.Order is lowered to the order the counts hold, see counts.Spool).
// Close the Model to remove its files, also after an error.
func Estimate(ctx context.Context, sources []counts.Source, opt estimate.Options, o Options) (*Model, error) {
	mkdir := os.MkdirTemp
	if o.Temp != nil {
		mkdir = o.Temp.MkdirTemp
	}
	dir, err := mkdir(o.TempDir, "ingot-compile-")
	if err != nil {
		return nil, fmt.Errorf("spill directory: %w", err)
	}
	m := &Model{dir: dir, temp: o.Temp}
	log := o.Log
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	// The orders are linked as they are spooled, on another goroutine.
	so := estimate.StreamOptions{Memory: o.Memory / 2, Dir: dir, Log: log}
	so.Linker = estimate.StartLinker(ctx, opt, so)
	// fail stops the linker (EstimateStreamed does once it has it; Close
	// may come twice) and removes the model's files.
	fail := func(err error) (*Model, error) {
		so.Linker.Close()
		m.Close()
		return nil, err
	}
	sp, err := counts.SpoolTail(opt.Order, sources, dir, so.Linker.Spooled, so.Linker.Started)
	if err != nil {
		return fail(err)
	}
	log.Info("counts spooled", "orders", sp.Order(), "entries", sp.Entries)
	m.Order = sp.Order()
	opt.Order = sp.Order()
	if m.sw, err = format.NewStreamWriter(dir, sp.Vocab, sp.Entries); err != nil {
		return fail(err)
	}
	if sp.Order() >= 2 {
		// The top order is written on a goroutine of its own as it is
		// estimated, beside the order below.
		if so.Top, err = m.sw.Top(); err != nil {
			return fail(err)
		}
	}
	res, err := estimate.EstimateStreamed(ctx, sp, opt, so, m.sw)
	if err != nil {
		return fail(err)
	}
	m.Result = res
	return m, nil
}

// Write writes the model file with the build information info (the
// estimator's, Result.Info, completed by the caller).
func (m *Model) Write(w io.Writer, info tables.Info) error {
	return m.sw.Finish(w, info)
}

// Close removes the model's files.
func (m *Model) Close() error {
	if m.sw != nil {
		m.sw.Close()
	}
	err := os.RemoveAll(m.dir)
	if m.temp != nil {
		m.temp.Forget(m.dir)
	}
	return err
}
