package quantize

import (
	"fmt"
	"math"
	"math/bits"
	"slices"

	"ingot/compile/tables"
)

// Options says how to quantize a model.
type Options struct {
	// Bits is the index width of the probabilities of orders 2..N (2 to 16).
	Bits int
	// BackoffBits is the index width of the back-off weights of orders
	// 1..N-1 (2 to 16); 0 means DefaultBackoffBits(Bits).
	BackoffBits int
	// UnigramBits is the index width of the unigram probabilities (2 to
	// 16); 0 means DefaultUnigramBits(Bits).
	UnigramBits int
	// Trainer builds the codebooks.
	Trainer Trainer

	weights []float64 // of the order being quantized
	// fixedBackoffBits keeps BackoffBits even where a context stays more
	// than MaxResidual from one (tests measure the joint choice alone).
	fixedBackoffBits bool
	// floatUnigrams keeps order 1 in float32 (tests measure what
	// quantizing it costs).
	floatUnigrams bool
	// nearestOnly rounds each weight to its nearest level and moves no
	// probability (tests compare the joint choice against it).
	nearestOnly bool
	// nearestBackoffs keeps each weight at the level the joint choice
	// found first and skips cheapen (tests measure what it saves).
	nearestBackoffs bool
}

// DefaultBackoffBits returns the back-off weight width used when none is
// given: that of the probabilities, but at least 8 bits, because the
// weights' rounding is what moves a context's total away from one.
func DefaultBackoffBits(bits int) int { return max(bits, 8) }

// DefaultUnigramBits returns the unigram width used when none is given:
// that of the probabilities, but at least 8 bits, because the unigrams
// alone make up the empty context, whose sum no back-off weight can
// correct.
func DefaultUnigramBits(bits int) int { return max(bits, 8) }

// UnigramsPay reports whether v unigram probabilities take fewer bits
// quantized, as a codebook of the given number of float32 levels plus
// one index of ceil(log2 levels) bits per word, than as v float32 values.
// A small vocabulary keeps its unigrams in float32.
func UnigramsPay(v, levels int) bool {
	return 32*levels+v*bits.Len(uint(max(levels, 2)-1)) < 32*v
}

// OrderReport describes the codebooks of one order.
type OrderReport struct {
	Order int
	// Probability codebook.
	ProbLevels      int
	ProbStep        float64 // largest gap between neighbouring levels (log10)
	ProbMaxError    float64 // largest |quantized - original| (log10)
	RoundedDown     int     // contexts whose probabilities were all rounded down
	BackoffBits     int     // the width the weights got (at least the asked one; see MaxResidual)
	BackoffLevels   int
	BackoffStep     float64
	BackoffMaxError float64 // against the weights recomputed from quantized probabilities
	Residual        float64 // largest |S(h) - 1| of a context of this order, as the quantized model sums
}

// Model returns a quantized copy of t:
//
//  1. per order k >= 2, a codebook of 2^Bits - 1 log10 probabilities is
//     trained, each value weighted by the model's own probability of the
//     whole n-gram, P(h w) = P(h) P(w|h), so that levels go where text will
//     use them (the trainer then minimises the expected squared log10
//     error); the order's smallest value is added as a level of its own, and
//     every probability replaced by its nearest level (order 1 gets a
//     codebook of its own, 2^UnigramBits levels, and its rounding is
//     compensated so that the empty context sums to one: see
//     quantizeUnigrams). A context whose quantized
//     probabilities would leave no mass to back off with has all its
//     probabilities rounded down instead (the added level makes that always
//     possible);
//  2. order by order from the lowest, every back-off weight is recomputed
//     from the quantized probabilities and the quantized lower orders' own
//     sums (the back-off formula with S(h') in place of one), so every
//     context would normalise exactly and no lower order's rounding is
//     passed on;
//  3. a codebook of 2^BackoffBits - 1 log10 weights is trained on the
//     weights of contexts that have successors, log10 0 added as an exact
//     level for those that have none; each context's weight level is then
//     chosen jointly with its successors' probability levels (the nearest
//     weight level first, then its neighbours; successors moved a level at
//     a time) so that S(h) lands within ResidualGoal of one where the
//     levels allow. An order where some context stays further than
//     MaxResidual from one gets wider weights (one more bit at a
//     time, up to 16): a representation fine enough where the left-over
//     mass needs it;
//  4. when that codebook is wider than 8 bits, weights are moved onto the
//     255 levels the most contexts use where a level within a factor of
//     1.007 keeps the context within MaxResidual of one (cheapen), so that
//     a tiered column (spec/FORMAT.md §4.8.6) escapes fewer of them.
//
// The largest |S(h) - 1| per order is recorded (Info.Quantization.Residual)
// as a claim; ingot verify measures every sum itself and never reads it.
func Model(t *tables.Tables, opt Options) (*tables.Tables, []OrderReport, error) {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = DefaultBackoffBits(opt.Bits)
	}
	if opt.UnigramBits == 0 {
		opt.UnigramBits = DefaultUnigramBits(opt.Bits)
	}
	for _, b := range []int{opt.Bits, opt.BackoffBits, opt.UnigramBits} {
		if b < 2 || b > 16 {
			return nil, nil, fmt.Errorf("quantize: %d bits asked for; from 2 to 16 are supported", b)
		}
	}
	if _, err := ParseTrainer(string(opt.Trainer)); err != nil {
		return nil, nil, err
	}
	q := copyTables(t)
	N := q.Order()
	reports := make([]OrderReport, N)
	for k := 1; k <= N; k++ {
		reports[k-1].Order = k
	}
	mass := q.JointProbs()
	probBooks := make([]Codebook, N)
	for k := 2; k <= N; k++ {
		opt.weights = mass[k-1]
		cb, err := quantizeProbs(q, k, opt, &reports[k-1])
		if err != nil {
			return nil, nil, err
		}
		probBooks[k-1] = cb
	}
	qi := &tables.Quantization{Trainer: string(opt.Trainer), Bits: opt.Bits, BackoffBits: opt.BackoffBits,
		ProbMaxError: make([]float64, N), BackoffMaxError: make([]float64, N), Residual: make([]float64, N)}
	if !opt.floatUnigrams {
		opt.weights = mass[0]
		if err := quantizeUnigrams(q, opt, &reports[0]); err != nil {
			return nil, nil, err
		}
	}
	sums := &contextSums{}
	for _, p := range q.Levels[0].LogProb {
		sums.empty += math.Pow(10, float64(p)) // <s> stores -Inf: adds 0
	}
	for k := 1; k < N; k++ {
		opt.weights = mass[k-1]
		if err := quantizeBackoffs(q, k, opt, probBooks[k], sums, &reports[k-1]); err != nil {
			return nil, nil, err
		}
	}
	for k, r := range reports {
		// The compensation moves some probabilities by a level: measure the
		// final error against the original values.
		{
			r.ProbMaxError = maxError(asFloat64(t.Levels[k].LogProb), q.Levels[k].LogProb)
			reports[k].ProbMaxError = r.ProbMaxError
		}
		qi.ProbMaxError[k] = r.ProbMaxError
		qi.BackoffMaxError[k] = r.BackoffMaxError
		qi.Residual[k] = r.Residual
	}
	q.Info.Quantization = qi
	q.Info.History = append(q.Info.History, fmt.Sprintf("quantized: probabilities %d bits, back-off weights %d bits, unigrams %d bits, %s codebooks",
		opt.Bits, opt.BackoffBits, opt.UnigramBits, opt.Trainer))
	return q, reports, nil
}

// quantizeUnigrams quantizes the probabilities of order 1 (when that
// takes fewer bytes than float32: UnigramsPay), which alone
// make up the empty context: a codebook of 2^UnigramBits - 1 levels is
// trained on the finite values, each weighted by its probability (a -Inf
// value, the unigram <s>, gets a level of its own), every value is
// replaced by its nearest level, and then values are moved a level at a
// time, largest first, while that brings the sum of the unigram
// probabilities closer to one (the compensator of the back-off step, with
// one as the target). Small probabilities come last, so the left-over
// error is about one level step of the smallest ones. When the sum stays
// further than MaxResidual from one, the unigrams are quantized again
// with two more bits, up to 16.
func quantizeUnigrams(q *tables.Tables, opt Options, rep *OrderReport) error {
	lv := &q.Levels[0]
	orig := slices.Clone(lv.LogProb)
	var finite, weights []float64
	var at []int // positions of the finite values
	hasInf := false
	for i, p := range orig {
		if math.IsInf(float64(p), -1) {
			hasInf = true
			continue
		}
		finite = append(finite, float64(p))
		weights = append(weights, opt.weights[i])
		at = append(at, i)
	}
	if len(finite) == 0 {
		return nil // nothing a codebook could stand for: order 1 stays float32
	}
	for bits := opt.UnigramBits; ; bits = min(bits+2, 16) {
		levels := 1<<bits - 1
		if !hasInf {
			levels++
		}
		trained, err := TrainWeighted(finite, weights, min(levels, max(len(finite), MinLevels)), opt.Trainer)
		if err != nil {
			return fmt.Errorf("quantize: probabilities of order 1: %w", err)
		}
		values := slices.Clone(trained.Values)
		cb := Codebook{Values: values}
		if hasInf {
			cb.Values = append([]float32{float32(math.Inf(-1))}, values...)
		}
		rounded := make([]float32, len(at))
		for x, v := range finite {
			rounded[x] = trained.Values[trained.index(v)]
		}
		comp := newCompensator(Codebook{Values: trained.Values})
		sum := comp.start(rounded)
		residual := comp.moveTo(rounded, sum, 1)
		copy(lv.LogProb, orig)
		for x, i := range at {
			lv.LogProb[i] = rounded[x]
		}
		if !UnigramsPay(len(orig), cb.Len()) {
			copy(lv.LogProb, orig) // a small vocabulary: float32 takes less
			return nil
		}
		lv.ProbCodebook = cb.Values
		rep.ProbLevels = cb.Len()
		rep.ProbStep = trained.LargestGap()
		if residual <= MaxResidual || bits == 16 {
			return nil
		}
	}
}

func copyTables(t *tables.Tables) *tables.Tables {
	q := &tables.Tables{Vocab: t.Vocab, Info: t.Info, Levels: make([]tables.Level, t.Order())}
	q.Info.History = slices.Clone(t.Info.History)
	for k, lv := range t.Levels {
		q.Levels[k] = tables.Level{
			Words:      lv.Words,
			LogProb:    slices.Clone(lv.LogProb),
			LogBackoff: slices.Clone(lv.LogBackoff),
		}
	}
	return q
}

func asFloat64(v []float32) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = float64(x)
	}
	return out
}

func quantizeProbs(q *tables.Tables, k int, opt Options, rep *OrderReport) (Codebook, error) {
	lv := &q.Levels[k-1]
	if len(lv.LogProb) == 0 {
		return Codebook{}, nil
	}
	orig := asFloat64(lv.LogProb)
	trained, err := TrainWeighted(orig, opt.weights, 1<<opt.Bits-1, opt.Trainer)
	if err != nil {
		return Codebook{}, fmt.Errorf("quantize: probabilities of order %d: %w", k, err)
	}
	// The smallest value is kept as a level of its own, so that rounding
	// down is always possible.
	cb := Codebook{Values: append([]float32{float32(slices.Min(orig))}, trained.Values...)}
	slices.Sort(cb.Values)
	cb.Values = slices.Compact(cb.Values)
	for i, v := range lv.LogProb {
		lv.LogProb[i] = cb.Values[cb.Index(v)]
	}
	// Contexts are runs of entries sharing their first k-1 words.
	for i := 0; i < len(lv.LogProb); {
		j := i + 1
		for j < len(lv.LogProb) && tables.Compare(q.Gram(k, j)[:k-1], q.Gram(k, i)[:k-1]) == 0 {
			j++
		}
		var sum float64
		for x := i; x < j; x++ {
			sum += math.Pow(10, float64(lv.LogProb[x]))
		}
		if sum >= 1-1e-6 {
			sum = 0
			for x := i; x < j; x++ {
				lv.LogProb[x] = cb.Values[floorIndex(cb, orig[x])]
				sum += math.Pow(10, float64(lv.LogProb[x]))
			}
			rep.RoundedDown++
			if sum >= 1-1e-9 {
				return Codebook{}, fmt.Errorf("quantize: order %d context %q keeps no mass to back off with even when rounded down; use more bits", k, q.Words(q.Gram(k, i)[:k-1]))
			}
		}
		i = j
	}
	lv.ProbCodebook = cb.Values
	rep.ProbLevels = cb.Len()
	rep.ProbStep = cb.LargestGap()
	rep.ProbMaxError = maxError(orig, lv.LogProb)
	return cb, nil
}

// floorIndex returns the largest level at or below v (the lowest level is
// the smallest value, so there is one).
func floorIndex(cb Codebook, v float64) int {
	i := cb.Index(float32(v))
	for i > 0 && float64(cb.Values[i]) > v {
		i--
	}
	return i
}

func maxError(orig []float64, q []float32) float64 {
	var m float64
	for i, v := range orig {
		if float64(q[i]) == v { // -Inf stays -Inf
			continue
		}
		m = max(m, math.Abs(float64(q[i])-v))
	}
	return m
}

// ResidualGoal is how close to one the quantizer brings a context's sum
// S(h) when the levels allow it; the joint choice stops at the first
// choice this close.
const ResidualGoal = 1e-5

// MaxResidual is the largest |S(h) - 1| Model leaves in any context: an
// order whose back-off weights cannot meet it at the asked width is given
// wider weights (one more bit at a time, up to 16). ingot verify allows
// ten times this for any model with a quantized column
// (verify.QuantizedTolerance) and reads nothing from the file to decide
// it.
const MaxResidual = 1e-4

// searchWindow is how many back-off levels on each side of the nearest one
// the joint choice tries.
const searchWindow = 8

// contextSums holds S(h) = sum over the vocabulary of P(w|h), as the
// quantized model answers, for every stored context of the orders done so
// far; empty is S of the empty context.
type contextSums struct {
	empty float64
	order [][]float64 // [k-1][i]
}

// of returns S(g) for any context g: that of its longest stored suffix
// (the back-off rule answers an unstored context as that suffix).
func (s *contextSums) of(q *tables.Tables, g []uint32) float64 {
	for start := 0; start < len(g); start++ {
		k := len(g) - start
		if k-1 >= len(s.order) {
			continue
		}
		if i := q.Find(g[start:]); i >= 0 {
			return s.order[k-1][i]
		}
	}
	return s.empty
}

// quantizeBackoffs sets the back-off weights of order k. For each context h
// it computes the exact weight from the quantized probabilities and the
// quantized lower orders as they sum, bow(h) = (1 - P(h)) / (S(h') - L(h)),
// with P(h) the sum of h's stored probabilities, L(h) the lower-order
// probabilities of the same words and S(h') the sum of the lower context
// (not taken as one, so no lower order's residual is passed on). It trains
// the codebook on those weights and then chooses, per context, the weight
// level and its successors' probability levels together: for the nearest
// weight level and then its neighbours in turn, the successors are moved a
// level at a time towards the sum that makes S(h) one, and the first
// choice within ResidualGoal (or else the best) is kept. When some context
// stays further than MaxResidual from one, the order's weights are
// quantized again with one more bit, up to 16 (one bit at a time: a
// codebook no wider than needed keeps the escaped weights of a tiered
// column, and the codebook itself, short).
func quantizeBackoffs(q *tables.Tables, k int, opt Options, probs Codebook, sums *contextSums, rep *OrderReport) error {
	ctx, above := &q.Levels[k-1], &q.Levels[k]
	n := len(ctx.LogBackoff)
	start := make([]int, n+1) // successors of context i: [start[i], start[i+1])
	j := 0
	for i := 0; i < n; i++ {
		start[i] = j
		h := q.Gram(k, i)
		for j < len(above.LogProb) && tables.Compare(above.Words[(k+1)*j:(k+1)*j+k], h) == 0 {
			j++
		}
	}
	start[n] = j
	// Pass 1: the exact weights, and the mass each context backs off with.
	exact := make([]float64, n)
	mass := make([]float64, n)  // S(h') - L(h)
	sumP := make([]float64, n)  // P(h)
	below := make([]float64, n) // S(h')
	g := make([]uint32, k+1)
	var train []float64
	for i := 0; i < n; i++ {
		below[i] = sums.of(q, q.Gram(k, i)[1:])
		a, b := start[i], start[i+1]
		if a == b {
			continue
		}
		var sp, sl float64
		for x := a; x < b; x++ {
			sp += math.Pow(10, float64(above.LogProb[x]))
			copy(g, q.Gram(k+1, x)[1:])
			sl += math.Pow(10, q.LogProb(g[:k]))
		}
		sumP[i], mass[i] = sp, below[i]-sl
		bow := 1.0
		if sl < 1-1e-12 {
			bow = (1 - sp) / mass[i]
		}
		exact[i] = math.Log10(bow)
		train = append(train, exact[i])
	}
	original := slices.Clone(above.LogProb)
	sums.order = append(sums.order, make([]float64, n))
	for bits := opt.BackoffBits; ; bits = min(bits+1, 16) {
		worst, err := chooseBackoffs(q, k, bits, opt, probs, start, exact, mass, below, sums.order[k-1], rep)
		if err != nil {
			return err
		}
		if worst <= MaxResidual || bits == 16 || opt.fixedBackoffBits {
			break
		}
		copy(above.LogProb, original)
	}
	return nil
}

// chooseBackoffs trains a codebook of 2^bits - 1 weights (plus log10 0
// exact) for order k, chooses each context's level jointly with its
// successors' levels, moves weights onto frequent levels (cheapen), records each context's sum in sums, and returns the
// largest |S(h) - 1|.
func chooseBackoffs(q *tables.Tables, k, bits int, opt Options, probs Codebook, start []int, exact, mass, below, sums []float64, rep *OrderReport) (float64, error) {
	ctx, above := &q.Levels[k-1], &q.Levels[k]
	n := len(ctx.LogBackoff)
	var train []float64
	for i := 0; i < n; i++ {
		if start[i] < start[i+1] {
			train = append(train, exact[i])
		}
	}
	levels := []float32{0}
	if len(train) > 0 {
		cb, err := Train(train, 1<<bits-1, opt.Trainer)
		if err != nil {
			return 0, fmt.Errorf("quantize: back-off weights of order %d: %w", k, err)
		}
		levels = append(levels, cb.Values...)
		slices.Sort(levels)
		levels = slices.Compact(levels)
	}
	cb := Codebook{Values: levels}
	pow := make([]float64, cb.Len()) // pow[j] = 10^cb.Values[j], computed once
	for j, v := range cb.Values {
		pow[j] = math.Pow(10, float64(v))
	}
	var maxErr, worst float64
	var trial, best []float32
	comp := newCompensator(probs)
	rounded := slices.Clone(above.LogProb) // the successors' nearest levels
	chosen := make([]int, n)               // each context's level, -1 for none
	for i := 0; i < n; i++ {
		a, b := start[i], start[i+1]
		chosen[i] = -1
		if a == b {
			ctx.LogBackoff[i] = 0
			sums[i] = below[i]
			continue
		}
		near := cb.index(exact[i])
		bestJ, bestR := near, math.Inf(1)
		best = append(best[:0], above.LogProb[a:b]...)
		trial = append(trial[:0], above.LogProb[a:b]...)
		sum0 := comp.start(above.LogProb[a:b])
		window := searchWindow
		if opt.nearestOnly {
			window = -1
			bestR = math.Abs(sum0 - 1 + pow[near]*mass[i])
		}
		for d := 0; d <= window && bestR > ResidualGoal; d++ {
			for _, j := range [2]int{near - d, near + d} {
				if j < 0 || j >= cb.Len() || (d == 0 && j != near) || bestR <= ResidualGoal {
					continue
				}
				target := 1 - pow[j]*mass[i]
				if r := comp.move(trial, sum0, target); r < bestR {
					bestJ, bestR = j, r
					best = append(best[:0], trial...)
				}
			}
		}
		copy(above.LogProb[a:b], best)
		chosen[i] = bestJ
	}
	if !opt.nearestOnly && !opt.nearestBackoffs {
		cheapen(above.LogProb, rounded, cb, pow, comp, start, exact, mass, chosen)
	}
	for i := 0; i < n; i++ {
		if chosen[i] < 0 {
			continue
		}
		bq := cb.Values[chosen[i]]
		ctx.LogBackoff[i] = bq
		maxErr = max(maxErr, math.Abs(float64(bq)-exact[i]))
		var sp float64
		for _, v := range above.LogProb[start[i]:start[i+1]] {
			sp += math.Pow(10, float64(v))
		}
		sums[i] = sp + pow[chosen[i]]*mass[i]
		worst = max(worst, math.Abs(sums[i]-1))
	}
	rep.BackoffBits = bits
	rep.BackoffLevels = cb.Len()
	rep.BackoffStep = cb.LargestGap()
	rep.BackoffMaxError = maxErr
	rep.Residual = worst
	ctx.BackoffCodebook = cb.Values
	return worst, nil
}

// compensator moves successors' probability levels so that a context's
// sum reaches a target. It holds the codebook's levels as probabilities
// and scratch space, so that trying several targets for one context costs
// no allocation and no powers.
type compensator struct {
	cb    Codebook
	pow   []float64 // pow[j] = 10^cb.Values[j]
	idx   []int     // the levels of the values being moved
	work  []int     // their levels during a move
	order []int     // their positions, largest value first
}

func newCompensator(cb Codebook) *compensator {
	c := &compensator{cb: cb, pow: make([]float64, cb.Len())}
	for j, v := range cb.Values {
		c.pow[j] = math.Pow(10, float64(v))
	}
	return c
}

// start prepares to move values (log10 probabilities, each a level of the
// codebook) and returns the sum of their probabilities.
func (c *compensator) start(values []float32) float64 {
	c.idx, c.order = c.idx[:0], c.order[:0]
	var sum float64
	for i, v := range values {
		j := c.cb.Index(v)
		c.idx = append(c.idx, j)
		c.order = append(c.order, i)
		sum += c.pow[j]
	}
	slices.SortFunc(c.order, func(a, b int) int {
		switch {
		case values[a] > values[b]:
			return -1
		case values[a] < values[b]:
			return 1
		}
		return a - b
	})
	return sum
}

// move moves the prepared values (whose probabilities sum to sum) by one
// level at a time, largest first, for up to four passes, while that brings
// the sum closer to target without reaching one (a context keeps mass to
// back off with); it writes the chosen levels into out and returns the
// remaining |sum - target|.
func (c *compensator) move(out []float32, sum, target float64) float64 {
	return c.shift(out, sum, target, 1)
}

// moveTo is move for a distribution that backs off to nothing (the
// unigrams): the sum may reach the target of one but not pass it by more
// than it comes closer.
func (c *compensator) moveTo(out []float32, sum, target float64) float64 {
	return c.shift(out, sum, target, math.Inf(1))
}

func (c *compensator) shift(out []float32, sum, target, ceiling float64) float64 {
	c.work = append(c.work[:0], c.idx...)
	for pass := 0; pass < 4; pass++ {
		changed := false
		for _, x := range c.order {
			d := target - sum
			j := c.work[x]
			next := j + 1
			if d < 0 {
				next = j - 1
			}
			if next < 0 || next >= len(c.pow) {
				continue
			}
			delta := c.pow[next] - c.pow[j]
			if math.Abs(d-delta) < math.Abs(d) && sum+delta < ceiling {
				c.work[x] = next
				sum += delta
				changed = true
			}
		}
		if !changed {
			break
		}
	}
	for x, j := range c.work {
		out[x] = c.cb.Values[j]
	}
	return math.Abs(sum - target)
}

// Placeholder returns tables shaped like the output of Model(t, opt) but
// holding no real values, for measuring file sizes cheaply: codebooks of the
// largest size the options allow and build information at least as long as
// Model writes (PlaceholderInfo), so that the file it gives is at least as
// large as the real quantized file. format.FileSize with a plan gives its
// size without building it (budget.PlannedSize).
func Placeholder(t *tables.Tables, opt Options) *tables.Tables {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = DefaultBackoffBits(opt.Bits)
	}
	if opt.UnigramBits == 0 {
		opt.UnigramBits = DefaultUnigramBits(opt.Bits)
	}
	N := t.Order()
	q := &tables.Tables{Vocab: t.Vocab, Info: PlaceholderInfo(t.Info, N, opt), Levels: make([]tables.Level, N)}
	book := func(bits int) []float32 {
		cb := make([]float32, 1<<bits)
		for i := range cb {
			cb[i] = float32(i)
		}
		return cb
	}
	// Every level used equally often, in turn: no index column so spread
	// is written shorter than packed (a tiered column pays only where a
	// few levels are frequent), so the file is as large as any
	// quantized model of this shape.
	cycle := func(n int, cb []float32) []float32 {
		v := make([]float32, n)
		for i := range v {
			v[i] = cb[i%len(cb)]
		}
		return v
	}
	var starts [][]uint32
	if N > 1 {
		words := make([][]uint32, N)
		for k := 2; k <= N; k++ {
			words[k-1] = t.Levels[k-1].Words
		}
		if l, err := tables.Link(len(t.Vocab), words); err == nil {
			starts = l.Starts
		}
	}
	for k := 1; k <= N; k++ {
		src := &t.Levels[k-1]
		lv := tables.Level{Words: src.Words, LogProb: src.LogProb, LogBackoff: src.LogBackoff}
		if k >= 2 {
			lv.ProbCodebook = book(opt.Bits)
			lv.LogProb = cycle(len(src.LogProb), lv.ProbCodebook)
		} else if UnigramsPay(len(src.LogProb), 1<<opt.UnigramBits) {
			lv.ProbCodebook = book(opt.UnigramBits)
			lv.LogProb = cycle(len(src.LogProb), lv.ProbCodebook)
		}
		if k < N {
			lv.BackoffCodebook = book(opt.BackoffBits)
			lv.LogBackoff = make([]float32, len(src.LogBackoff))
			// Only entries with children keep a weight (the others
			// stay at log10 0, level 0), the levels in turn among them.
			c := 0
			for i := range lv.LogBackoff {
				if starts != nil && starts[k-1][i+1] > starts[k-1][i] {
					lv.LogBackoff[i] = lv.BackoffCodebook[c%len(lv.BackoffCodebook)]
					c++
				}
			}
		}
		q.Levels[k-1] = lv
	}
	return q
}

// PlaceholderInfo returns the build information of a model of order n
// quantized with opt, with every recorded error as long as a float64 gets
// in JSON: at least as long as what Model records.
func PlaceholderInfo(info tables.Info, n int, opt Options) tables.Info {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = DefaultBackoffBits(opt.Bits)
	}
	if opt.UnigramBits == 0 {
		opt.UnigramBits = DefaultUnigramBits(opt.Bits)
	}
	long := -1.2345678901234567e-123 // as long as a float64 gets in JSON
	qi := &tables.Quantization{Trainer: string(opt.Trainer), Bits: opt.Bits, BackoffBits: opt.BackoffBits}
	for range n {
		qi.ProbMaxError = append(qi.ProbMaxError, long)
		qi.BackoffMaxError = append(qi.BackoffMaxError, long)
		qi.Residual = append(qi.Residual, long)
	}
	info.Quantization = qi
	info.History = append(slices.Clip(info.History), fmt.Sprintf("quantized: probabilities %d bits, back-off weights %d bits, unigrams %d bits, %s codebooks",
		opt.Bits, opt.BackoffBits, opt.UnigramBits, opt.Trainer))
	return info
}
