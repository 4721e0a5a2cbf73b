// Package budget fits a model to a byte budget from its counts, in one step:
// estimate, choose which n-grams to remove by relative entropy (Stolcke
// 1998, package prune), re-estimate on the survivors, recompute the
// back-off weights and quantize, so that the written file is at most the
// budget.
//
// Plain relative-entropy pruning suits back-off models whose lower orders
// are good estimates in their own right (Katz, absolute discounting,
// Witten-Bell). It suits Kneser-Ney badly, for two reasons (S. F. Chen and
// J. Goodman's continuation counts fit only the n-grams that the higher
// order lacks, and pruning later removes many more):
//
//   - the criterion, computed on the Kneser-Ney model itself, scores each
//     removal with a lower-order distribution that was never meant to
//     stand alone. Here the criterion is computed instead on a differently
//     smoothed model of the same counts (by default Katz back-off), after
//     C. Chelba, T. Brants, W. Neveitt and P. Xu (2010), "Study on
//     interaction between entropy pruning and Kneser-Ney smoothing",
//     Interspeech;
//   - the lower orders of the kept model still hold continuation counts
//     for a set of higher-order n-grams that no longer exists. Here the
//     Kneser-Ney model is estimated again with adjusted counts that fit
//     the survivors: a removed n-gram v g adds its own count to a(g), the
//     lower order that now predicts its words (after V. Siivola,
//     T. Hirsimäki and S. Virpioja (2007), "On growing and pruning
//     Kneser-Ney smoothed n-gram models", IEEE TASLP 15(5); see
//     estimate.Options.Survivors), and the discounts follow from the new
//     adjusted counts;
//   - the interpolated form gives each word without a count (<unk> among
//     them) gamma(empty)/|V| of the unigram distribution, some millionths,
//     and a pruned model reaches its unigrams far more often than the
//     unpruned one: on text with unknown words that alone decided the
//     pruned Kneser-Ney model's place among the methods at small budgets
//     (State of the Union, 1/16 of the file: 210.5 with <unk> against
//     absolute discounting's 207.5, but 196.5 against 207.2 without). So a
//     pruned Kneser-Ney model may estimate its unigrams in back-off form,
//     as R. Kneser and H. Ney (1995) defined the method: the empty
//     context's left-over mass goes to the words without a count
//     (estimate.Options.UnigramsBackedOff); higher orders stay
//     interpolated. With held-out text both forms are compared and the
//     better kept; without, the back-off form is used whenever something
//     is removed. With nothing removed the model is the plain estimate.
//
// With held-out text, Fit also builds the model of every lower order to
// the same budget and keeps the one with the lowest held-out perplexity,
// reporting what it compared.
package budget

import (
	"fmt"
	"math"
	"slices"

	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/prune"
	"ingot/compile/tables"
	"ingot/format"
	"ingot/format/score"
	"ingot/quantize"
)

// Options says what to build and how large it may be.
type Options struct {
	// Estimate is the method, the order and the method's parameters.
	Estimate estimate.Options
	// MaxBytes is the budget: the written file's size in bytes, once signed
	// (format.SignatureSpace bytes are left for a signature).
	MaxBytes int64
	// Quantize, when Bits is not 0, quantizes the pruned model; the budget
	// applies to the quantized file.
	Quantize quantize.Options
	// Ranking is the method of the model the relative-entropy criterion is
	// computed on; "" means DefaultRanking(Estimate.Method).
	Ranking estimate.Method
	// Heldout, when not empty, makes Fit compare the models of orders 2 to
	// Estimate.Order fitted to the same budget (for Kneser-Ney, each with
	// its unigrams interpolated and backed off) and keep the one with the
	// lowest perplexity on these sentences (token lists), <unk>
	// predictions included.
	Heldout [][]string
	// Describe, when set, fills in the build description of every model
	// right after estimation (tool version, options), so that the sizes
	// measured against the budget include it.
	Describe func(*tables.Info) error
	// Progress, when set, is told about each step.
	Progress func(step string)

	// interpolated keeps the pruned Kneser-Ney model in its interpolated
	// form (tests and benchmarks compare the two forms).
	interpolated bool
}

// DefaultRanking returns the method whose model ranks n-grams for removal
// when building a model of method m: Katz back-off for Kneser-Ney, the
// method itself otherwise. Measured on the State of the Union 5-gram
// models (README, "Which pruning path"), ranking on Katz or on absolute
// discounting both beat ranking Kneser-Ney on itself by far at small
// budgets (175.3 and 174.5 against 201.0 at 1/16 of the file); absolute
// was 0.2-0.5% better at 1/4 and 1/16, Katz 0.1% better at 1/2.
func DefaultRanking(m estimate.Method) estimate.Method {
	if m == estimate.KneserNey {
		return estimate.Katz
	}
	return m
}

// Candidate is one order's model fitted to the budget.
type Candidate struct {
	Order     int     `json:"order"`
	Threshold float64 `json:"threshold"`
	NGrams    []int   `json:"ngrams"`
	// FileBytes is the written file's size for the chosen order; for the
	// others it is their sizing (the quantized file's size through
	// quantize.Placeholder, at least the real one).
	FileBytes int64 `json:"file_bytes"`
	// Perplexity is the held-out perplexity of the order's pruned model
	// before quantization, the figure orders are compared on (0 without
	// held-out text; Result.Perplexity is the written model's).
	Perplexity float64 `json:"perplexity,omitempty"`
	// Form is, for Kneser-Ney, the form the survivors were estimated in:
	// "interpolated" or "back-off" (see Options.Heldout).
	Form string `json:"form,omitempty"`
	// Problem says why no model of this order fits (then the other fields
	// but Order are zero).
	Problem string `json:"problem,omitempty"`
}

// Result is the fitted model and what was compared to choose it.
type Result struct {
	// Model is the chosen model, pruned, re-estimated and (if asked)
	// quantized, ready to write.
	Model *tables.Tables
	// Report is the estimator's report of the chosen order's unpruned
	// model, each order's Kept set to what survived.
	Report *estimate.Report
	// Ranking is the method whose model ranked the n-grams.
	Ranking estimate.Method
	// Chosen is the chosen candidate; Candidates lists every order tried,
	// highest first (only the asked order without held-out text).
	Chosen     Candidate
	Candidates []Candidate
	// Perplexity is the written model's held-out perplexity (0 without
	// held-out text).
	Perplexity float64
}

// Fit builds the model opt asks for, pruned to fit opt.MaxBytes. It fails
// when no order's model fits.
func Fit(c *counts.Counts, opt Options) (*Result, error) {
	b, err := NewBuilder(c, opt)
	if err != nil {
		return nil, err
	}
	return b.Fit(opt.MaxBytes)
}

// Builder fits the model of one set of counts to budgets, keeping each
// order's estimate and ranking between calls, so that trying several
// budgets costs one estimation.
type Builder struct {
	c      *counts.Counts
	opt    Options
	orders map[int]*prepared
}

// prepared is one order's unpruned model and the scores that rank it.
type prepared struct {
	t      *tables.Tables
	rep    *estimate.Report
	scores prune.Scores
	// shaped gives the tables kept at a threshold, taken from the given
	// model (t or its re-estimate), build description included.
	shaped func(th float64, keep [][]bool, from *tables.Tables, interpolated bool) *tables.Tables
	// search remembers the sizes measured for this order across budgets.
	search *prune.Search
	// last is the pruned model built last in each form (interpolated,
	// back-off), at threshold lastTh.
	last   [2]*tables.Tables
	lastTh [2]float64
}

// NewBuilder checks opt (but for MaxBytes) and returns a Builder.
func NewBuilder(c *counts.Counts, opt Options) (*Builder, error) {
	if err := opt.Estimate.Validate(); err != nil {
		return nil, err
	}
	if opt.Ranking == "" {
		opt.Ranking = DefaultRanking(opt.Estimate.Method)
	}
	if !slices.Contains(estimate.Methods, opt.Ranking) {
		return nil, fmt.Errorf("unknown ranking method %q (katz, absolute, witten-bell, kneser-ney)", opt.Ranking)
	}
	return &Builder{c: c, opt: opt, orders: map[int]*prepared{}}, nil
}

// Fit builds the model fitted to maxBytes (see Options.Heldout for the
// orders compared). Orders are compared on their pruned models before
// quantization (each sized as the quantized file it would give, through
// quantize.Placeholder); only the chosen one is quantized, and fitted
// again if the quantized file comes out larger than its sizing.
func (b *Builder) Fit(maxBytes int64) (*Result, error) {
	if maxBytes <= 0 {
		return nil, fmt.Errorf("budget %d bytes must be positive", maxBytes)
	}
	N := b.opt.Estimate.Order
	if len(b.opt.Heldout) == 0 {
		m, rep, cand, err := b.fitOrder(N, maxBytes, b.opt.interpolated)
		if err != nil {
			return nil, err
		}
		return &Result{Model: m, Report: rep, Ranking: b.opt.Ranking, Chosen: cand, Candidates: []Candidate{cand}}, nil
	}
	res := &Result{Ranking: b.opt.Ranking}
	best := -1
	var firstErr error
	for n := N; n >= min(2, N); n-- {
		for _, interpolated := range b.forms() {
			m, cand, err := b.candidate(n, maxBytes, interpolated)
			if err == nil && !interpolated && cand.Form == "interpolated" {
				continue // nothing removed: the same model as the interpolated one
			}
			if err == nil {
				b.step("scoring the held-out text with the model of order %d", n)
				cand.Perplexity, err = perplexity(m, b.opt.Heldout)
			}
			if err != nil {
				if firstErr == nil {
					firstErr = err
				}
				res.Candidates = append(res.Candidates, Candidate{Order: n, Problem: err.Error()})
				break
			}
			res.Candidates = append(res.Candidates, cand)
			if best < 0 || cand.Perplexity < res.Candidates[best].Perplexity {
				best = len(res.Candidates) - 1
			}
		}
	}
	if best < 0 {
		return nil, firstErr
	}
	m, rep, cand, err := b.fitOrder(res.Candidates[best].Order, maxBytes, res.Candidates[best].Form != "back-off")
	if err != nil {
		return nil, err
	}
	cand.Perplexity = res.Candidates[best].Perplexity
	res.Perplexity = cand.Perplexity
	if b.opt.Quantize.Bits != 0 {
		b.step("scoring the held-out text with the quantized model")
		if res.Perplexity, err = perplexity(m, b.opt.Heldout); err != nil {
			return nil, err
		}
	}
	res.Candidates[best] = cand
	res.Model, res.Report, res.Chosen = m, rep, cand
	return res, nil
}

// forms lists the forms of Kneser-Ney compared on held-out text, as the
// interpolated flag of candidate: both for Kneser-Ney (unless the
// options pin the interpolated one), the one form otherwise.
func (b *Builder) forms() []bool {
	if b.opt.Estimate.Method != estimate.KneserNey || b.opt.interpolated {
		return []bool{true}
	}
	return []bool{true, false}
}

func (b *Builder) step(format string, a ...any) {
	if b.opt.Progress != nil {
		b.opt.Progress(fmt.Sprintf(format, a...))
	}
}

func (b *Builder) describe(t *tables.Tables) error {
	if b.opt.Describe == nil {
		return nil
	}
	return b.opt.Describe(&t.Info)
}

// prepare estimates and ranks the model of order n, once.
func (b *Builder) prepare(n int) (*prepared, error) {
	if p, ok := b.orders[n]; ok {
		return p, nil
	}
	eo := b.opt.Estimate
	eo.Order = n
	b.step("estimating %s, order %d", eo.Method, n)
	t, rep, err := estimate.Estimate(b.c, eo)
	if err != nil {
		return nil, err
	}
	if err := b.describe(t); err != nil {
		return nil, err
	}
	ranker := t
	if b.opt.Ranking != eo.Method {
		b.step("estimating %s, order %d, to rank n-grams", b.opt.Ranking, n)
		ro := estimate.Options{Method: b.opt.Ranking, Order: n, AutoDiscount: true}
		if ranker, _, err = estimate.Estimate(b.c, ro); err != nil {
			return nil, err
		}
	}
	b.step("scoring every n-gram of order %d by relative entropy", n)
	p := &prepared{t: t, rep: rep, scores: prune.EntropyScores(ranker)}
	opt, ranking := b.opt, b.opt.Ranking
	p.shaped = func(th float64, keep [][]bool, from *tables.Tables, interpolated bool) *tables.Tables {
		s := prune.Select(from, keep)
		s.Info.History = append(slices.Clip(s.Info.History), history(opt, ranking, th, keep, interpolated))
		return s
	}
	// Sizes are measured with the longer of the two form notes, so that
	// either form fits.
	p.search = prune.NewSearch(t, p.scores, sizer(b.opt.Quantize, func(th float64, kp [][]bool) *tables.Tables { return p.shaped(th, kp, t, true) }))
	b.orders[n] = p
	return p, nil
}

// candidate returns the unquantized pruned model of order n sized to
// maxBytes, Kneser-Ney in the given form, to compare orders and forms.
func (b *Builder) candidate(n int, maxBytes int64, interpolated bool) (*tables.Tables, Candidate, error) {
	pre, err := b.prepare(n)
	if err != nil {
		return nil, Candidate{}, err
	}
	b.step("choosing the threshold of order %d for %d bytes", n, maxBytes)
	th, keep, size, err := pre.search.Fit(maxBytes)
	if err != nil {
		return nil, Candidate{}, fmt.Errorf("order %d: %w", n, err)
	}
	m, err := b.pruned(pre, n, th, keep, interpolated)
	if err != nil {
		return nil, Candidate{}, err
	}
	// size counts the signature's room; FileBytes, as for a finished file,
	// does not.
	return m, Candidate{Order: n, Threshold: th, NGrams: prune.Kept(keep), FileBytes: size - format.SignatureSpace,
		Form: b.form(keep, interpolated)}, nil
}

// fitOrder builds the model of order n fitted to maxBytes, finished.
func (b *Builder) fitOrder(n int, maxBytes int64, interpolated bool) (*tables.Tables, *estimate.Report, Candidate, error) {
	pre, err := b.prepare(n)
	if err != nil {
		return nil, nil, Candidate{}, err
	}
	b.step("choosing the threshold of order %d for %d bytes", n, maxBytes)
	m, th, keep, size, err := fitFinished(pre.search, maxBytes, func(th float64, kp [][]bool) (*tables.Tables, error) {
		p, err := b.pruned(pre, n, th, kp, interpolated)
		if err != nil || b.opt.Quantize.Bits == 0 {
			return p, err
		}
		b.step("quantizing")
		q, _, err := quantize.Model(p, b.opt.Quantize)
		return q, err
	})
	if err != nil {
		return nil, nil, Candidate{}, fmt.Errorf("order %d: %w", n, err)
	}
	kept := prune.Kept(keep)
	rep := &estimate.Report{Method: pre.rep.Method, Orders: slices.Clone(pre.rep.Orders)}
	for k := range rep.Orders {
		rep.Orders[k].Kept = kept[k]
	}
	return m, rep, Candidate{Order: n, Threshold: th, NGrams: kept, FileBytes: size, Form: b.form(keep, interpolated)}, nil
}

// pruned returns the unquantized model of order n that keeps the given
// n-grams: Kneser-Ney estimated again on them, the others removed, back-off
// weights recomputed. The last one built for each order is remembered (the
// comparison of orders and the finishing of the chosen one ask for the same
// model). The caller must not change it.
func (b *Builder) pruned(pre *prepared, n int, th float64, keep [][]bool, interpolated bool) (*tables.Tables, error) {
	slot := 0
	if !interpolated {
		slot = 1
	}
	if pre.last[slot] != nil && pre.lastTh[slot] == th {
		return pre.last[slot], nil
	}
	t := pre.t
	if b.opt.Estimate.Method == estimate.KneserNey {
		b.step("estimating %s again on the survivors, order %d", b.opt.Estimate.Method, n)
		eo := b.opt.Estimate
		eo.Order = n
		eo.Survivors = keep
		eo.UnigramsBackedOff = backedOff(keep, interpolated)
		var err error
		if t, _, err = estimate.Estimate(b.c, eo); err != nil {
			return nil, err
		}
		if err := b.describe(t); err != nil {
			return nil, err
		}
	}
	b.step("recomputing back-off weights")
	p := pre.shaped(th, keep, t, interpolated)
	prune.Renormalize(p)
	pre.last[slot], pre.lastTh[slot] = p, th
	return p, nil
}

// FitFinished finds the least relative-entropy pruning of t (ranked by
// scores) whose finished model fits maxBytes. shaped gives the tables the
// pruning keeps, as they will be written before quantization (their size
// is computed by format.FileSize, as PlannedSize counts it when
// q.Bits is set, without writing or building anything); finish builds the
// model to write. The quantizer may widen a back-off codebook
// beyond what the sizing assumed (so that every context still sums to
// one); then the finished file is measured and the target lowered by the
// excess, a few times at most.
func FitFinished(t *tables.Tables, scores prune.Scores, maxBytes int64, q quantize.Options,
	shaped func(th float64, keep [][]bool) *tables.Tables,
	finish func(th float64, keep [][]bool) (*tables.Tables, error)) (m *tables.Tables, th float64, keep [][]bool, size int64, err error) {
	return fitFinished(prune.NewSearch(t, scores, sizer(q, shaped)), maxBytes, finish)
}

// sizer measures the file that shaped tables give, quantized (through
// PlannedSize) when q.Bits is set. Every size counts the signature
// the file may get (format.SignatureSpace), so that a signed model still
// fits.
func sizer(q quantize.Options, shaped func(th float64, keep [][]bool) *tables.Tables) func(float64, [][]bool) (int64, error) {
	return func(th float64, kp [][]bool) (int64, error) {
		p := shaped(th, kp)
		var n int64
		var err error
		if q.Bits != 0 {
			n, err = PlannedSize(p, q)
		} else {
			n, err = format.FileSize(p, format.Planned{})
		}
		return n + format.SignatureSpace, err
	}
}

// fitFinished is FitFinished on a search that may already know sizes.
func fitFinished(search *prune.Search, maxBytes int64,
	finish func(th float64, keep [][]bool) (*tables.Tables, error)) (m *tables.Tables, th float64, keep [][]bool, size int64, err error) {
	target := maxBytes
	for attempt := 1; ; attempt++ {
		th, keep, _, err = search.Fit(target)
		if err != nil {
			return nil, 0, nil, 0, err
		}
		if m, err = finish(th, keep); err != nil {
			return nil, 0, nil, 0, err
		}
		if size, err = format.FileSize(m, format.Planned{}); err != nil {
			return nil, 0, nil, 0, err
		}
		signed := size + format.SignatureSpace
		if signed <= maxBytes {
			return m, th, keep, size, nil
		}
		if attempt == maxAttempts {
			return nil, 0, nil, 0, fmt.Errorf("after %d attempts the model still takes %d bytes once signed, over the budget of %d", attempt, signed, maxBytes)
		}
		target -= signed - maxBytes
	}
}

// PlannedSize returns the size of the file of quantize.Placeholder(t, opt)
// (format.FileSize with the placeholder's plan) without building it.
func PlannedSize(t *tables.Tables, opt quantize.Options) (int64, error) {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = quantize.DefaultBackoffBits(opt.Bits)
	}
	if opt.UnigramBits == 0 {
		opt.UnigramBits = quantize.DefaultUnigramBits(opt.Bits)
	}
	info := quantize.PlaceholderInfo(t.Info, t.Order(), opt)
	unigrams := 0
	if quantize.UnigramsPay(t.Len(1), 1<<opt.UnigramBits) {
		unigrams = 1 << opt.UnigramBits
	}
	return format.FileSize(t, format.Planned{UnigramLevels: unigrams, ProbLevels: 1 << opt.Bits, BackoffLevels: 1 << opt.BackoffBits, Info: &info})
}

// Finish recomputes the back-off weights of a pruned model and quantizes
// it when q.Bits is set.
func Finish(p *tables.Tables, q quantize.Options) (*tables.Tables, error) {
	prune.Renormalize(p)
	if q.Bits == 0 {
		return p, nil
	}
	m, _, err := quantize.Model(p, q)
	return m, err
}

// maxAttempts bounds the re-fits after a quantized file came out larger
// than its sizing.
const maxAttempts = 5

// form names, for Kneser-Ney, the form of the model keeping the given
// n-grams ("" for the other methods).
func (b *Builder) form(keep [][]bool, interpolated bool) string {
	switch {
	case b.opt.Estimate.Method != estimate.KneserNey:
		return ""
	case backedOff(keep, interpolated):
		return "back-off"
	}
	return "interpolated"
}

// backedOff says whether the Kneser-Ney model keeping the given n-grams
// has its unigrams in back-off form (estimate.Options.UnigramsBackedOff):
// when asked, and
// only when some n-gram is removed. With nothing removed the model is the
// plain estimate, in the interpolated form ESTIMATORS pins.
func backedOff(keep [][]bool, interpolated bool) bool {
	if interpolated {
		return false
	}
	for _, kp := range keep {
		for _, k := range kp {
			if !k {
				return true
			}
		}
	}
	return false
}

func history(opt Options, ranking estimate.Method, th float64, keep [][]bool, interpolated bool) string {
	s := fmt.Sprintf("pruned by relative entropy below %.6g nats on the %s model of the same counts", th, ranking)
	if opt.Estimate.Method == estimate.KneserNey {
		s += ", kneser-ney estimated again on the survivors"
		if backedOff(keep, interpolated) {
			s += " (back-off form)"
		} else {
			s += " (interpolated form)"
		}
	}
	return s + fmt.Sprintf(" (kept %s n-grams per order)", joinInts(prune.Kept(keep)))
}

func joinInts(xs []int) string {
	s := ""
	for i, x := range xs {
		if i > 0 {
			s += "/"
		}
		s += fmt.Sprint(x)
	}
	return s
}

// perplexity scores sentences with t as the written file would.
func perplexity(t *tables.Tables, sentences [][]string) (float64, error) {
	data, err := format.Marshal(t)
	if err != nil {
		return 0, err
	}
	m, err := format.FromBytes(data)
	if err != nil {
		return 0, err
	}
	sc := score.NewScorer(m)
	var sum score.Summary
	for _, s := range sentences {
		sum.Add(sc.Score(s))
	}
	p := sum.Perplexity()
	if math.IsNaN(p) {
		return 0, fmt.Errorf("held-out text holds no sentence")
	}
	return p, nil
}
