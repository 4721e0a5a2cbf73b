// Package estimate turns n-gram counts into a smoothed back-off model with
// one of four published estimators:
//
//   - katz: Katz back-off with Good-Turing discounts. S. M. Katz (1987),
//     "Estimation of probabilities from sparse data for the language model
//     component of a speech recognizer", IEEE Trans. ASSP 35(3); discount
//     formula as in S. F. Chen and J. Goodman (1998), "An empirical study of
//     smoothing techniques for language modeling", Harvard TR-10-98, 2.4.
//   - absolute: absolute discounting in back-off form. H. Ney, U. Essen and
//     R. Kneser (1994), "On structuring probabilistic dependences in
//     stochastic language modelling", Computer Speech and Language 8(1).
//   - witten-bell: interpolated Witten-Bell. I. H. Witten and T. C. Bell
//     (1991), "The zero-frequency problem", IEEE Trans. Inf. Theory 37(4);
//     interpolated form as in Chen and Goodman (1998), 2.5.
//   - kneser-ney: interpolated modified Kneser-Ney. R. Kneser and H. Ney
//     (1995), "Improved backing-off for m-gram language modeling", ICASSP;
//     modified form of Chen and Goodman (1998), section 3.
//
// Products that are added to something are converted explicitly
// (float64(x*y)), which the Go specification says rounds them on their own:
// no compiler may fuse them into a multiply-add, so every machine computes
// the same bits.
//
// Every model is stored in back-off form (see package tables). Orders are
// estimated bottom-up, each from the final probabilities of the order below.
// The corner-case rules (fallbacks) are applied as documented on each method
// and listed in the Report.
package estimate

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"runtime"
	"slices"
	"sync"

	"ingot/compile/counts"
	"ingot/compile/tables"
)

// Method names an estimator.
type Method string

// The estimators.
const (
	Katz       Method = "katz"
	Absolute   Method = "absolute"
	WittenBell Method = "witten-bell"
	KneserNey  Method = "kneser-ney"
)

// Methods lists the estimators in the order help texts show them.
var Methods = []Method{Katz, Absolute, WittenBell, KneserNey}

// Defaults of the options.
const (
	DefaultDiscount      = 0.5 // absolute discounting: a common rule of thumb
	DefaultKatzThreshold = 5   // Katz (1987): counts above 5 are reliable
	// MaxKatzThreshold bounds K, which sizes the count-of-counts tables
	// (K+2 values per order); Good-Turing estimates of counts this high
	// are noise in any corpus.
	MaxKatzThreshold = 10000
)

// Options selects the estimator and its parameters.
type Options struct {
	Method Method
	Order  int
	// Discount is the absolute discount D in (0, 1) for all orders; 0 means
	// DefaultDiscount. Ignored when AutoDiscount is set.
	Discount float64
	// AutoDiscount makes absolute discounting use D = n1/(n1+2 n2) per order.
	AutoDiscount bool
	// KatzThreshold is K: counts above it are not discounted. 0 means
	// DefaultKatzThreshold.
	KatzThreshold int
	// Survivors, when not nil, names the n-grams a pruned model will keep
	// (Survivors[k-1][i] for entry i of order k, in the counts' order).
	// Kneser-Ney then computes its adjusted counts for that model: a
	// removed n-gram v g no longer predicts its words, the lower order g
	// does, so it adds its own adjusted count to a(g) instead of 1 (after
	// V. Siivola, T. Hirsimäki and S. Virpioja (2007), "On growing and
	// pruning Kneser-Ney smoothed n-gram models", IEEE TASLP 15(5)). Every
	// entry is still estimated; the caller removes the others and
	// recomputes the back-off weights. Other methods ignore it.
	Survivors [][]bool
	// UnigramsBackedOff, for Kneser-Ney, estimates order 1 in back-off
	// form instead of interpolating it with level 0: each word with a count
	// stores its discounted estimate alone, (a(w) - D(a(w))) / sum a, and
	// the empty context's left-over mass gamma goes, in equal shares, to
	// the predictable words without a count (<unk> among them), instead of
	// gamma/|V| to every word. That is the back-off form of R. Kneser and
	// H. Ney (1995), "Improved backing-off for m-gram language modeling",
	// ICASSP, at the lowest order, with the modified discounts of S. F.
	// Chen and J. Goodman (1998); orders 2 and up stay interpolated. The
	// pinned estimator is the interpolated one; compile's budget path
	// uses this for pruned models (see package budget). Other methods
	// ignore it.
	UnigramsBackedOff bool
}

// Param is one named parameter value.
type Param struct {
	Name  string
	Value float64
}

// OrderReport describes what the estimator did at one order.
type OrderReport struct {
	Order     int
	NGrams    int
	Contexts  int  // contexts with at least one successor at this order
	Cut       bool // count cutoffs were applied (Kept is then meaningful, 0 included)
	Kept      int  // entries kept after count cutoffs
	Discounts []Param
	Fallbacks []string
}

// Report describes a build.
type Report struct {
	Method Method
	Orders []OrderReport
}

// Validate checks the options and fills in defaults.
func (o *Options) Validate() error {
	if !slices.Contains(Methods, o.Method) {
		return fmt.Errorf("unknown method %q (katz, absolute, witten-bell, kneser-ney)", o.Method)
	}
	if o.Order < 1 || o.Order > tables.MaxOrder {
		return fmt.Errorf("order %d outside 1..%d", o.Order, tables.MaxOrder)
	}
	if o.Discount == 0 {
		o.Discount = DefaultDiscount
	}
	if !(o.Discount > 0 && o.Discount < 1) {
		return fmt.Errorf("discount %v outside (0, 1)", o.Discount)
	}
	if o.KatzThreshold == 0 {
		o.KatzThreshold = DefaultKatzThreshold
	}
	if o.KatzThreshold < 1 || o.KatzThreshold > MaxKatzThreshold {
		return fmt.Errorf("katz threshold %d outside 1..%d", o.KatzThreshold, MaxKatzThreshold)
	}
	return nil
}

// fullCoverage is the margin of the rule "h was followed by every
// predictable word": when the lower-order mass of the successors reaches
// 1 - fullCoverage, the back-off methods keep undiscounted estimates.
const fullCoverage = 1e-12

// Estimate builds the model of order opt.Order from c. Counts of higher
// orders than asked are ignored.
func Estimate(c *counts.Counts, opt Options) (*tables.Tables, *Report, error) {
	if err := opt.Validate(); err != nil {
		return nil, nil, err
	}
	if c.Order() < opt.Order {
		return nil, nil, fmt.Errorf("counts hold orders up to %d, order %d asked", c.Order(), opt.Order)
	}
	e, err := run(c, opt)
	if err != nil {
		return nil, nil, err
	}
	return e.tables(), e.report, nil
}

// run estimates every order, keeping the float64 values (tests compare
// them with a reference before they are rounded to float32).
func run(c *counts.Counts, opt Options) (*estimator, error) {
	e, err := newEstimator(c, opt)
	if err != nil {
		return nil, err
	}
	for k := 1; k <= opt.Order; k++ {
		if err := e.order(k); err != nil {
			return nil, err
		}
		if err := e.checkFinite(k); err != nil {
			return nil, err
		}
	}
	return e, nil
}

// MaxExactTotal is the largest total count of a context's successors that
// the estimator accepts: 2^53, up to which float64 holds every integer
// exactly, so that c(h) and every c(hw) - D are computed without rounding
// the count itself.
const MaxExactTotal = 1 << 53

// OptionError reports an option value that leads to a model the writer
// would refuse; Option is the name of the Options field in lower case
// ("discount").
type OptionError struct {
	Option string
	Value  float64
	Err    error
}

func (e *OptionError) Error() string {
	return fmt.Sprintf("%s %v: %v", e.Option, e.Value, e.Err)
}

func (e *OptionError) Unwrap() error { return e.Err }

// exactTotal returns the sum of counts, or an error when it exceeds
// MaxExactTotal (or overflows 64 bits).
func (e *estimator) exactTotal(k int, cnt []uint64, context []uint32) (float64, error) {
	var sum uint64
	for _, r := range cnt {
		s, carry := bits.Add64(sum, r, 0)
		if carry != 0 || s > MaxExactTotal {
			what := "the empty context"
			if k > 1 {
				what = fmt.Sprintf("context %q", words(e.c, context))
			}
			return 0, fmt.Errorf("order %d: the counts of %s's successors total more than 2^53 (%d), the largest total that float64 arithmetic holds exactly; scale the counts down", k, what, uint64(MaxExactTotal))
		}
		sum = s
	}
	return float64(sum), nil
}

// checkFinite makes sure order k's probabilities and the weights of its
// contexts (order k-1) are positive and finite, so that every stored log10
// value is finite (but the unigram <s>, which is never predicted). A value
// that is not comes from an option (a discount so small that a context
// keeps no mass for unseen words) or from counts no method can smooth.
func (e *estimator) checkFinite(k int) error {
	bad := func(x float64) bool { return !(x > 0) || math.IsInf(x, 0) || math.IsNaN(x) }
	wrap := func(err error) error {
		if e.opt.Method == Absolute && !e.opt.AutoDiscount {
			return &OptionError{Option: "discount", Value: e.opt.Discount, Err: err}
		}
		return err
	}
	prob := e.prob[k-1]
	if i := firstOf(len(prob), func(i int) bool { return bad(prob[i]) && (k > 1 || uint32(i) != e.start) }); i >= 0 {
		return wrap(fmt.Errorf("order %d n-gram %q gets probability %v; no model is written", k, words(e.c, e.c.Gram(k, i)), prob[i]))
	}
	if k == 1 {
		if bad(e.empty) {
			return wrap(fmt.Errorf("the empty context gets back-off weight %v; no model is written", e.empty))
		}
		return nil
	}
	bow := e.bow[k-2]
	if i := firstOf(len(bow), func(i int) bool { return bad(bow[i]) }); i >= 0 {
		return wrap(fmt.Errorf("order %d context %q gets back-off weight %v (no mass left for unseen words); no model is written", k-1, words(e.c, e.c.Gram(k-1, i)), bow[i]))
	}
	return nil
}

type estimator struct {
	c      *counts.Counts
	opt    Options
	N      int
	V      float64 // |V|: the predictable vocabulary (all words but <s>)
	start  uint32
	links  *tables.Links // of orders 1..N
	prefix [][]int32     // prefix[k-1][i]: index at order k-1 of entry i's context
	suffix [][]int32     // suffix[k-1][i]: index at order k-1 of entry i without its first word
	adj    [][]uint64    // kneser-ney adjusted counts
	prob   [][]float64   // full probability of each entry given its context
	bow    [][]float64   // back-off weight of each entry as a context (orders < N)
	// The log10 of prob and bow as the model stores them (float32), for
	// orders k >= 2 and k < N: each written where the value is found.
	logProb, logBow [][]float32
	empty           float64 // back-off weight of the empty context
	report          *Report
}

func newEstimator(c *counts.Counts, opt Options) (*estimator, error) {
	N := opt.Order
	start, _ := c.ID(tables.SentenceStart)
	e := &estimator{
		c: c, opt: opt, N: N, V: float64(len(c.Vocab) - 1), start: start,
		prefix: make([][]int32, N), suffix: make([][]int32, N),
		prob: make([][]float64, N), bow: make([][]float64, N),
		logProb: make([][]float32, N), logBow: make([][]float32, N),
		report: &Report{Method: opt.Method},
	}
	// Every entry's prefix and suffix, by the links of the trie (one merge
	// pass per order and a search within one sibling list per suffix).
	levels := make([][]uint32, N)
	for k := 2; k <= N; k++ {
		levels[k-1] = c.Levels[k-1].Words
	}
	links := c.Links
	var err error
	if links == nil || len(links.Parent) < N {
		links, err = tables.Link(len(c.Vocab), levels)
	}
	var pe *tables.PrefixError
	if errors.As(err, &pe) {
		return nil, fmt.Errorf("counts are not closed: %d-gram %q lacks its prefix", pe.Order, words(c, c.Gram(pe.Order, pe.Index)))
	}
	for k := 2; k <= N; k++ {
		if i := slices.Index(links.Suffix[k-1], -1); i >= 0 {
			return nil, fmt.Errorf("counts are not closed: %d-gram %q lacks its suffix", k, words(c, c.Gram(k, i)))
		}
	}
	e.links = links.Lowest(N)
	copy(e.prefix, links.Parent)
	copy(e.suffix, links.Suffix)
	for k := 1; k < N; k++ {
		e.bow[k-1] = hugeMake[float64](c.Len(k))
		for i := range e.bow[k-1] {
			e.bow[k-1][i] = 1
		}
		e.logBow[k-1] = hugeMake[float32](c.Len(k)) // +0: log10 1
	}
	if opt.Method == KneserNey {
		e.adjust()
	}
	return e, nil
}

func words(c *counts.Counts, g []uint32) string {
	s := ""
	for i, id := range g {
		if i > 0 {
			s += " "
		}
		s += c.Vocab[id]
	}
	return s
}

// adjust computes the Kneser-Ney adjusted counts: raw counts at the highest
// order and for n-grams starting with <s>; elsewhere the number of distinct
// words seen before the n-gram, N1+(. g).
func (e *estimator) adjust() {
	e.adj = make([][]uint64, e.N)
	if e.opt.Survivors == nil {
		// Each order needs the links of the order above only: the orders
		// are adjusted on GOMAXPROCS workers.
		tasks := make([]func(), e.N)
		for k := e.N; k >= 1; k-- {
			tasks[e.N-k] = func() { e.adjustOrder(k) }
		}
		inParallel(tasks)
		return
	}
	for k := e.N; k >= 1; k-- {
		e.adjustOrder(k)
	}
}

// adjustOrder computes the adjusted counts of order k, those of order k+1
// done when Options.Survivors is set.
func (e *estimator) adjustOrder(k int) {
	raw := e.c.Levels[k-1].Counts
	if k == e.N {
		e.adj[k-1] = raw // read, never written
		return
	}
	a := hugeMake[uint64](len(raw))
	var kept []bool
	var above []uint64
	if e.opt.Survivors != nil {
		kept, above = e.opt.Survivors[k], e.adj[k] // order k+1, already adjusted
	}
	for j, s := range e.suffix[k] {
		if kept == nil || kept[j] {
			a[s]++
		} else {
			a[s] += above[j]
		}
	}
	for i := range a {
		if e.c.Gram(k, i)[0] == e.start {
			a[i] = raw[i]
		}
	}
	e.adj[k-1] = a
}

// firstOf returns the first i in [0, n) for which is(i) holds, or -1,
// looking at GOMAXPROCS parts of the range at once.
func firstOf(n int, is func(i int) bool) int {
	first := make([]int, partsOf(n))
	tasks := make([]func(), len(first))
	for p := range tasks {
		tasks[p] = func() {
			first[p] = -1
			for i := n * p / len(first); i < n*(p+1)/len(first); i++ {
				if is(i) {
					first[p] = i
					return
				}
			}
		}
	}
	inParallel(tasks)
	for _, i := range first {
		if i >= 0 {
			return i
		}
	}
	return -1
}

// partsOf returns in how many parts a pass over n values is shared out:
// GOMAXPROCS, or one below 2^16 values.
func partsOf(n int) int {
	if n < 1<<16 {
		return 1
	}
	return runtime.GOMAXPROCS(0)
}

// countOfCountsOf is countOfCounts over GOMAXPROCS parts of cnt at once:
// the tallies are whole numbers, so their sums are the same.
func countOfCountsOf(cnt []uint64, max int) []float64 {
	parts := make([][]float64, partsOf(len(cnt)))
	tasks := make([]func(), len(parts))
	for p := range tasks {
		tasks[p] = func() { parts[p] = countOfCounts(cnt[len(cnt)*p/len(parts):len(cnt)*(p+1)/len(parts)], max) }
	}
	inParallel(tasks)
	n := parts[0]
	for _, q := range parts[1:] {
		for r := range n {
			n[r] += q[r]
		}
	}
	return n
}

// countOfCounts returns n_1..n_max of the given counts.
func countOfCounts(cnt []uint64, max int) []float64 {
	n := make([]float64, max+1)
	for _, r := range cnt {
		if r >= 1 && r <= uint64(max) {
			n[r]++
		}
	}
	return n
}

// absoluteAuto returns D = n1/(n1+2 n2), or 0.5 when n1 or n2 is 0.
func absoluteAuto(n []float64) float64 {
	if n[1] == 0 || n[2] == 0 {
		return 0.5
	}
	return n[1] / (n[1] + float64(2*n[2]))
}

// discounter turns the counts of one context's successors into their
// probabilities and the context's back-off weight.
//
// total is the sum of cnt, already checked to be exact (exactTotal).
// unigramLevel estimates order 1 from its counts: one context, the empty
// one, backing off to the uniform level 0 (1/V). It returns every word's
// probability (0 for <s>, which is never predicted) and the empty context's
// left-over mass. The in-memory and the streamed estimators both use it.
func unigramLevel(cnt []uint64, start uint32, V float64, disc discounter, t *tally, exactTotal func(k int, cnt []uint64, context []uint32) (float64, error)) (prob []float64, bow float64, err error) {
	var idx []int
	var sc []uint64
	var lower []float64
	for w, r := range cnt {
		if uint32(w) != start && r > 0 {
			idx = append(idx, w)
			sc = append(sc, r)
			lower = append(lower, 1/V)
		}
	}
	p := make([]float64, len(idx))
	total, err := exactTotal(1, sc, nil)
	if err != nil {
		return nil, 0, err
	}
	bow = disc(sc, total, lower, p, t)
	prob = make([]float64, len(cnt))
	for w := range prob {
		prob[w] = bow / V
	}
	for j, w := range idx {
		prob[w] = p[j]
	}
	prob[start] = 0
	return prob, bow, nil
}

// A discounter estimates the successors of one context, whose counts are
// cnt (total their sum) and whose lower-order estimates are lower: it
// writes every one of them to p, whatever p held, and returns the
// context's back-off weight. It keeps no state: the contexts where a
// corner-case rule applied are counted in the tally it is given, so that
// the contexts of one order can be discounted on several goroutines, each
// with its own tally, merged in the order of the contexts.
type discounter func(cnt []uint64, total float64, lower []float64, p []float64, t *tally) (bow float64)

// rule names a corner-case rule that a discounter applies per context.
type rule int

const (
	ruleCovered  rule = iota // followed by every predictable word: undiscounted
	ruleAllAbove             // Katz: every successor above K: absolute discounting
	rules
)

// tally counts the contexts of one order (or of a run of them) that each
// rule decided, and lists the rules in the order they first applied.
type tally struct {
	first []rule
	count [rules]int
}

func (t *tally) add(r rule) {
	if t.count[r] == 0 {
		t.first = append(t.first, r)
	}
	t.count[r]++
}

// merge adds the tally of the contexts that follow t's.
func (t *tally) merge(u *tally) {
	for _, r := range u.first {
		if t.count[r] == 0 {
			t.first = append(t.first, r)
		}
		t.count[r] += u.count[r]
	}
}

// noteFallbacks appends to rep one line per rule that t counted at order
// k, whose count of counts is n (as given to discounter), in the order the
// rules first applied.
func (o Options) noteFallbacks(k int, n []float64, t *tally, rep *OrderReport) {
	for _, r := range t.first {
		switch r {
		case ruleCovered:
			rep.Fallbacks = append(rep.Fallbacks, fmt.Sprintf(
				"order %d: %d context(s) followed by every predictable word keep undiscounted estimates with back-off weight 1", rep.Order, t.count[r]))
		case ruleAllAbove:
			rep.Fallbacks = append(rep.Fallbacks, fmt.Sprintf(
				"order %d: %d context(s) whose successors all have counts above %d use absolute discounting with D = %.6g", k, t.count[r], o.KatzThreshold, absoluteAuto(n)))
		}
	}
}

func (e *estimator) order(k int) error {
	rep := OrderReport{Order: k, NGrams: e.c.Len(k)}
	cnt := e.c.Levels[k-1].Counts
	if e.opt.Method == KneserNey {
		cnt = e.adj[k-1]
	}
	n := countOfCountsOf(cnt, e.opt.countOfCountsMax())
	disc := e.opt.discounter(k, n, &rep)
	if k == 1 {
		var t tally
		prob, bow, err := unigramLevel(cnt, e.start, e.V, disc, &t, e.exactTotal)
		if err != nil {
			return err
		}
		e.opt.noteFallbacks(k, n, &t, &rep)
		e.prob[0] = prob
		e.empty = bow
		rep.Contexts = 1
		e.report.Orders = append(e.report.Orders, rep)
		return nil
	}
	e.prob[k-1] = hugeMake[float64](len(cnt))
	e.logProb[k-1] = hugeMake[float32](len(cnt))
	// The contexts are discounted in runs on GOMAXPROCS workers, each run
	// with its own tally; the first error of the first run that has one
	// is the first of the order.
	pre := e.prefix[k-1]
	bounds := contextRuns(pre, runsPerCore*runtime.GOMAXPROCS(0))
	runs := make([]contextRun, len(bounds)-1)
	tasks := make([]func(), len(runs))
	for r := range runs {
		tasks[r] = func() { runs[r] = e.discountRun(k, cnt, disc, bounds[r], bounds[r+1]) }
	}
	inParallel(tasks)
	var t tally
	for r := range runs {
		if runs[r].err != nil {
			return runs[r].err
		}
		t.merge(&runs[r].tally)
		rep.Contexts += runs[r].contexts
	}
	e.opt.noteFallbacks(k, n, &t, &rep)
	e.report.Orders = append(e.report.Orders, rep)
	return nil
}

// runsPerCore is how many runs of contexts an order is split into per
// core (a variable so that tests can split it into one run or many).
var runsPerCore = 4

// contextRuns splits the entries of an order, whose parent (context)
// indexes are pre, into at most n runs of whole contexts of about the same
// length: the boundaries, from 0 to len(pre).
func contextRuns(pre []int32, n int) []int {
	bounds := []int{0}
	for r := 1; r < n; r++ {
		i := max(len(pre)*r/n, bounds[len(bounds)-1]+1)
		for i < len(pre) && pre[i] == pre[i-1] {
			i++
		}
		if i >= len(pre) {
			break
		}
		bounds = append(bounds, i)
	}
	return append(bounds, len(pre))
}

// contextRun is what discounting a run of contexts found.
type contextRun struct {
	tally    tally
	contexts int
	err      error
}

// discountRun discounts the contexts of order k >= 2 whose successors are
// the entries [i0, i1) with counts cnt.
func (e *estimator) discountRun(k int, cnt []uint64, disc discounter, i0, i1 int) contextRun {
	var run contextRun
	pre, suf := e.prefix[k-1], e.suffix[k-1]
	prob, lowerProb := e.prob[k-1], e.prob[k-2]
	logProb, logBow := e.logProb[k-1], e.logBow[k-2]
	var lower []float64
	for i := i0; i < i1; {
		j := i + 1
		for j < i1 && pre[j] == pre[i] {
			j++
		}
		lower = lower[:0]
		for x := i; x < j; x++ {
			lower = append(lower, lowerProb[suf[x]])
		}
		total, err := e.exactTotal(k, cnt[i:j], e.c.Gram(k, i)[:k-1])
		if err != nil {
			run.err = err
			return run
		}
		// A discounter writes every estimate of the context: straight
		// into the order's column.
		bow := disc(cnt[i:j], total, lower, prob[i:j], &run.tally)
		e.bow[k-2][pre[i]] = bow
		// The stored form, while the values are at hand.
		for x := i; x < j; x++ {
			logProb[x] = log10f32(prob[x])
		}
		logBow[pre[i]] = log10f32(bow)
		run.contexts++
		i = j
	}
	return run
}

// countOfCountsMax returns the largest r whose count of counts n_r the
// method's discounts use (0: none).
func (o Options) countOfCountsMax() int {
	switch o.Method {
	case KneserNey:
		return 4
	case Absolute:
		if o.AutoDiscount {
			return 2
		}
		return 0
	case Katz:
		return o.KatzThreshold + 1
	}
	return 0
}

// discounter returns order k's discounting rule, its parameters computed
// from the order's count of counts n (n[r] for r = 0..countOfCountsMax).
func (o Options) discounter(k int, n []float64, rep *OrderReport) discounter {
	switch o.Method {
	case WittenBell:
		return wittenBell
	case KneserNey:
		if o.UnigramsBackedOff && k == 1 {
			return kneserNeyBackedOff(k, n, rep)
		}
		return kneserNey(k, n, rep)
	case Absolute:
		D := o.Discount
		if o.AutoDiscount {
			D = absoluteAuto(n)
		}
		rep.Discounts = []Param{{"D", D}}
		return backoff(absolute(D))
	default:
		return o.katz(k, n, rep)
	}
}

// backoff wraps a discounting rule of a back-off method: the weight is what
// makes the context normalise, and a context followed by every predictable
// word keeps undiscounted estimates with weight 1 (rule). The rule returns
// the left-over mass 1 - sum p, computed from the discounts themselves (a
// sum of small terms) rather than by subtracting the probabilities from
// one, which cancels to nothing when the counts are large.
func backoff(discount func(cnt []uint64, total float64, p []float64, t *tally) (left float64)) discounter {
	return func(cnt []uint64, total float64, lower []float64, p []float64, t *tally) float64 {
		var sumL float64
		for _, l := range lower {
			sumL += l
		}
		if sumL >= 1-fullCoverage {
			for j, r := range cnt {
				p[j] = float64(r) / total
			}
			t.add(ruleCovered)
			return 1
		}
		left := discount(cnt, total, p, t)
		return left / (1 - sumL)
	}
}

// absolute discounts every count by D: p = (c - D) / c(h), leaving
// D |A(h)| / c(h).
func absolute(D float64) func(cnt []uint64, total float64, p []float64, t *tally) float64 {
	return func(cnt []uint64, total float64, p []float64, _ *tally) float64 {
		for j, r := range cnt {
			p[j] = (float64(r) - D) / total
		}
		return float64(D*float64(len(cnt))) / total
	}
}

// katz returns the Good-Turing discounting of Katz back-off for order k:
// r* = (r+1) n_{r+1}/n_r and
// d_r = (r*/r - (K+1) n_{K+1}/n_1) / (1 - (K+1) n_{K+1}/n_1) for r <= K.
func (o Options) katz(k int, n []float64, rep *OrderReport) discounter {
	K := o.KatzThreshold
	Dabs := absoluteAuto(n)
	d, why := katzDiscounts(n, K)
	if why != "" {
		rep.Discounts = []Param{{"D", Dabs}}
		rep.Fallbacks = append(rep.Fallbacks, fmt.Sprintf(
			"order %d: Good-Turing discounts unusable (%s); absolute discounting with D = %.6g used instead", k, why, Dabs))
		return backoff(absolute(Dabs))
	}
	for r := 1; r <= K; r++ {
		rep.Discounts = append(rep.Discounts, Param{fmt.Sprintf("d%d", r), d[r]})
	}
	return backoff(func(cnt []uint64, total float64, p []float64, t *tally) float64 {
		above := true
		for _, r := range cnt {
			if r <= uint64(K) {
				above = false
				break
			}
		}
		if above {
			// Rule: no mass would be left for unseen words.
			left := absolute(Dabs)(cnt, total, p, t)
			t.add(ruleAllAbove)
			return left
		}
		// The left-over mass is the sum of what the discounts remove,
		// (1 - d_r) r / c(h) for r <= K.
		var left float64
		for j, r := range cnt {
			dr := 1.0
			if r <= uint64(K) {
				dr = d[r]
				left += float64((1-dr)*float64(r)) / total
			}
			p[j] = dr * float64(r) / total
		}
		return left
	})
}

// katzDiscounts returns d_1..d_K (index r), or the reason they are unusable.
func katzDiscounts(n []float64, K int) ([]float64, string) {
	for r := 1; r <= K+1; r++ {
		if n[r] == 0 {
			return nil, fmt.Sprintf("n_%d = 0", r)
		}
	}
	common := float64(K+1) * n[K+1] / n[1]
	if common >= 1 {
		return nil, fmt.Sprintf("(K+1) n_%d / n_1 = %.6g >= 1", K+1, common)
	}
	d := make([]float64, K+1)
	for r := 1; r <= K; r++ {
		rstar := float64(r+1) * n[r+1] / n[r]
		d[r] = (rstar/float64(r) - common) / (1 - common)
		if !(d[r] > 0 && d[r] <= 1) {
			return nil, fmt.Sprintf("d_%d = %.6g outside (0, 1]", r, d[r])
		}
	}
	return d, ""
}

// GoodTuring returns the Good-Turing re-estimate r* = (r+1) n_{r+1} / n_r
// for r = 1..len(n)-2, where n[r] is the number of events seen r times.
func GoodTuring(n []float64) []float64 {
	rs := make([]float64, len(n)-1)
	for r := 1; r+1 < len(n); r++ {
		rs[r] = float64(r+1) * n[r+1] / n[r]
	}
	return rs
}

// wittenBell: P(w|h) = (c(hw) + T(h) P(w|h')) / (c(h) + T(h)) and
// bow(h) = T(h) / (c(h) + T(h)), T(h) the number of distinct successors.
func wittenBell(cnt []uint64, total float64, lower []float64, p []float64, _ *tally) float64 {
	var T float64
	for _, r := range cnt {
		if r > 0 {
			T++
		}
	}
	for j, r := range cnt {
		p[j] = (float64(r) + float64(T*lower[j])) / (total + T)
	}
	return T / (total + T)
}

// KneserNeyDiscounts returns Y, D1, D2, D3+ of modified Kneser-Ney from the
// count of counts n[1..4] (Chen and Goodman 1998, section 3), and the reason
// when the rule replaced them all by Y.
func KneserNeyDiscounts(n []float64) (Y, D1, D2, D3 float64, why string) {
	Y = absoluteAuto(n)
	for r := 1; r <= 4; r++ {
		if n[r] == 0 {
			return Y, Y, Y, Y, fmt.Sprintf("n_%d = 0", r)
		}
	}
	D1 = 1 - float64(2*Y*n[2]/n[1])
	D2 = 2 - float64(3*Y*n[3]/n[2])
	D3 = 3 - float64(4*Y*n[4]/n[3])
	switch {
	case !(D1 > 0 && D1 <= 1):
		why = fmt.Sprintf("D1 = %.6g outside (0, 1]", D1)
	case !(D2 > 0 && D2 <= 2):
		why = fmt.Sprintf("D2 = %.6g outside (0, 2]", D2)
	case !(D3 > 0 && D3 <= 3):
		why = fmt.Sprintf("D3+ = %.6g outside (0, 3]", D3)
	}
	if why != "" {
		return Y, Y, Y, Y, why
	}
	return Y, D1, D2, D3, ""
}

func kneserNey(k int, n []float64, rep *OrderReport) discounter {
	D1, D2, D3 := kneserNeyParams(k, n, rep)
	D := [4]float64{0, D1, D2, D3}
	return func(a []uint64, total float64, lower []float64, p []float64, _ *tally) float64 {
		var N [4]float64
		for _, r := range a {
			N[min(r, 3)]++
		}
		if total == 0 {
			copy(p, lower)
			return 1
		}
		gamma := (float64(D1*N[1]) + float64(D2*N[2]) + float64(D3*N[3])) / total
		for j, r := range a {
			p[j] = float64((float64(r)-D[min(r, 3)])/total) + float64(gamma*lower[j])
		}
		return gamma
	}
}

// kneserNeyBackedOff is Kneser-Ney in back-off form (Options.UnigramsBackedOff):
// the same discounts, each seen word's estimate without the lower order's
// share, the left-over mass gamma(h) spread over the unseen words by the
// back-off weight (and the back-off methods' rule for a context followed
// by every predictable word).
func kneserNeyBackedOff(k int, n []float64, rep *OrderReport) discounter {
	D1, D2, D3 := kneserNeyParams(k, n, rep)
	D := [4]float64{0, D1, D2, D3}
	backedOff := backoff(func(a []uint64, total float64, p []float64, _ *tally) float64 {
		var left float64
		for j, r := range a {
			d := D[min(r, 3)]
			p[j] = (float64(r) - d) / total
			left += d
		}
		return left / total
	})
	return func(a []uint64, total float64, lower []float64, p []float64, t *tally) float64 {
		if total == 0 { // as the interpolated form: the lower order alone
			copy(p, lower)
			return 1
		}
		return backedOff(a, total, lower, p, t)
	}
}

// kneserNeyParams computes and reports order k's modified discounts.
func kneserNeyParams(k int, n []float64, rep *OrderReport) (D1, D2, D3 float64) {
	Y, D1, D2, D3, why := KneserNeyDiscounts(n)
	if why != "" {
		rep.Fallbacks = append(rep.Fallbacks, fmt.Sprintf(
			"order %d: modified discounts unusable (%s); D1 = D2 = D3+ = Y = %.6g", k, why, Y))
	}
	rep.Discounts = []Param{{"Y", Y}, {"D1", D1}, {"D2", D2}, {"D3+", D3}}
	return D1, D2, D3
}

func (e *estimator) tables() *tables.Tables {
	t := &tables.Tables{Vocab: e.c.Vocab, Levels: make([]tables.Level, e.N), Links: e.links}
	// Orders 2 and up, and every order's back-off weights, were converted
	// as they were estimated (discountRun); the unigrams are converted
	// here.
	uni := make([]float32, len(e.prob[0]))
	for i, x := range e.prob[0] {
		uni[i] = log10f32(x)
	}
	e.logProb[0] = uni
	for k := 1; k <= e.N; k++ {
		lv := &t.Levels[k-1]
		lv.Words, lv.LogProb = e.c.Levels[k-1].Words, e.logProb[k-1]
		if k < e.N {
			lv.LogBackoff = e.logBow[k-1]
		}
	}
	t.Levels[0].LogProb[e.start] = tables.NoProb
	t.Info = tables.Info{Method: string(e.opt.Method), EmptyContextLogBackoff: math.Log10(e.empty)}
	for _, r := range e.report.Orders {
		m := map[string]float64{}
		for _, p := range r.Discounts {
			m[p.Name] = p.Value
		}
		t.Info.Discounts = append(t.Info.Discounts, m)
		t.Info.Fallbacks = append(t.Info.Fallbacks, r.Fallbacks...)
	}
	return t
}

// inParallel runs the tasks on GOMAXPROCS workers and waits for them.
func inParallel(tasks []func()) {
	next := make(chan func(), len(tasks))
	for _, task := range tasks {
		next <- task
	}
	close(next)
	var wg sync.WaitGroup
	for range min(runtime.GOMAXPROCS(0), len(tasks)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for task := range next {
				task()
			}
		}()
	}
	wg.Wait()
}

// hugeMake makes a slice of n zero values with a huge-page hint
// (counts.HugePagesOf), before anything touches it.
func hugeMake[E any](n int) []E {
	s := make([]E, n)
	counts.HugePagesOf(s)
	return s
}
