// Package beamcount counts n-grams with an Apache Beam pipeline and writes
// them as ingot count-file shards (spec/COUNTS.md), so that counting a corpus
// too large for one machine runs on any Beam runner (the in-process Prism
// runner, Flink, Spark, Google Cloud Dataflow) and 'ingot compile' reads the
// shards directly.
//
// The pipeline reads text exactly as 'ingot count' does, through the same
// package (ingot/compile/counts: Sentences and EachGram), so the counts it
// writes are those of 'ingot count' on the same files:
//
//	files ─▶ [word counts ─▶ rare words] ─(side input)─▶ n-grams ─▶ sum per n-gram
//	      ─▶ shard by a hash of the n-gram's context ─▶ one sorted count file per shard
//
// The first pass (word counts) runs only with a minimum word count. Each
// worker sums the n-grams of a file in memory before the shuffle, so the
// shuffle carries about one record per distinct n-gram per file, not one per
// token. A shard is sorted and written by one worker, in memory: choose
// enough shards that each fits in a worker's memory.
package beamcount

import (
	"bufio"
	"context"
	"fmt"
	"hash/fnv"
	"reflect"
	"slices"
	"strings"

	"github.com/apache/beam/sdks/v2/go/pkg/beam"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/fileio"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem"
	_ "github.com/apache/beam/sdks/v2/go/pkg/beam/io/filesystem/local"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/register"
	"github.com/apache/beam/sdks/v2/go/pkg/beam/transforms/stats"

	"ingot/compile/counts"
	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/vocab"
)

// Extension is the file-name extension of the shards the pipeline writes.
const Extension = ".counts"

// Options says what to count and where to write it.
type Options struct {
	Order        int      // highest order, 1..tables.MaxOrder
	Input        string   // file pattern: a glob on any registered Beam file system
	Output       string   // shard prefix: shards are PREFIX-SSSSS-of-NNNNN.counts
	Shards       int      // number of shards, 1..99999
	MinWordCount int64    // words seen fewer times become <unk> (0 or 1: off)
	Vocabulary   []string // a fixed word list, as ingot/compile/vocab reads it (nil: none)
}

// Check reports the first option that cannot work, naming it.
func (o Options) Check() error {
	switch {
	case o.Order < 1 || o.Order > tables.MaxOrder:
		return fmt.Errorf("--order %d outside 1..%d", o.Order, tables.MaxOrder)
	case o.Input == "":
		return fmt.Errorf("--input is required")
	case o.Output == "":
		return fmt.Errorf("--output is required")
	case o.Shards < 1 || o.Shards > 99999:
		return fmt.Errorf("--shards %d outside 1..99999", o.Shards)
	case o.MinWordCount < 0:
		return fmt.Errorf("--min-word-count %d is negative", o.MinWordCount)
	case o.MinWordCount > 1 && o.Vocabulary != nil:
		return fmt.Errorf("--min-word-count does not apply with --vocabulary (the word list decides which words are known)")
	}
	if o.Vocabulary != nil {
		if _, err := vocab.New(o.Vocabulary); err != nil {
			return fmt.Errorf("--vocabulary: %w", err)
		}
	}
	return nil
}

// ShardName returns the name of shard i of n for prefix.
func ShardName(prefix string, i, n int) string {
	return fmt.Sprintf("%s-%05d-of-%05d%s", prefix, i, n, Extension)
}

// Entry is one n-gram (its words joined by single spaces: words hold no
// white space) and its count. The empty Entry marks a shard.
type Entry struct {
	Gram  string
	Count int64
}

func init() {
	beam.RegisterType(reflect.TypeOf((*Entry)(nil)).Elem())
	register.DoFn3x1[context.Context, fileio.ReadableFile, func(string, int64), error](&wordFn{})
	register.DoFn3x0[string, int64, func(string)](&rareFn{})
	register.DoFn4x1[context.Context, fileio.ReadableFile, func(*string) bool, func(string, int64), error](&gramFn{})
	register.DoFn2x2[string, int64, int, Entry](&shardFn{})
	register.DoFn1x2[int, int, Entry](&markFn{})
	register.DoFn3x2[context.Context, int, func(*Entry) bool, string, error](&writeFn{})
	register.Emitter1[string]()
	register.Emitter2[string, int64]()
	register.Iter1[string]()
	register.Iter1[Entry]()
}

// Build adds the counting pipeline to s. It returns the names of the shards
// written, one element per shard, once each is complete.
func Build(s beam.Scope, o Options) beam.PCollection {
	s = s.Scope("ingot.count")
	files := fileio.ReadMatches(s, fileio.MatchFiles(s, o.Input, fileio.MatchEmptyDisallow()), fileio.ReadUncompressed())

	// The words below the minimum count, as a side input (none without one).
	rare := beam.CreateList(s, []string{})
	if o.MinWordCount > 1 {
		words := stats.SumPerKey(s, beam.ParDo(s, &wordFn{}, files))
		rare = beam.ParDo(s, &rareFn{Min: o.MinWordCount}, words)
	}

	grams := stats.SumPerKey(s, beam.ParDo(s, &gramFn{Order: o.Order, Vocabulary: o.Vocabulary}, files, beam.SideInput{Input: rare}))
	keyed := beam.ParDo(s, &shardFn{Shards: o.Shards}, grams)
	// One empty entry per shard, so that every shard is written even when no
	// n-gram falls in it.
	ids := make([]int, o.Shards)
	for i := range ids {
		ids[i] = i
	}
	marks := beam.ParDo(s, &markFn{}, beam.CreateList(s, ids))
	grouped := beam.GroupByKey(s, beam.Flatten(s, keyed, marks))
	return beam.ParDo(s, &writeFn{Order: o.Order, Output: o.Output, Shards: o.Shards, Vocabulary: o.Vocabulary}, grouped)
}

// readSentences calls fn with the tokens of every sentence of a file, read
// as 'ingot count' reads it (decompressed by ingot/compile/input, split and
// checked by ingot/compile/counts, mapped onto the word list l if any).
func readSentences(ctx context.Context, f fileio.ReadableFile, l *vocab.List, fn func(toks []string)) error {
	raw, err := f.Open(ctx)
	if err != nil {
		return fmt.Errorf("%s: %w", f.Metadata.Path, err)
	}
	defer raw.Close()
	r, err := input.Decompress(f.Metadata.Path, raw)
	if err != nil {
		return err
	}
	defer r.Close()
	return counts.Sentences(f.Metadata.Path, r, l, func(toks []string) error {
		fn(toks)
		return nil
	})
}

// flushAt is how many distinct keys a worker sums in memory before it
// emits them; it bounds a worker's memory on a very large file.
const flushAt = 1 << 20

type sums map[string]int64

func (m sums) flush(emit func(string, int64)) {
	for k, v := range m {
		emit(k, v)
	}
	clear(m)
}

// wordFn emits the count of every token of a file (the first pass of a
// minimum word count).
type wordFn struct{}

func (fn *wordFn) ProcessElement(ctx context.Context, f fileio.ReadableFile, emit func(string, int64)) error {
	m := sums{}
	err := readSentences(ctx, f, nil, func(toks []string) {
		for _, t := range toks {
			m[t]++
		}
		if len(m) >= flushAt {
			m.flush(emit)
		}
	})
	m.flush(emit)
	return err
}

// rareFn keeps the words seen fewer than Min times.
type rareFn struct{ Min int64 }

func (fn *rareFn) ProcessElement(w string, n int64, emit func(string)) {
	if n < fn.Min {
		emit(w)
	}
}

// What the pipeline measures of itself (Beam metrics, reported by every
// runner): the words read, and the records and bytes that the n-gram counts
// hand to the shuffle, as Beam's coders encode them (a length-prefixed
// string and a varint).
var (
	wordsRead       = beam.NewCounter("ingot", "words_read")
	shuffledRecords = beam.NewCounter("ingot", "shuffled_records")
	shuffledBytes   = beam.NewCounter("ingot", "shuffled_bytes")
)

// gramFn emits the n-grams of orders 1..Order of a file with their counts
// in the file, rare words (the side input) replaced by <unk>.
type gramFn struct {
	Order      int
	Vocabulary []string
	list       *vocab.List
}

func (fn *gramFn) Setup() error {
	if fn.Vocabulary == nil {
		return nil
	}
	l, err := vocab.New(fn.Vocabulary)
	fn.list = l
	return err
}

func (fn *gramFn) ProcessElement(ctx context.Context, f fileio.ReadableFile, rareWords func(*string) bool, emit func(string, int64)) error {
	rare := map[string]bool{}
	var w string
	for rareWords(&w) {
		rare[w] = true
	}
	m := sums{}
	var b strings.Builder
	out := func(gram string, n int64) {
		shuffledRecords.Inc(ctx, 1)
		shuffledBytes.Inc(ctx, int64(uvarintLen(uint64(len(gram)))+len(gram)+uvarintLen(uint64(n))))
		emit(gram, n)
	}
	err := readSentences(ctx, f, fn.list, func(toks []string) {
		wordsRead.Inc(ctx, int64(len(toks)))
		for i, t := range toks {
			if rare[t] {
				toks[i] = tables.Unknown
			}
		}
		counts.EachGram(fn.Order, toks, func(g []string) {
			b.Reset()
			for i, w := range g {
				if i > 0 {
					b.WriteByte(' ')
				}
				b.WriteString(w)
			}
			m[b.String()]++
		})
		if len(m) >= flushAt {
			m.flush(out)
		}
	})
	m.flush(out)
	return err
}

func uvarintLen(x uint64) int {
	n := 1
	for ; x >= 0x80; x >>= 7 {
		n++
	}
	return n
}

// shardFn keys an n-gram by its shard: a hash of its context (all words but
// the last), so that the successors of a context stay together; a unigram
// by a hash of its word.
type shardFn struct{ Shards int }

func (fn *shardFn) ProcessElement(gram string, n int64) (int, Entry) {
	key := gram
	if i := strings.LastIndexByte(gram, ' '); i >= 0 {
		key = gram[:i]
	}
	h := fnv.New64a()
	h.Write([]byte(key))
	return int(h.Sum64() % uint64(fn.Shards)), Entry{Gram: gram, Count: n}
}

// markFn makes the empty entry that guarantees shard i is written.
type markFn struct{}

func (fn *markFn) ProcessElement(i int) (int, Entry) { return i, Entry{} }

// writeFn sorts the entries of one shard and writes them as a binary count
// file, first under a temporary name, renamed when complete where the file
// system can rename (so a retried or failed worker leaves no half-written
// shard under the final name).
type writeFn struct {
	Order      int
	Output     string
	Shards     int
	Vocabulary []string
}

func (fn *writeFn) ProcessElement(ctx context.Context, shard int, entries func(*Entry) bool) (string, error) {
	var grams [][]string
	var cnt []uint64
	words := map[string]bool{}
	var e Entry
	for entries(&e) {
		if e.Gram == "" {
			continue
		}
		g := strings.Split(e.Gram, " ")
		for _, w := range g {
			words[w] = true
		}
		grams = append(grams, g)
		cnt = append(cnt, uint64(e.Count))
	}
	// A fixed word list is listed in every shard, as 'ingot count
	// --vocabulary' lists it in its file.
	for _, w := range fn.Vocabulary {
		words[w] = true
	}
	list := make([]string, 0, len(words))
	for w := range words {
		list = append(list, w)
	}
	slices.Sort(list)
	id := make(map[string]uint32, len(list))
	for i, w := range list {
		id[w] = uint32(i)
	}
	ids := make([][]uint32, len(grams))
	for i, g := range grams {
		ids[i] = make([]uint32, len(g))
		for j, w := range g {
			ids[i][j] = id[w]
		}
	}
	order := make([]int, len(ids))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int {
		if d := len(ids[a]) - len(ids[b]); d != 0 {
			return d
		}
		return tables.Compare(ids[a], ids[b])
	})

	name := ShardName(fn.Output, shard, fn.Shards)
	fs, err := filesystem.New(ctx, name)
	if err != nil {
		return "", err
	}
	defer fs.Close()
	renamer, canRename := fs.(filesystem.Renamer)
	target := name
	if canRename {
		target = name + ".partial"
	}
	wc, err := fs.OpenWrite(ctx, target)
	if err != nil {
		return "", fmt.Errorf("%s: %w", target, err)
	}
	bw := bufio.NewWriterSize(wc, 1<<20)
	cw, err := counts.NewWriter(bw, counts.Header{Order: fn.Order, Vocab: list})
	if err == nil {
		for _, i := range order {
			if err = cw.Add(ids[i], cnt[i]); err != nil {
				break
			}
		}
	}
	if err == nil {
		err = cw.Close()
	}
	if err == nil {
		err = bw.Flush()
	}
	if cerr := wc.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		if rm, ok := fs.(filesystem.Remover); ok {
			rm.Remove(ctx, target)
		}
		return "", fmt.Errorf("%s: %w", name, err)
	}
	if canRename {
		if err := renamer.Rename(ctx, target, name); err != nil {
			return "", fmt.Errorf("%s: %w", name, err)
		}
	}
	return name, nil
}
