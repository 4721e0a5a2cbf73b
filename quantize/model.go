package quantize

import (
	"fmt"
	"math"
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
	// Trainer builds the codebooks.
	Trainer Trainer

	weights []float64 // of the order being quantized
}

// DefaultBackoffBits returns the back-off weight width used when none is
// given: that of the probabilities, but at least 8 bits, because the
// weights' rounding is what moves a context's total away from one.
func DefaultBackoffBits(bits int) int { return max(bits, 8) }

// OrderReport describes the codebooks of one order.
type OrderReport struct {
	Order int
	// Probability codebook (nil at order 1, which stays float32).
	ProbLevels      int
	ProbStep        float64 // largest gap between neighbouring levels (log10)
	ProbMaxError    float64 // largest |quantized - original| (log10)
	RoundedDown     int     // contexts whose probabilities were all rounded down
	BackoffLevels   int
	BackoffStep     float64
	BackoffMaxError float64 // against the weights recomputed from quantized probabilities
	Residual        float64 // largest |sum - 1| of a context, its lower orders taken as exact
}

// Model returns a quantized copy of t:
//
//  1. per order k >= 2, a codebook of 2^Bits - 1 log10 probabilities is
//     trained, each value weighted by the model's own probability of the
//     whole n-gram, P(h w) = P(h) P(w|h), so that levels go where text will
//     use them (the trainer then minimises the expected squared log10
//     error); the order's smallest value is added as a level of its own, and
//     every probability replaced by its nearest level (order 1 stays
//     float32, so the empty context stays exact). A context whose quantized
//     probabilities would leave no mass to back off with has all its
//     probabilities rounded down instead (the added level makes that always
//     possible);
//  2. order by order from the lowest, every back-off weight is recomputed
//     from the quantized probabilities (the back-off formula), so every
//     context would normalise exactly;
//  3. a codebook of 2^BackoffBits - 1 log10 weights is trained on the
//     weights of contexts that have successors, log10 0 added as an exact
//     level for those that have none, and every weight replaced by its
//     nearest level; the rounding is then compensated by moving successors'
//     probabilities one level where that brings the context's total closer
//     to one.
//
// What compensation cannot absorb is recorded per order as the residual
// (Info.Quantization.Residual); see Tolerance.
func Model(t *tables.Tables, opt Options) (*tables.Tables, []OrderReport, error) {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = DefaultBackoffBits(opt.Bits)
	}
	for _, b := range []int{opt.Bits, opt.BackoffBits} {
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
	for k := 1; k < N; k++ {
		if err := quantizeBackoffs(q, k, opt, probBooks[k], &reports[k-1]); err != nil {
			return nil, nil, err
		}
	}
	for k, r := range reports {
		// The compensation moves some probabilities by a level: measure the
		// final error against the original values.
		if k >= 1 {
			r.ProbMaxError = maxError(asFloat64(t.Levels[k].LogProb), q.Levels[k].LogProb)
			reports[k].ProbMaxError = r.ProbMaxError
		}
		qi.ProbMaxError[k] = r.ProbMaxError
		qi.BackoffMaxError[k] = r.BackoffMaxError
		qi.Residual[k] = r.Residual
	}
	q.Info.Quantization = qi
	q.Info.History = append(q.Info.History, fmt.Sprintf("quantized: probabilities %d bits, back-off weights %d bits, %s codebooks",
		opt.Bits, opt.BackoffBits, opt.Trainer))
	return q, reports, nil
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
		m = max(m, math.Abs(float64(q[i])-v))
	}
	return m
}

// quantizeBackoffs recomputes the back-off weights of order k from the
// quantized probabilities, trains their codebook, rounds each weight to its
// nearest level, and then compensates: it moves the quantized probabilities
// of the context's successors (order k+1, codebook probs) by one level where
// that brings the context's total closer to one, so that the weight's
// rounding costs as little normalisation as the levels allow.
func quantizeBackoffs(q *tables.Tables, k int, opt Options, probs Codebook, rep *OrderReport) error {
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
	// Pass 1: the exact weights, and the lower-order mass of each context.
	exact := make([]float64, n)
	lowerMass := make([]float64, n)
	g := make([]uint32, k+1)
	var train []float64
	for i := 0; i < n; i++ {
		a, b := start[i], start[i+1]
		if a == b {
			exact[i] = 0
			continue
		}
		var sumP, sumL float64
		for x := a; x < b; x++ {
			sumP += math.Pow(10, float64(above.LogProb[x]))
			copy(g, q.Gram(k+1, x)[1:])
			sumL += math.Pow(10, q.LogProb(g[:k]))
		}
		lowerMass[i] = sumL
		bow := 1.0
		if sumL < 1-1e-12 {
			bow = (1 - sumP) / (1 - sumL)
		}
		exact[i] = math.Log10(bow)
		train = append(train, exact[i])
	}
	levels := []float32{0}
	if len(train) > 0 {
		cb, err := Train(train, 1<<opt.BackoffBits-1, opt.Trainer)
		if err != nil {
			return fmt.Errorf("quantize: back-off weights of order %d: %w", k, err)
		}
		levels = append(levels, cb.Values...)
		slices.Sort(levels)
		levels = slices.Compact(levels)
	}
	cb := Codebook{Values: levels}
	// Pass 2: round each weight and compensate with the successors.
	var maxErr, maxResidual float64
	for i := 0; i < n; i++ {
		a, b := start[i], start[i+1]
		if a == b {
			ctx.LogBackoff[i] = 0
			continue
		}
		bq := cb.Values[cb.Index(float32(exact[i]))]
		ctx.LogBackoff[i] = bq
		maxErr = max(maxErr, math.Abs(float64(bq)-exact[i]))
		if lowerMass[i] >= 1-1e-12 {
			continue // followed by every word: weight 1, nothing backs off
		}
		target := 1 - float64(math.Pow(10, float64(bq))*(1-lowerMass[i]))
		maxResidual = max(maxResidual, compensate(above.LogProb[a:b], probs, target))
	}
	rep.BackoffLevels = cb.Len()
	rep.BackoffStep = cb.LargestGap()
	rep.BackoffMaxError = maxErr
	rep.Residual = maxResidual
	ctx.BackoffCodebook = cb.Values
	return nil
}

// compensate moves values (log10 probabilities, each a level of cb) by one
// level at a time, largest first, while that brings the sum of their
// probabilities closer to target; it returns the remaining |sum - target|.
func compensate(values []float32, cb Codebook, target float64) float64 {
	var sum float64
	for _, v := range values {
		sum += math.Pow(10, float64(v))
	}
	order := make([]int, len(values))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int {
		switch {
		case values[a] > values[b]:
			return -1
		case values[a] < values[b]:
			return 1
		}
		return a - b
	})
	for pass := 0; pass < 4; pass++ {
		moved := false
		for _, x := range order {
			d := target - sum
			j := cb.Index(values[x])
			cur := math.Pow(10, float64(values[x]))
			next := j + 1
			if d < 0 {
				next = j - 1
			}
			if next < 0 || next >= cb.Len() {
				continue
			}
			delta := math.Pow(10, float64(cb.Values[next])) - cur
			if math.Abs(d-delta) < math.Abs(d) && sum+delta < 1 {
				values[x] = cb.Values[next]
				sum += delta
				moved = true
			}
		}
		if !moved {
			break
		}
	}
	return math.Abs(sum - target)
}

// Tolerance returns how far from one a context's total probability may be
// in a quantized model. For a context h of order k,
//
//	S(h) - 1 = r(h) + bow(h) (S(h') - 1)
//
// where r(h) is the context's own residual (what rounding left after
// compensation, recorded per order at quantization as R_k) and the error
// inherited from the lower order is scaled by the weight, at most 10^top_k.
// With t_0 = base, the float tolerance of an unquantized model:
//
//	t_k = R_k + max(1, 10^top_k) t_{k-1}
//
// and the tolerance is the largest t_k, plus base for float rounding.
// residual[k-1] is R_k; tops[k-1] is the largest log10 weight of order k
// (its codebook's top level).
func Tolerance(base float64, residual, tops []float64) float64 {
	t, worst := base, base
	for k := range residual {
		t = residual[k] + base + math.Max(1, math.Pow(10, tops[k]))*t
		worst = max(worst, t)
	}
	return worst
}

// Placeholder returns tables shaped like the output of Model(t, opt) but
// holding no real values, for measuring file sizes cheaply: codebooks of the
// largest size the options allow and build information at least as long as
// Model writes, so that the file it gives is at least as large as the real
// quantized file.
func Placeholder(t *tables.Tables, opt Options) *tables.Tables {
	if opt.BackoffBits == 0 {
		opt.BackoffBits = DefaultBackoffBits(opt.Bits)
	}
	N := t.Order()
	q := &tables.Tables{Vocab: t.Vocab, Info: t.Info, Levels: make([]tables.Level, N)}
	long := -1.2345678901234567e-123 // as long as a float64 gets in JSON
	qi := &tables.Quantization{Trainer: string(opt.Trainer), Bits: opt.Bits, BackoffBits: opt.BackoffBits}
	for range N {
		qi.ProbMaxError = append(qi.ProbMaxError, long)
		qi.BackoffMaxError = append(qi.BackoffMaxError, long)
		qi.Residual = append(qi.Residual, long)
	}
	q.Info.Quantization = qi
	q.Info.History = append(slices.Clip(t.Info.History), fmt.Sprintf("quantized: probabilities %d bits, back-off weights %d bits, %s codebooks",
		opt.Bits, opt.BackoffBits, opt.Trainer))
	book := func(bits int) []float32 {
		cb := make([]float32, 1<<bits)
		for i := range cb {
			cb[i] = float32(i)
		}
		return cb
	}
	for k := 1; k <= N; k++ {
		src := &t.Levels[k-1]
		lv := tables.Level{Words: src.Words, LogProb: src.LogProb, LogBackoff: src.LogBackoff}
		if k >= 2 {
			lv.LogProb = make([]float32, len(src.LogProb))
			lv.ProbCodebook = book(opt.Bits)
		}
		if k < N {
			lv.LogBackoff = make([]float32, len(src.LogBackoff))
			lv.BackoffCodebook = book(opt.BackoffBits)
		}
		q.Levels[k-1] = lv
	}
	return q
}
