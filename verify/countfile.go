package verify

import (
	"errors"
	"fmt"
	"io"
	"os"

	"ingot/compile/counts"
)

// The names of the checks CountFile runs, in order.
const (
	CheckCountHeader = "header"
	CheckCountBlocks = "blocks"
)

// CountReport is what CountFile found in a binary count file.
type CountReport struct {
	Checks []Check
	// LayoutVersion, Order and VocabSize come from the header (zero when
	// it does not read); Blocks, Entries and Sums (per order, unigrams
	// first) from the end record, once every block matched it.
	LayoutVersion int
	Order         int
	VocabSize     int
	Blocks        uint64
	Entries       []uint64
	Sums          []uint64
}

// OK reports whether no check failed.
func (r *CountReport) OK() bool { return len(r.Failed()) == 0 }

// Failed returns the names of the checks that failed, in order.
func (r *CountReport) Failed() []string {
	var out []string
	for _, c := range r.Checks {
		if c.Status == Fail {
			out = append(out, c.Name)
		}
	}
	return out
}

// CountFile checks every byte of a binary count file (spec/COUNTS.md) by
// reading it as compile does: the header (magic, layout version, header
// checksum, the word list), then every block (its CRC-32C, its zstd
// frame, entries sorted within and across blocks, word ids inside the
// word list, <s> and </s> only where they may stand, no zero count) and
// the end record (block count, entries and sum of counts per order, as the
// blocks hold them; nothing after it). A defect is a failed check naming
// its byte offset; an error is returned only when the file cannot be
// opened or read.
func CountFile(path string) (*CountReport, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &UnreadableError{Path: path, Err: unwrapPath(err)}
	}
	defer f.Close()
	rep := &CountReport{}
	header := Check{Name: CheckCountHeader, Status: Pass}
	blocks := Check{Name: CheckCountBlocks, Status: NotRun, Detail: "the header does not read"}
	r, err := counts.NewReader(f)
	if err != nil {
		if !countDefect(&header, "header", err) {
			return nil, &UnreadableError{Path: path, Err: err}
		}
		rep.Checks = []Check{header, blocks}
		return rep, nil
	}
	h := r.Header()
	rep.LayoutVersion, rep.Order, rep.VocabSize = counts.BinaryVersion, h.Order, len(h.Vocab)
	header.Detail = fmt.Sprintf("magic, layout version %d, header checksum; orders 1..%d, %d words, valid UTF-8, sorted", counts.BinaryVersion, h.Order, len(h.Vocab))
	blocks = Check{Name: CheckCountBlocks, Status: Pass}
	for {
		if _, _, err = r.Next(); err != nil {
			break
		}
	}
	if err != io.EOF {
		if !countDefect(&blocks, "blocks", err) {
			return nil, &UnreadableError{Path: path, Err: err}
		}
		rep.Checks = []Check{header, blocks}
		return rep, nil
	}
	t := r.Totals()
	rep.Blocks, rep.Entries, rep.Sums = t.Blocks, t.Entries, t.Sums
	var n uint64
	for _, e := range t.Entries {
		n += e
	}
	blocks.Detail = fmt.Sprintf("%d blocks, %d entries: every checksum, zstd frame, entry order, word id and count; the end record's totals match", t.Blocks, n)
	rep.Checks = []Check{header, blocks}
	return rep, nil
}

// countDefect records err as c's problem when it is a defect of the file
// (a counts.FormatError), and reports whether it was.
func countDefect(c *Check, section string, err error) bool {
	var fe *counts.FormatError
	if !errors.As(err, &fe) {
		return false
	}
	c.Status, c.Count = Fail, 1
	c.Detail = fe.Msg
	c.Problems = []Problem{{Section: section, Offset: fe.Offset, Msg: fe.Msg}}
	return true
}

// JSONCountReport is CountReport as `ingot verify --json` prints it for a
// count file: the keys of a model's report where they mean the same
// (ok, failed, checks) and of `ingot inspect --json` on a count file for
// what the file holds.
type JSONCountReport struct {
	Counts           string      `json:"counts"`
	OK               bool        `json:"ok"`
	Failed           []string    `json:"failed"`
	Checks           []JSONCheck `json:"checks"`
	LayoutVersion    int         `json:"layout_version"`
	Order            int         `json:"order"`
	VocabularySize   int         `json:"vocabulary_size"`
	Blocks           uint64      `json:"blocks"`
	NGramsPerOrder   []uint64    `json:"ngrams"`
	CountSumPerOrder []uint64    `json:"count_sum_per_order"`
}

// NewJSONCountReport converts rep for path.
func NewJSONCountReport(path string, rep *CountReport) JSONCountReport {
	v := JSONCountReport{
		Counts: path, OK: rep.OK(), Failed: rep.Failed(), Checks: []JSONCheck{},
		LayoutVersion: rep.LayoutVersion, Order: rep.Order, VocabularySize: rep.VocabSize, Blocks: rep.Blocks,
		NGramsPerOrder: append([]uint64{}, rep.Entries...), CountSumPerOrder: append([]uint64{}, rep.Sums...),
	}
	if v.Failed == nil {
		v.Failed = []string{}
	}
	for _, c := range rep.Checks {
		v.Checks = append(v.Checks, JSONCheck{Name: c.Name, Status: string(c.Status), Detail: c.Detail, Problems: c.Problems, ProblemCount: c.Count})
	}
	return v
}
