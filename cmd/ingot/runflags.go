package main

import (
	"fmt"
	"io"
	"log/slog"
	"os"
	"runtime/debug"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/pflag"

	"ingot/compile/counts"
)

// runFlags are the flags of the long commands (count, compile): a memory
// budget, where to spill, and how much to tell the person watching.
type runFlags struct {
	memory   string
	tmp      string
	quiet    bool
	logLevel string
}

func (r *runFlags) add(f *pflag.FlagSet) {
	f.StringVar(&r.memory, "memory", "", fmt.Sprintf("memory budget (e.g. 1GiB, 48MiB); beyond it sorted runs spill to --tmp (default: 1/%d of physical memory)", counts.DefaultMemoryFraction))
	f.StringVar(&r.tmp, "tmp", "", "directory for spill runs (default: the system's temporary directory)")
	f.BoolVar(&r.quiet, "quiet", false, "no progress bar")
	f.StringVar(&r.logLevel, "log-level", "warn", "structured logs on stderr at this level and above: debug, info, warn, error")
}

// budget returns the memory budget and tells the Go runtime to keep its
// heap under it (a soft limit: the collector works harder near it).
func (r *runFlags) budget(command string) (int64, error) {
	b := counts.DefaultMemory()
	if r.memory != "" {
		var err error
		if b, err = parseSize(r.memory); err != nil {
			return 0, fmt.Errorf("%s: --memory: %w", command, err)
		}
		if b < 16<<20 {
			return 0, fmt.Errorf("%s: --memory %s is below the 16 MiB minimum", command, r.memory)
		}
	}
	debug.SetMemoryLimit(b)
	return b, nil
}

// logger returns the structured logger --log-level asks for.
func (r *runFlags) logger(command string, stderr io.Writer) (*slog.Logger, error) {
	var level slog.Level
	if err := level.UnmarshalText([]byte(r.logLevel)); err != nil {
		return nil, fmt.Errorf("%s: --log-level %q: want debug, info, warn or error", command, r.logLevel)
	}
	return slog.New(slog.NewTextHandler(stderr, &slog.HandlerOptions{Level: level})).With("command", command), nil
}

// bar is a progress bar on a terminal; nil (and every method a no-op)
// when stderr is not a terminal or with --quiet.
type bar struct {
	pb *progressbar.ProgressBar
}

// newBar draws a bar of total bytes (-1: unknown) on stderr when it is a
// terminal and --quiet is not given.
func (r *runFlags) newBar(stderr io.Writer, total int64, phase string) *bar {
	if r.quiet || !isTerminal(stderr) {
		return nil
	}
	return &bar{pb: progressbar.NewOptions64(total,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetDescription(phase),
		progressbar.OptionShowBytes(true),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionShowElapsedTimeOnFinish(),
		progressbar.OptionThrottle(100*time.Millisecond),
		progressbar.OptionSetWidth(30),
		progressbar.OptionClearOnFinish(),
	)}
}

// progress is the callback the packages take: bytes done and the phase.
func (b *bar) progress(phase string, n int64) {
	if b == nil {
		return
	}
	if phase != "" {
		b.pb.Describe(phase)
	}
	if n > 0 {
		b.pb.Add64(n)
	}
}

func (b *bar) finish() {
	if b != nil {
		b.pb.Finish()
	}
}

func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	fi, err := f.Stat()
	return err == nil && fi.Mode()&os.ModeCharDevice != 0
}

// inputSize returns the total size of the named inputs when all are plain
// files read as they are (-1 otherwise: compressed or standard input).
func inputSize(names []string) int64 {
	var total int64
	for _, n := range names {
		fi, err := os.Stat(n)
		if err != nil || !fi.Mode().IsRegular() || strings.HasSuffix(n, ".gz") || strings.HasSuffix(n, ".zst") {
			return -1
		}
		total += fi.Size()
	}
	return total
}
