package verify

import (
	"errors"
	"fmt"
	"io"
	"os"

	"ingot/compile/counts"
	"ingot/inspect"
)

// The names of the checks CountFile runs, in order.
const (
	CheckCountHeader = "header"
	CheckCountBlocks = "blocks"
)

// CountReport is what CountFile found in a binary count file: the checks,
// and what the file holds as inspect describes it (the header's layout
// version, orders and words; the end record's blocks, entries and sums of
// counts per order once every block matched it; zero where not read).
type CountReport struct {
	Checks []Check
	File   inspect.CountFile
}

// OK reports whether no check failed.
func (r *CountReport) OK() bool { return len(r.Failed()) == 0 }

// Failed returns the names of the checks that failed, in order.
func (r *CountReport) Failed() []string { return failedChecks(r.Checks) }

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
	rep := &CountReport{File: inspect.CountFile{Counts: path}}
	if fi, err := f.Stat(); err == nil {
		rep.File.FileBytes = fi.Size()
	}
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
	rep.File.LayoutVersion, rep.File.Order, rep.File.VocabularySize = counts.BinaryVersion, h.Order, len(h.Vocab)
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
	rep.File.Blocks, rep.File.NGramsPerOrder, rep.File.CountSumPerOrder = t.Blocks, t.Entries, t.Sums
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
// count file: the keys of `ingot inspect --json` on a count file, then
// those of a model's report that mean the same (ok, failed, checks).
type JSONCountReport struct {
	inspect.CountFile
	OK     bool        `json:"ok"`
	Failed []string    `json:"failed"`
	Checks []JSONCheck `json:"checks"`
}

// NewJSONCountReport converts rep.
func NewJSONCountReport(rep *CountReport) JSONCountReport {
	v := JSONCountReport{CountFile: rep.File, OK: rep.OK()}
	v.Failed, v.Checks = jsonChecks(rep.Checks)
	if v.NGramsPerOrder == nil {
		v.NGramsPerOrder, v.CountSumPerOrder = []uint64{}, []uint64{}
	}
	return v
}
