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
//     adjusted counts.
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
	// Estimate.Order fitted to the same budget and keep the one with the
	// lowest perplexity on these sentences (token lists).
	Heldout [][]string
	// Describe, when set, fills in the build description of every model
	// right after estimation (tool version, options), so that the sizes
	// measured against the budget include it.
	Describe func(*tables.Info) error
	// Progress, when set, is told about each step.
	Progress func(step string)
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
	Order      int     `json:"order"`
	Threshold  float64 `json:"threshold"`
	NGrams     []int   `json:"ngrams_per_order"`
	FileBytes  int64   `json:"file_bytes"`
	Perplexity float64 `json:"perplexity,omitempty"` // 0 without held-out text
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
// orders compared).
func (b *Builder) Fit(maxBytes int64) (*Result, error) {
	if maxBytes <= 0 {
		return nil, fmt.Errorf("budget %d bytes must be positive", maxBytes)
	}
	N := b.opt.Estimate.Order
	low := N
	if len(b.opt.Heldout) > 0 {
		low = min(2, N)
	}
	res := &Result{Ranking: b.opt.Ranking}
	best := -1
	var firstErr error
	for n := N; n >= low; n-- {
		m, rep, cand, err := b.fitOrder(n, maxBytes)
		if err != nil {
			if firstErr == nil {
				firstErr = err
			}
			res.Candidates = append(res.Candidates, Candidate{Order: n, Problem: err.Error()})
			continue
		}
		if len(b.opt.Heldout) > 0 {
			if cand.Perplexity, err = perplexity(m, b.opt.Heldout); err != nil {
				return nil, err
			}
		}
		res.Candidates = append(res.Candidates, cand)
		if best < 0 || cand.Perplexity < res.Chosen.Perplexity {
			best = len(res.Candidates) - 1
			res.Model, res.Report, res.Chosen = m, rep, cand
		}
	}
	if best < 0 {
		return nil, firstErr
	}
	return res, nil
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
	b.orders[n] = p
	return p, nil
}

// fitOrder builds the model of order n fitted to maxBytes.
func (b *Builder) fitOrder(n int, maxBytes int64) (*tables.Tables, *estimate.Report, Candidate, error) {
	pre, err := b.prepare(n)
	if err != nil {
		return nil, nil, Candidate{}, err
	}
	opt, c, t, step, describe := b.opt, b.c, pre.t, b.step, b.describe
	scores := pre.scores
	eo := opt.Estimate
	eo.Order = n
	method := eo.Method
	rep := &estimate.Report{Method: pre.rep.Method, Orders: slices.Clone(pre.rep.Orders)}
	shaped := func(th float64, keep [][]bool, from *tables.Tables) *tables.Tables {
		p := prune.Select(from, keep)
		p.Info.History = append(slices.Clip(p.Info.History), history(method, opt.Ranking, th, keep))
		return p
	}
	step("choosing the threshold for %d bytes", maxBytes)
	m, th, keep, size, err := FitFinished(t, scores, maxBytes, opt.Quantize,
		func(th float64, kp [][]bool) *tables.Tables { return shaped(th, kp, t) },
		func(th float64, kp [][]bool) (*tables.Tables, error) {
			return build(c, eo, t, kp, func(p *tables.Tables) *tables.Tables { return shaped(th, kp, p) }, describe, opt.Quantize, step)
		})
	if err != nil {
		return nil, nil, Candidate{}, fmt.Errorf("order %d: %w", n, err)
	}
	kept := prune.Kept(keep)
	for k := range rep.Orders {
		rep.Orders[k].Kept = kept[k]
	}
	return m, rep, Candidate{Order: n, Threshold: th, NGrams: kept, FileBytes: size}, nil
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
	// Every size compared counts the signature the file may get
	// (format.SignatureSpace), so that a signed model still fits.
	target := maxBytes
	for attempt := 1; ; attempt++ {
		th, keep, _, err = prune.Fit(t, scores, target, func(th float64, kp [][]bool) (int64, error) {
			p := shaped(th, kp)
			var n int64
			if q.Bits != 0 {
				n, err = PlannedSize(p, q)
			} else {
				n, err = format.FileSize(p, format.Planned{})
			}
			return n + format.SignatureSpace, err
		})
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
	info := quantize.PlaceholderInfo(t.Info, t.Order(), opt)
	return format.FileSize(t, format.Planned{ProbLevels: 1 << opt.Bits, BackoffLevels: 1 << opt.BackoffBits, Info: &info})
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

// build makes the model that keeps the given n-grams of t: Kneser-Ney
// estimated again on them, the others removed, back-off weights recomputed,
// quantized if asked.
func build(c *counts.Counts, eo estimate.Options, t *tables.Tables, keep [][]bool, shaped func(*tables.Tables) *tables.Tables,
	describe func(*tables.Tables) error, q quantize.Options, step func(string, ...any)) (*tables.Tables, error) {
	if eo.Method == estimate.KneserNey {
		step("estimating %s again on the survivors", eo.Method)
		eo.Survivors = keep
		var err error
		if t, _, err = estimate.Estimate(c, eo); err != nil {
			return nil, err
		}
		if err := describe(t); err != nil {
			return nil, err
		}
	}
	step("recomputing back-off weights and quantizing")
	return Finish(shaped(t), q)
}

func history(method, ranking estimate.Method, th float64, keep [][]bool) string {
	s := fmt.Sprintf("pruned by relative entropy below %.6g nats on the %s model of the same counts", th, ranking)
	if method == estimate.KneserNey {
		s += ", kneser-ney estimated again on the survivors"
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
