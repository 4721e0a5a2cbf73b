package counts

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"unicode/utf8"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/text"
)

// Source is one count file to read.
type Source struct {
	Name string
	R    io.Reader
}

// Load reads count files (shards) for orders 1..order, each binary or text
// (told apart by its first bytes), sums duplicate n-grams, and checks that
// every k-gram's (k-1)-word prefix and suffix are present (the unigram <s>
// is implicit). N-grams longer than order are skipped. The first offending
// line of a text file is reported as a *text.Error with file and line
// number; a problem in a binary file names the file and the byte offset.
//
// Counts whose highest order M is below order are refused, unless they
// cannot hold more: every M-gram is a whole sentence (<s> ... </s>), so no
// longer n-gram exists whatever order the text was counted at, or every
// file is binary and records that it was counted at order or above. Then
// Load returns counts of order M (Order() tells; the caller says so).
func Load(order int, sources []Source) (*Counts, error) {
	if order < 1 || order > tables.MaxOrder {
		return nil, fmt.Errorf("order %d outside 1..%d", order, tables.MaxOrder)
	}
	b, bins, maxSeen, err := readSources(order, sources)
	if err != nil {
		return nil, err
	}
	if len(bins) == 0 {
		return b.result(order, maxSeen, sources)
	}
	return mergeSources(order, maxSeen, b, bins, sources)
}

// readSources reads the text sources into a builder and opens the binary
// ones; maxSeen is the highest order the text sources held.
func readSources(order int, sources []Source) (*builder, []binSource, int, error) {
	b := newBuilder(order)
	var bins []binSource
	maxSeen := 0
	for fi, src := range sources {
		br := bufio.NewReaderSize(src.R, 1<<16)
		if head, _ := br.Peek(len(Magic)); IsBinary(head) {
			r, err := NewReader(br)
			if err != nil {
				return nil, nil, 0, fmt.Errorf("%s: %w", src.Name, err)
			}
			bins = append(bins, binSource{src: fi, r: r, entries: announced(src.R, r.Header().Order)})
			continue
		}
		seen, err := b.addTextFile(order, fi, src.Name, br)
		if err != nil {
			return nil, nil, 0, err
		}
		maxSeen = max(maxSeen, seen)
	}
	return b, bins, maxSeen, nil
}

// announced returns the entries per order that the end record of the
// binary count file read from r announces, when r can read at an offset
// without moving (an *os.File, an input.Hashed read as stored), or nil.
// Load makes room for them at once: a hint, checked by nothing but the
// Reader at the end; so it is capped at 16 entries per byte of the file.
func announced(r io.Reader, order int) []uint64 {
	ra, ok := r.(interface {
		io.ReaderAt
		Stat() (os.FileInfo, error)
	})
	if !ok {
		return nil
	}
	fi, err := ra.Stat()
	if err != nil || !fi.Mode().IsRegular() {
		return nil
	}
	t, err := ReadEnd(ra, fi.Size(), order)
	if err != nil {
		return nil
	}
	for k, n := range t.Entries {
		t.Entries[k] = min(n, uint64(fi.Size())*16)
	}
	return t.Entries
}

// result finishes a load of text files only.
func (b *builder) result(order, maxSeen int, sources []Source) (*Counts, error) {
	if maxSeen == 0 {
		return nil, fmt.Errorf("no n-grams in %s", names(sources))
	}
	if maxSeen < order && !b.wholeSentences(maxSeen) {
		return nil, fmt.Errorf("counts hold orders up to %d, order %d asked", maxSeen, order)
	}
	if err := b.checkClosure(sources); err != nil {
		return nil, err
	}
	if b.grams[0].len() == 0 {
		return nil, fmt.Errorf("no unigram counts in %s", names(sources))
	}
	c := b.finish(nil, nil)
	c.Truncate(maxSeen)
	return c, nil
}

// wholeSentences reports whether every k-gram (k >= 2) begins with <s> and
// ends with </s>.
func (b *builder) wholeSentences(k int) bool {
	if k < 2 {
		return false
	}
	start, end := b.ids[tables.SentenceStart], b.ids[tables.SentenceEnd]
	t := &b.grams[k-1]
	for i := 0; i < t.len(); i++ {
		if g := t.gram(i); g[0] != start || g[k-1] != end {
			return false
		}
	}
	return true
}

// addTextFile reads one count file in the text form into b and returns the
// highest order it held (at most order).
func (b *builder) addTextFile(order, fi int, name string, r io.Reader) (int, error) {
	var g []uint32
	maxSeen := 0
	err := input.Lines(r, func(line []byte, n int) error {
		if len(bytes.TrimSpace(line)) == 0 {
			return nil
		}
		bad := func(format string, a ...any) error {
			return &text.Error{File: name, Line: n, Msg: fmt.Sprintf(format, a...)}
		}
		if !utf8.Valid(line) {
			return bad("invalid UTF-8")
		}
		tab := bytes.IndexByte(line, '\t')
		if tab < 0 {
			return bad("no tab between count and n-gram")
		}
		field := strings.TrimSpace(string(line[:tab]))
		words := strings.Fields(string(line[tab+1:]))
		cnt, err := strconv.ParseUint(field, 10, 64)
		if err != nil || cnt == 0 {
			if _, err := strconv.ParseUint(strings.TrimSpace(string(line[tab+1:])), 10, 64); err == nil {
				return bad("count %q is not a positive integer (a line is the count, a tab, then the n-gram)", field)
			}
			return bad("count %q is not a positive integer", field)
		}
		if len(words) == 0 {
			return bad("empty n-gram")
		}
		if len(words) > tables.MaxOrder {
			return bad("%d-gram is longer than the supported maximum order %d", len(words), tables.MaxOrder)
		}
		for i, w := range words {
			switch {
			case w == tables.SentenceStart && i != 0:
				return bad("%s inside an n-gram (only first)", w)
			case w == tables.SentenceEnd && i != len(words)-1:
				return bad("%s inside an n-gram (only last)", w)
			}
		}
		if len(words) > order {
			return nil
		}
		maxSeen = max(maxSeen, len(words))
		if len(words) == 1 && words[0] == tables.SentenceStart {
			return nil // implicit: <s> is never predicted
		}
		g = g[:0]
		for _, w := range words {
			g = append(g, b.id(w))
		}
		if !b.add(g, cnt, int32(fi), n) {
			return bad("count of %q overflows 64 bits", strings.Join(words, " "))
		}
		return nil
	})
	if err != nil {
		return 0, input.Named(name, err)
	}
	return maxSeen, nil
}

func names(sources []Source) string {
	var s []string
	for _, src := range sources {
		s = append(s, src.Name)
	}
	return strings.Join(s, ", ")
}

// checkClosure reports the earliest line (by file, then line) holding a
// k-gram whose prefix or suffix is missing.
func (b *builder) checkClosure(sources []Source) error {
	start := b.ids[tables.SentenceStart]
	present := func(sub []uint32) bool {
		return (len(sub) == 1 && sub[0] == start) || b.lookup(sub) >= 0
	}
	var err *text.Error
	wf, wl := len(sources), 0
	for k := 2; k <= b.order; k++ {
		t := &b.grams[k-1]
		for i := 0; i < t.len(); i++ {
			g := t.gram(i)
			miss, sub := "prefix", g[:k-1]
			if present(sub) {
				miss, sub = "suffix", g[1:]
				if present(sub) {
					continue
				}
			}
			f, l := int(t.file[i]), t.line[i]
			if f < wf || f == wf && l < wl {
				wf, wl = f, l
				err = &text.Error{File: sources[f].Name, Line: l,
					Msg: fmt.Sprintf("%q has no count for its %s %q", b.join(g), miss, b.join(sub))}
			}
		}
	}
	if err != nil {
		return err
	}
	return nil
}

func (b *builder) join(g []uint32) string {
	s := make([]string, len(g))
	for i, id := range g {
		s[i] = b.words[id]
	}
	return strings.Join(s, " ")
}

// wholeSentences reports whether every entry of order k (k >= 2) begins
// with <s> and ends with </s>.
func (c *Counts) wholeSentences(k int) bool {
	start, ok1 := c.ID(tables.SentenceStart)
	end, ok2 := c.ID(tables.SentenceEnd)
	if k < 2 || k > len(c.Levels) || !ok1 || !ok2 {
		return false
	}
	for i := 0; i < c.Len(k); i++ {
		if g := c.Gram(k, i); g[0] != start || g[k-1] != end {
			return false
		}
	}
	return true
}
