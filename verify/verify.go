package verify

import (
	"errors"
	"fmt"
	"os"

	"ingot/format"
)

// Options tune the checks.
type Options struct {
	// Tolerance is the largest |S(h) - 1| the normalisation check allows;
	// 0 means DefaultTolerance of the model.
	Tolerance float64
}

// DefaultTolerance returns the largest |S(h) - 1| allowed for m when no
// tolerance is given. It depends only on how the values are stored, which
// the structure of the file shows (a column is plain float32 or packed
// codebook indexes); nothing the file says about itself (its build
// information, recorded residuals or error bounds) enters it, so a file
// cannot choose how strictly it is checked.
//
// For a model stored in 32-bit floats it is 1e-5 (UnquantizedTolerance):
// each sum adds float32 values, each rounded to within 2^-24 of its log10
// (6e-8 relative), so a model normalised in float64 sums to one far within
// it; a deviation above it means a wrong weight, not rounding.
//
// For a model with any quantized column it is 1e-3 (QuantizedTolerance).
// Quantizing does not make a model un-normalised by itself: for each
// context h the sum is S(h) = P(h) + bow(h) (S(h') - L(h)) (P(h) the stored
// probabilities of h's successors, L(h) their lower-order probabilities),
// and a quantizer that knows S(h') can choose the weight level and the
// successors' levels together so that S(h) lands as close to one as the
// levels allow; with up to 16-bit weights the rounding of one weight moves
// S(h) by at most (1 - P(h)) (10^(g/2) - 1) for a gap g between weight
// levels, below 1e-4 for the gaps a 16-bit codebook leaves. ingot's
// quantizer keeps every context within 1e-4; the tolerance leaves a factor
// of ten for other producers' rounding, and is still 30 times below the
// deviation of the smallest change a broken weight makes at 8 bits (one
// codebook level, about 2% of the left-over mass).
func DefaultTolerance(m *format.Model) float64 {
	for k := 1; k <= m.Order(); k++ {
		if m.Codebook(k, false) != nil || m.Codebook(k, true) != nil {
			return QuantizedTolerance
		}
	}
	return UnquantizedTolerance
}

// UnquantizedTolerance is the normalisation tolerance of a model stored in
// 32-bit floats: float32 rounding of log10 values leaves each context's sum
// within about 1e-6 of one.
const UnquantizedTolerance = 1e-5

// QuantizedTolerance is the normalisation tolerance of a model with any
// column stored as codebook indexes; see DefaultTolerance.
const QuantizedTolerance = 1e-3

// UnreadableError reports a file that verify cannot read as a model at all:
// it cannot be read, it is too short to hold the magic, its magic is wrong
// (not a model, or one damaged by a text-mode transfer), or its intact
// header names a format version this verifier does not know. Every other
// defect of a file that starts with the magic is a failed check.
type UnreadableError struct {
	Path string // empty for bytes that came from no file
	Err  error
}

func (e *UnreadableError) Error() string {
	if e.Path == "" {
		return fmt.Sprintf("not a readable ingot model: %v", e.Err)
	}
	return fmt.Sprintf("%s: not a readable ingot model: %v", e.Path, e.Err)
}

func (e *UnreadableError) Unwrap() error { return e.Err }

// File reads the model file at path and runs every check on it. The error is
// non-nil only when the file cannot be read as a model at all (an
// *UnreadableError); damage to a file that starts with the magic is a
// failed check in the Report.
//
// The file is mapped, not read into memory: verifying costs the memory of
// the tables it builds, not the file's size. It must be a regular file (a
// device or a named pipe is unreadable). A file that shrinks while it is
// verified is unreadable too (the error wraps a *format.FaultError), never a
// crash.
func File(path string, opt Options) (rep *Report, err error) {
	data, release, err := format.MapBytes(path)
	if err != nil {
		return nil, &UnreadableError{Path: path, Err: unwrapPath(err)}
	}
	defer release()
	err = format.Guard(func() error {
		var err error
		rep, err = Bytes(data, opt)
		return err
	})
	var fault *format.FaultError
	if errors.As(err, &fault) {
		fault.Path = path
		return nil, &UnreadableError{Path: path, Err: fault}
	}
	var ue *UnreadableError
	if errors.As(err, &ue) {
		ue.Path = path
	}
	return rep, err
}

// unwrapPath drops the path from an *os.PathError, which UnreadableError
// names already.
func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s: %w", pe.Op, pe.Err)
	}
	return err
}

// Bytes runs every check on a model held in memory; see File.
func Bytes(data []byte, opt Options) (*Report, error) {
	v := &verifier{data: data, opt: opt, rep: &Report{}}
	if err := v.run(); err != nil {
		return nil, &UnreadableError{Err: err}
	}
	return v.rep, nil
}

// verifier holds the state of one run.
type verifier struct {
	data []byte
	opt  Options
	rep  *Report

	version   int
	container *format.Container // the header and directory, as recorded
	m         *format.Model
	split     int // tests: runs per order in the normalisation pass (0: one per processor, for large orders)
}

// add appends a finished check to the report.
func (v *verifier) add(c Check) { v.rep.Checks = append(v.rep.Checks, c) }

// check returns the recorded check of the given name, or nil.
func (v *verifier) check(name string) *Check { return v.rep.Check(name) }

// passed reports whether every named check ran and passed.
func (v *verifier) passed(names ...string) bool {
	for _, n := range names {
		if c := v.check(n); c == nil || c.Status != Pass {
			return false
		}
	}
	return true
}

// notRun records the checks from the given names on as not run.
func (v *verifier) notRun(why string, names ...string) {
	for _, n := range names {
		v.add(Check{Name: n, Status: NotRun, Detail: why})
	}
}

func (v *verifier) run() error {
	readable, err := v.checkHeader()
	if err != nil {
		return err
	}
	if !readable {
		v.notRun("needs a readable header and directory", CheckDirectory, CheckChecksums, CheckDigest, CheckPadding)
	} else {
		v.checkDirectory()
		v.checkChecksums()
		v.checkDigest()
		v.checkPadding()
	}
	tableChecks := []string{CheckVocabulary, CheckPrefixClosure, CheckIDs, CheckOrder, CheckValues, CheckSuffixClosure, CheckNormalisation}
	if !v.passed(CheckHeader, CheckDirectory, CheckChecksums, CheckDigest, CheckPadding) {
		v.notRun("needs a sound header, directory, checksums, digest and padding", append([]string{CheckOpens}, tableChecks...)...)
		return nil
	}
	v.checkOpens()
	if v.m == nil {
		v.notRun("needs a file the format reader opens", tableChecks...)
		return nil
	}
	v.rep.Version, v.rep.Order, v.rep.VocabSize = v.version, v.m.Order(), v.m.VocabSize()
	for k := 1; k <= v.m.Order(); k++ {
		v.rep.Counts = append(v.rep.Counts, v.m.Count(k))
	}
	s := v.checkStructure()
	v.record(s, CheckVocabulary, format.RuleVocabulary, fmt.Sprintf("%d words, valid UTF-8, strictly ascending", v.m.VocabSize()), "")
	detail := "child ranges well formed: the context of every stored n-gram is stored"
	if v.m.Order() == 1 {
		detail = "a model of order 1 has no contexts to store"
	}
	v.record(s, CheckPrefixClosure, format.RuleChildStarts, detail, "")
	if !s.applied.Has(format.RuleWordIDs) {
		if c := v.check(CheckPrefixClosure); c != nil {
			c.Detail = "the trie's structures are damaged"
		}
		v.notRun("needs a sound trie", CheckIDs, CheckOrder, CheckValues, CheckSuffixClosure, CheckNormalisation)
		return nil
	}
	v.record(s, CheckIDs, format.RuleWordIDs, fmt.Sprintf("every word id below %d", v.m.VocabSize()), "")
	v.record(s, CheckOrder, format.RuleSiblingOrder, "the entries under every context ascend by word id", "needs well-formed child ranges")
	v.checkValues(s)
	if !v.passed(CheckVocabulary, CheckPrefixClosure, CheckIDs, CheckOrder) {
		v.notRun("needs a sound vocabulary and trie", CheckSuffixClosure, CheckNormalisation)
		return nil
	}
	v.checkSuffixClosure(s)
	if !v.passed(CheckValues) {
		v.notRun("needs finite values", CheckNormalisation)
		return nil
	}
	v.walk()
	return nil
}

// checkSuffixClosure reports the format's suffix rule, which applies to a
// model flagged suffix-closed.
func (v *verifier) checkSuffixClosure(s *structure) {
	N := v.m.Order()
	if !s.applied.Has(format.RuleSuffixClosed) {
		v.add(Check{Name: CheckSuffixClosure, Status: NotRun, Detail: "the model is not flagged suffix-closed (queries do not rely on it)"})
		return
	}
	var detail string
	switch N {
	case 1:
		detail = "a model of order 1 has no suffixes to store"
	case 2:
		detail = "every suffix of a bigram is a stored unigram"
	case 3:
		detail = "the suffix of every stored n-gram of order 3 is stored, as the model's flag says"
	default:
		detail = fmt.Sprintf("the suffix of every stored n-gram of orders 3 to %d is stored, as the model's flag says", N)
	}
	c := v.ruleCheck(s, CheckSuffixClosure, format.RuleSuffixClosed, detail)
	if c.Status == Fail {
		c.Detail = fmt.Sprintf("%d stored n-grams lack their suffix, but the model is flagged suffix-closed", c.Count)
	}
	v.add(c)
}

// checkOpens opens the file with the format reader, which applies the open
// checks of spec §6.1 that the container checks leave to it: the summary,
// the sections the model's order requires and their lengths, encodings and
// codebooks, the first and last offsets of the vocabulary and child starts,
// and the markers.
func (v *verifier) checkOpens() {
	c := Check{Name: CheckOpens, Status: Pass}
	defer func() { v.add(c) }()
	m, err := format.FromBytes(v.data)
	if err != nil {
		var fe *format.FormatError
		if errors.As(err, &fe) {
			c.problem(fe.Section, fe.Offset, "%s", fe.Msg)
		} else {
			c.problem("file", 0, "%v", err)
		}
		c.Detail = "the format reader refuses the file"
		return
	}
	v.m = m
	n := 0
	for k := 1; k <= m.Order(); k++ {
		n += m.Count(k)
	}
	c.Detail = fmt.Sprintf("order %d, %d words, %d n-grams", m.Order(), m.VocabSize(), n)
}
