package counts

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"os"
	"runtime"
	"runtime/debug"
	"slices"
	"sync"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/compile/vocab"
)

// Options configures Count.
type Options struct {
	Order int
	// MinWordCount > 1 replaces every word seen fewer times by <unk>.
	MinWordCount uint64
	// Vocabulary, when not nil, maps every token outside it to <unk> while
	// counting (see Counter.UseVocabulary).
	Vocabulary *vocab.List
	// Memory is the budget in bytes for the n-gram tables of all workers
	// together; beyond it, sorted runs spill to TempDir. 0: no limit.
	Memory int64
	// TempDir is where a private directory for spill runs is made ("": the
	// system's temporary directory). It is removed before Count returns.
	TempDir string
	// Workers is how many goroutines count (0: GOMAXPROCS).
	Workers int
	// Text writes the text form instead of the binary form.
	Text bool
	// Progress, when not nil, is called with the input bytes consumed
	// since the previous call, and with the phase when it changes.
	Progress func(phase string, bytes int64)
	// Log receives what a long run does (runs spilled, merge); nil: none.
	Log *slog.Logger
	// Temp, when not nil, makes the spill directory and is told when it is
	// gone, so that an interrupted process can remove it before exiting.
	Temp TempTracker
}

// TempTracker makes temporary directories and keeps a record of them.
type TempTracker interface {
	// MkdirTemp is os.MkdirTemp, recording the directory it makes.
	MkdirTemp(dir, pattern string) (string, error)
	// Forget drops a directory that was removed from the record.
	Forget(dir string)
}

// Input is one text to count.
type Input struct {
	Name string
	R    io.Reader
}

// Report says what Count did.
type Report struct {
	Sentences uint64
	Tokens    uint64   // tokens of the text (without the markers)
	Entries   []uint64 // entries written per order
	Words     int      // words in the file's vocabulary (markers included)
	Runs      int      // sorted runs spilled to disk
	Spilled   int64    // bytes of those runs
}

// chunkSize is how much text a worker takes at a time.
const chunkSize = 1 << 20

type chunk struct {
	seq   int
	name  string
	line  int // number of the chunk's first line
	data  []byte
	bytes int64
}

// Count counts the n-grams of the inputs with opt.Workers goroutines, in
// memory up to opt.Memory and in sorted runs on disk beyond it, and writes
// them to out as one count file. The file is the same, byte for byte,
// whatever the number of workers and the budget. Errors in the text name
// the file and line (the earliest one when several workers find one).
func Count(ctx context.Context, opt Options, inputs []Input, out io.Writer) (*Report, error) {
	if opt.Order < 1 || opt.Order > tables.MaxOrder {
		return nil, fmt.Errorf("order %d outside 1..%d", opt.Order, tables.MaxOrder)
	}
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	log := opt.Log
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	progress := opt.Progress
	if progress == nil {
		progress = func(string, int64) {}
	}
	var dir string
	if opt.Memory > 0 {
		mkdir := os.MkdirTemp
		if opt.Temp != nil {
			mkdir = opt.Temp.MkdirTemp
		}
		var err error
		if dir, err = mkdir(opt.TempDir, "ingot-spill-"); err != nil {
			return nil, fmt.Errorf("spill directory: %w", err)
		}
		defer func() {
			os.RemoveAll(dir)
			if opt.Temp != nil {
				opt.Temp.Forget(dir)
			}
		}()
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()

	// Workers share three quarters of the budget for their tables; the
	// rest covers word lists, buffers and the merge.
	perWorker := opt.Memory * 3 / 4 / int64(workers)
	ws := make([]*worker, workers)
	for i := range ws {
		ws[i] = newWorker(opt, perWorker, dir, fmt.Sprintf("w%d", i))
	}
	chunks := make(chan chunk, workers)
	var mu sync.Mutex
	var firstErr error
	errSeq := -1
	fail := func(seq int, err error) {
		mu.Lock()
		defer mu.Unlock()
		if errSeq < 0 || seq < errSeq {
			firstErr, errSeq = err, seq
		}
		cancel()
	}
	var wg sync.WaitGroup
	for _, w := range ws {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for c := range chunks {
				if err := w.count(c); err != nil {
					fail(c.seq, err)
				}
				progress("counting", c.bytes)
			}
		}()
	}
	seq, readErr := splitChunks(ctx, inputs, chunks)
	close(chunks)
	wg.Wait()
	if firstErr != nil {
		return nil, firstErr
	}
	if readErr != nil {
		if ctx.Err() != nil && errors.Is(readErr, context.Canceled) {
			return nil, context.Cause(ctx)
		}
		return nil, readErr
	}
	rep := &Report{}
	for _, w := range ws {
		rep.Sentences += w.sentences
		rep.Tokens += w.tokens
	}
	log.Debug("counted", "chunks", seq, "sentences", rep.Sentences, "tokens", rep.Tokens)
	if rep.Sentences == 0 {
		return rep, nil
	}

	// If any worker spilled, every worker spills what it holds, so that the
	// merge reads runs only and the tables' memory is free for it.
	spilled := false
	for _, w := range ws {
		spilled = spilled || len(w.sorter.runs) > 0
	}
	var streams []stream
	var lists [][]string
	var closers []func()
	defer func() {
		for _, c := range closers {
			c()
		}
	}()
	// Each worker spills or sorts its table on its own goroutine.
	type sorted struct {
		streams   []stream
		lists     [][]string
		closeRuns func()
		err       error
	}
	done := make([]sorted, len(ws))
	if spilled {
		progress("spilling", 0)
	}
	for i, w := range ws {
		wg.Add(1)
		go func() {
			defer wg.Done()
			d := &done[i]
			if spilled && w.sorter.table.len() > 0 {
				if d.err = w.sorter.spill(); d.err != nil {
					return
				}
			}
			d.streams, d.lists, d.closeRuns, d.err = w.sorter.streams()
		}()
	}
	wg.Wait()
	for _, d := range done {
		if d.closeRuns != nil {
			closers = append(closers, d.closeRuns)
		}
	}
	for i, w := range ws {
		d := done[i]
		if d.err != nil {
			return nil, d.err
		}
		streams = append(streams, d.streams...)
		lists = append(lists, d.lists...)
		rep.Runs += len(w.sorter.runs)
		rep.Spilled += w.sorter.spilt
	}
	if spilled {
		ws = nil
		debug.FreeOSMemory() // the tables' memory goes back before the merge
	}
	log.Info("merging", "streams", len(streams), "runs", rep.Runs, "spilled_bytes", rep.Spilled)
	progress("merging", 0)
	if opt.Vocabulary != nil {
		lists = append(lists, opt.Vocabulary.Words())
	}
	vocab, remaps := unionVocab(lists)
	for i, st := range streams {
		st.(interface{ setRemap([]uint32) }).setRemap(remaps[i])
	}
	var err error
	if opt.MinWordCount > 1 && opt.Vocabulary == nil {
		var m *merger
		m, err = newMerger(streams)
		if err != nil {
			return nil, err
		}
		rep.Entries, rep.Words, err = writeMinCount(opt, workers, dir, vocab, m, out)
	} else {
		// One stream (one worker that never spilled) is written as it
		// comes: it has nothing to merge.
		var src stream
		if len(streams) == 1 {
			src = streams[0]
		} else {
			var m *merger
			if m, err = newMerger(streams); err != nil {
				return nil, err
			}
			src = &mergedStream{m: m}
		}
		rep.Entries, err = writeMerged(opt.Order, vocab, src, opt.Text, compressors(workers), out)
		rep.Words = len(vocab)
	}
	if err != nil {
		return nil, err
	}
	return rep, nil
}

// splitChunks reads the inputs into chunks of whole lines and sends them
// until the inputs end or ctx is cancelled. It returns how many it sent.
func splitChunks(ctx context.Context, inputs []Input, out chan<- chunk) (int, error) {
	seq := 0
	for _, in := range inputs {
		line := 1
		var carry []byte
		for eof := false; !eof; {
			buf := make([]byte, len(carry), max(chunkSize, 2*len(carry)))
			copy(buf, carry)
			n, err := io.ReadFull(in.R, buf[len(carry):cap(buf)])
			buf = buf[:len(carry)+n]
			switch {
			case err == io.EOF || err == io.ErrUnexpectedEOF:
				eof = true
			case err != nil:
				return seq, fmt.Errorf("%s: %w", in.Name, err)
			}
			cut := len(buf)
			if !eof {
				cut = bytes.LastIndexByte(buf, '\n') + 1
				// A line longer than the buffer: read on, unless it is
				// already longer than the line-length cap (and its CR LF):
				// then the worker reports it, and no more of it is held.
				if cut == 0 && int64(len(buf)) <= input.MaxLine()+2 {
					carry = buf
					continue
				}
				if cut == 0 {
					cut, eof = len(buf), true
				}
			}
			carry = slices.Clone(buf[cut:])
			c := chunk{seq: seq, name: in.Name, line: line, data: buf[:cut], bytes: int64(n)}
			line += bytes.Count(c.data, []byte{'\n'})
			select {
			case out <- c:
			case <-ctx.Done():
				return seq, ctx.Err()
			}
			seq++
		}
	}
	return seq, nil
}

// worker counts chunks into its own word list and sorter.
type worker struct {
	order      int
	words      *interner
	sorter     *sorter
	sent       []uint32
	prev, cur  []uint32 // records of the n-grams ending at the previous and the current position
	sentences  uint64
	tokens     uint64
	start, end uint32 // ids of <s> and </s>
}

func newWorker(opt Options, budget int64, dir, name string) *worker {
	w := &worker{order: opt.Order, words: newInterner(opt.Vocabulary)}
	w.start = w.words.wordID(tables.SentenceStart)
	w.end = w.words.wordID(tables.SentenceEnd)
	w.sorter = newSorter(opt.Order, &w.words.words, budget, dir, name, true)
	return w
}

func (w *worker) count(c chunk) error {
	return eachLine(c, func(line []byte, n int) error {
		s, err := w.words.appendSentence(append(w.sent[:0], w.start), line, n)
		w.sent = s
		if err != nil || len(s) == 1 {
			return err
		}
		s = append(s, w.end)
		w.sent = s
		w.sentences++
		w.tokens += uint64(len(s) - 2)
		return w.countSentence(s)
	})
}

// countSentence counts the n-grams of the padded sentence s (eachSpan's
// spans): at each position, the n-gram of order k is keyed by the record
// of the n-gram of order k-1 that ended at the position before and the
// word. When the table is full it spills between two positions and the
// records of the n-grams ending at the position before are made again
// (counted 0 times) in the emptied table.
func (w *worker) countSentence(s []uint32) error {
	t := w.sorter.table
	t.setWords(len(w.words.words))
	order := w.order
	if !t.room(1) {
		if err := w.sorter.spill(); err != nil {
			return err
		}
	}
	w.sorter.known = len(w.words.words)
	prev := append(w.prev[:0], t.add(uint64(s[0]), 1, 0)) // <s>, never counted itself
	cur := w.cur[:0]
	var keys [tables.MaxOrder]uint64
	for i := 1; i < len(s); i++ {
		if !t.room(order) {
			if err := w.sorter.spill(); err != nil {
				return err
			}
			prev = w.context(prev[:0], s[:i])
		}
		word := s[i]
		top := min(order, i+1)
		keys[0] = uint64(word)
		for k := 2; k <= top; k++ {
			keys[k-1] = gramKey(prev[k-2], word)
		}
		cur = t.addRow(cur[:0], keys[:top])
		prev, cur = cur, prev
	}
	w.prev, w.cur = prev, cur
	return nil
}

// context appends the records of the n-grams of orders 1..order-1 that end
// with the last word of s, adding them with count 0 where missing.
func (w *worker) context(dst []uint32, s []uint32) []uint32 {
	t := w.sorter.table
	for k := 1; k < w.order && k <= len(s); k++ {
		g := s[len(s)-k:]
		r := t.add(uint64(g[0]), 1, 0)
		for j := 1; j < k; j++ {
			r = t.add(gramKey(r, g[j]), j+1, 0)
		}
		dst = append(dst, r)
	}
	return dst
}

// sink writes entries of a count file in either form.
type sink struct {
	vocab   []string
	bin     *Writer
	text    io.Writer
	line    []byte
	entries []uint64
}

// newSink returns a sink writing to out; a binary file's blocks are
// compressed on compressors goroutines (0: by the caller's). close or
// abort must be called.
func newSink(order int, vocab []string, asText bool, compressors int, out io.Writer) (*sink, error) {
	s := &sink{vocab: vocab, entries: make([]uint64, order)}
	if asText {
		s.text = out
		return s, nil
	}
	w, err := newWriterParallel(out, Header{Order: order, Vocab: vocab}, compressors)
	if err != nil {
		return nil, err
	}
	s.bin = w
	return s, nil
}

func (s *sink) add(g []uint32, n uint64) error {
	s.entries[len(g)-1]++
	if s.bin != nil {
		return s.bin.Add(g, n)
	}
	s.line = appendTextLine(s.line[:0], s.vocab, g, n)
	_, err := s.text.Write(s.line)
	return err
}

func (s *sink) close() error {
	if s.bin != nil {
		return s.bin.Close()
	}
	return nil
}

// abort stops what close would have finished (nothing once closed).
func (s *sink) abort() {
	if s.bin != nil {
		s.bin.abort()
	}
}

// compressors is how many goroutines compress the output's blocks for
// workers counting goroutines: none for one (the writing goroutine does),
// else as many as the workers, up to four (each holds a zstd encoder of a
// few MiB).
func compressors(workers int) int {
	if workers <= 1 {
		return 0
	}
	return min(workers, 4)
}

// mergedStream is a merge read as one stream.
type mergedStream struct {
	m *merger
	g []uint32
}

func (ms *mergedStream) next() ([]uint32, uint64, error) {
	var n uint64
	var err error
	ms.g, n, _, err = ms.m.next(ms.g)
	return ms.g, n, err
}

// writeMerged writes the entries of src (a merge, or one sorted stream) as
// they come.
func writeMerged(order int, vocab []string, src stream, asText bool, compressors int, out io.Writer) ([]uint64, error) {
	s, err := newSink(order, vocab, asText, compressors, out)
	if err != nil {
		return nil, err
	}
	defer s.abort()
	for {
		g, n, err := src.next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if err := s.add(g, n); err != nil {
			return nil, err
		}
	}
	return s.entries, s.close()
}

// writeMinCount writes the merged streams with every word seen fewer than
// opt.MinWordCount times replaced by <unk>. The unigrams come first in the
// merge and decide the replacement; the longer n-grams, whose order the
// replacement changes, go through a second sorter (spilling within the
// same budget).
func writeMinCount(opt Options, workers int, dir string, vocab []string, m *merger, out io.Writer) ([]uint64, int, error) {
	freq := make([]uint64, len(vocab))
	var g []uint32
	var pending []uint32
	var pendingN uint64
	for {
		var n uint64
		var err error
		g, n, _, err = m.next(g)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, 0, err
		}
		if len(g) > 1 {
			pending, pendingN = slices.Clone(g), n
			break
		}
		freq[g[0]] = n
	}
	final := []string{tables.SentenceStart, tables.SentenceEnd, tables.Unknown}
	for id, w := range vocab {
		if text.IsMarker(w) || freq[id] >= opt.MinWordCount {
			final = append(final, w)
		}
	}
	slices.Sort(final)
	final = slices.Compact(final)
	unk, _ := find(final, tables.Unknown)
	to := make([]uint32, len(vocab))
	for id, w := range vocab {
		if i, ok := find(final, w); ok && (text.IsMarker(w) || freq[id] >= opt.MinWordCount) {
			to[id] = i
		} else {
			to[id] = unk
		}
	}
	uni := make([]uint64, len(final))
	for id, n := range freq {
		uni[to[id]] += n
	}
	s, err := newSink(opt.Order, final, opt.Text, compressors(workers), out)
	if err != nil {
		return nil, 0, err
	}
	defer s.abort()
	start, _ := find(final, tables.SentenceStart)
	for id, n := range uni {
		if n > 0 && uint32(id) != start {
			if err := s.add([]uint32{uint32(id)}, n); err != nil {
				return nil, 0, err
			}
		}
	}
	words := final
	so := newSorter(opt.Order, &words, opt.Memory*3/4, dir, "min", false)
	mapped := make([]uint32, 0, tables.MaxOrder)
	add := func(g []uint32, n uint64) error {
		mapped = mapped[:0]
		for _, id := range g {
			mapped = append(mapped, to[id])
		}
		return so.add(mapped, n)
	}
	if pending != nil {
		if err := add(pending, pendingN); err != nil {
			return nil, 0, err
		}
		for {
			var n uint64
			g, n, _, err = m.next(g)
			if err == io.EOF {
				break
			}
			if err != nil {
				return nil, 0, err
			}
			if err := add(g, n); err != nil {
				return nil, 0, err
			}
		}
	}
	streams, lists, closeRuns, err := so.streams()
	if err != nil {
		return nil, 0, err
	}
	defer closeRuns()
	_, remaps := unionVocab(append(lists, final))
	for i, st := range streams {
		st.(interface{ setRemap([]uint32) }).setRemap(remaps[i])
	}
	m2, err := newMerger(streams)
	if err != nil {
		return nil, 0, err
	}
	for {
		var n uint64
		g, n, _, err = m2.next(g)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, 0, err
		}
		if err := s.add(g, n); err != nil {
			return nil, 0, err
		}
	}
	return s.entries, len(final), s.close()
}
