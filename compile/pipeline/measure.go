package pipeline

import (
	"fmt"
	"math"
	"os"

	"ingot/compile/input"
	"ingot/compile/tables"
	"ingot/compile/text"
	"ingot/format"
	"ingot/format/score"
	"ingot/inspect"
	"ingot/quantize"
)

// Measured is a model file as prune and quantize compare it: its size and,
// with held-out text, its perplexity with and without the predictions of
// <unk>.
type Measured struct {
	FileBytes int64
	// Scored says whether held-out text was scored; the perplexities are
	// NaN otherwise.
	Scored                           bool
	Perplexity, PerplexityWithoutUnk float64
}

// Measure measures the model file at path and, when heldout names a text
// file, scores it with the model. prune and quantize measure their input
// before they write anything, so that an output replacing the input (-o
// naming the input) is still compared with the input as it was.
func Measure(path, heldout string) (Measured, error) {
	m := Measured{Perplexity: math.NaN(), PerplexityWithoutUnk: math.NaN()}
	st, err := os.Stat(path)
	if err != nil {
		return m, err
	}
	m.FileBytes = st.Size()
	if heldout == "" {
		return m, nil
	}
	model, err := format.Open(path)
	if err != nil {
		return m, err
	}
	defer model.Close()
	r, err := input.Open(heldout)
	if err != nil {
		return m, fmt.Errorf("--heldout: %w", err)
	}
	defer r.Close()
	sum, err := score.Text(model, heldout, r, nil)
	if err != nil {
		return m, err
	}
	m.Scored, m.Perplexity, m.PerplexityWithoutUnk = true, sum.Perplexity(), sum.PerplexityWithoutUnknown()
	return m, nil
}

// Comparison is a rewritten model (prune, quantize) against the one it came
// from, the baseline.
type Comparison struct {
	Baseline, Result Measured
}

// PerplexityChange is the relative change of the held-out perplexity, in
// percent (NaN without held-out text).
func (c Comparison) PerplexityChange() float64 {
	return 100 * (c.Result.Perplexity/c.Baseline.Perplexity - 1)
}

// Report is the comparison as the JSON report of the model written to
// model.
func (c Comparison) Report(model string) ShrinkReport {
	r := ShrinkReport{Model: model, BaselineFileBytes: c.Baseline.FileBytes, FileBytes: c.Result.FileBytes}
	if c.Baseline.Scored && c.Result.Scored {
		n := func(x float64) *inspect.Number { v := inspect.Number(x); return &v }
		r.BaselinePerplexity, r.BaselinePerplexityWithoutUnk = n(c.Baseline.Perplexity), n(c.Baseline.PerplexityWithoutUnk)
		r.Perplexity, r.PerplexityWithoutUnk = n(c.Result.Perplexity), n(c.Result.PerplexityWithoutUnk)
	}
	return r
}

// PruneReport is prune's JSON report: the comparison, the threshold and the
// n-grams per order before and after.
func (c Comparison) PruneReport(model string, threshold float64, before, after *tables.Tables) ShrinkReport {
	r := c.Report(model)
	th := inspect.Number(threshold)
	r.Threshold = &th
	r.BaselineNGramsPerOrder, r.NGramsPerOrder = NGramsPerOrder(before), NGramsPerOrder(after)
	return r
}

// QuantizeReport is quantize's JSON report: the comparison and the
// codebooks of every order.
func (c Comparison) QuantizeReport(model string, reports []quantize.OrderReport) ShrinkReport {
	r := c.Report(model)
	for _, o := range reports {
		r.Orders = append(r.Orders, QuantizedOrder{o.Order, o.ProbLevels, inspect.Number(o.ProbStep), inspect.Number(o.ProbMaxError),
			o.BackoffBits, o.BackoffLevels, inspect.Number(o.BackoffStep), inspect.Number(o.BackoffMaxError), inspect.Number(o.Residual)})
	}
	return r
}

// ReadSentences reads held-out text as token lists, one per non-empty
// line, refusing a marker (<s>, </s>, <unk>) in it or an empty text.
func ReadSentences(name string) ([][]string, error) {
	r, err := input.Open(name)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	var out [][]string
	err = text.HeldOut(name, r, func(toks []string, _ int) error {
		out = append(out, append([]string(nil), toks...))
		return nil
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// Perplexity scores sentences with the model m.
func Perplexity(m *format.Model, sentences [][]string) float64 {
	sc := score.NewScorer(m)
	var sum score.Summary
	for _, s := range sentences {
		sum.Add(sc.Score(s))
	}
	return sum.Perplexity()
}
