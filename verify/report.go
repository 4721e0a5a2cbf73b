package verify

import (
	"fmt"
	"ingot/format"
	"math"
	"strings"
)

// The names of the checks, in the order File runs them.
const (
	CheckHeader        = "header"
	CheckDirectory     = "directory"
	CheckChecksums     = "checksums"
	CheckDigest        = "digest"
	CheckPadding       = "padding"
	CheckOpens         = "opens"
	CheckVocabulary    = "vocabulary"
	CheckPrefixClosure = "prefix-closure"
	CheckIDs           = "ids"
	CheckOrder         = "order"
	CheckValues        = "values"
	CheckSuffixClosure = "suffix-closure"
	CheckNormalisation = "normalisation"
	checkCount         = 13
)

// Status is the outcome of one check.
type Status string

// The outcomes of a check.
const (
	Pass   Status = "pass"
	Fail   Status = "fail"
	NotRun Status = "not run" // an earlier check failed, or the check does not apply
)

// MaxProblems is the number of problems a check lists; Check.Count counts
// them all.
const MaxProblems = 10

// Problem is one defect: what is wrong and where (section and byte
// offset). It is format.Problem, the one problem type of every check.
type Problem = format.Problem

// Check is the outcome of one named check.
type Check struct {
	Name   string
	Status Status
	// Detail is one line: what was checked, or why the check did not run,
	// or a summary of what failed.
	Detail string
	// Problems lists the first MaxProblems defects found.
	Problems []Problem
	// Count is the number of defects found, listed or not.
	Count int
}

// problem records one defect and marks the check failed. The message is
// formatted only when it is listed.
func (c *Check) problem(section string, offset int64, format string, args ...any) {
	c.Status = Fail
	c.Count++
	if len(c.Problems) < MaxProblems {
		c.Problems = append(c.Problems, Problem{Section: section, Offset: offset, Msg: fmt.Sprintf(format, args...)})
	}
}

// Summary is one line naming the first defect, or the detail.
func (c *Check) Summary() string {
	if len(c.Problems) == 0 {
		return c.Detail
	}
	s := c.Problems[0].String()
	if c.Count > 1 {
		s += fmt.Sprintf(" (and %d more)", c.Count-1)
	}
	return s
}

// Report is the outcome of every check of one model file.
type Report struct {
	Checks []Check
	// Version, Order, VocabSize and Counts (entries per order, unigrams
	// first) describe the model; they are zero when the file does not open.
	Version   int
	Order     int
	VocabSize int
	Counts    []int
	// Normalisation holds the sums when the normalisation check ran.
	Normalisation *Normalisation
}

// OK reports whether no check failed.
func (r *Report) OK() bool { return len(r.Failed()) == 0 }

// Failed returns the names of the checks that failed, in order.
func (r *Report) Failed() []string { return failedChecks(r.Checks) }

// failedChecks returns the names of the checks that failed, in order.
func failedChecks(checks []Check) []string {
	var out []string
	for _, c := range checks {
		if c.Status == Fail {
			out = append(out, c.Name)
		}
	}
	return out
}

// Check returns the check of the given name, or nil.
func (r *Report) Check(name string) *Check {
	for i := range r.Checks {
		if r.Checks[i].Name == name {
			return &r.Checks[i]
		}
	}
	return nil
}

// Err returns nil when every check passed, else one line naming the failed
// checks and the first defect found.
func (r *Report) Err() error {
	failed := r.Failed()
	if len(failed) == 0 {
		return nil
	}
	first := r.Check(failed[0])
	return fmt.Errorf("failed %s: %s", strings.Join(failed, ", "), first.Summary())
}

// ContextSum is the total probability S(h) one context gives the
// predictable vocabulary.
type ContextSum struct {
	// Context lists the context's words, oldest first; empty for the empty
	// context.
	Context []string
	Sum     float64
}

// Deviation returns |S - 1|, or +Inf when S is not a number.
func (c ContextSum) Deviation() float64 { return deviation(c.Sum) }

func deviation(sum float64) float64 {
	d := math.Abs(sum - 1)
	if math.IsNaN(d) {
		return math.Inf(1)
	}
	return d
}

// Buckets is the number of decades in a deviation histogram.
const Buckets = 8

// BucketBounds returns the deviations that histogram bucket i counts:
// [lower, upper), with lower 0 for the first bucket and upper +Inf for the
// last (which also counts sums that are not a number). The buckets are
// decades from 1e-9 to 1e-3.
func BucketBounds(i int) (lower, upper float64) {
	edges := [Buckets + 1]float64{0, 1e-9, 1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-3, math.Inf(1)}
	i = min(max(i, 0), Buckets-1)
	return edges[i], edges[i+1]
}

// bucket returns the histogram bucket of a deviation.
func bucket(d float64) int {
	uppers := [Buckets - 1]float64{1e-9, 1e-8, 1e-7, 1e-6, 1e-5, 1e-4, 1e-3}
	for i, u := range uppers {
		if d < u {
			return i
		}
	}
	return Buckets - 1
}

// Normalisation is what the normalisation check measured.
type Normalisation struct {
	// Tolerance is the largest |S - 1| allowed.
	Tolerance float64
	// Contexts is the number of contexts checked: the empty context and
	// every stored n-gram of orders 1 to N-1.
	Contexts int
	// MaxDeviation is the largest |S - 1| found.
	MaxDeviation float64
	// Worst lists the contexts with the largest deviations, at most ten,
	// largest first.
	Worst []ContextSum
	// Histogram counts the contexts per decade of |S - 1|; see BucketBounds.
	Histogram [Buckets]int
	// Exceeding is the number of contexts whose deviation exceeds the
	// tolerance.
	Exceeding int
}
