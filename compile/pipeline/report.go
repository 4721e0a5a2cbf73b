package pipeline

import (
	"ingot/compile/budget"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/inspect"
	"ingot/quantize"
)

// The reports below are the JSON that compile, prune and quantize print
// (keys documented in the README); numbers that may be infinite or NaN are
// inspect.Number, written as null.

// CompileReport is compile's report without a budget.
type CompileReport struct {
	Model  string       `json:"model"`
	Method string       `json:"method"`
	Orders []OrderBuilt `json:"orders"`
}

// OrderBuilt is one order of a compiled model.
type OrderBuilt struct {
	Order    int `json:"order"`
	NGrams   int `json:"ngrams"`
	Contexts int `json:"contexts"`
	// Kept is the n-grams kept by count cutoffs (absent without them).
	Kept *int `json:"kept,omitempty"`
	// Discounts are the discount parameters by name.
	Discounts    map[string]float64 `json:"discounts,omitempty"`
	RulesApplied []string           `json:"rules_applied,omitempty"`
}

// NewCompileReport describes the estimator's report of the model written
// to model.
func NewCompileReport(model string, rep *estimate.Report) CompileReport {
	r := CompileReport{Model: model, Method: string(rep.Method)}
	for _, o := range rep.Orders {
		ob := OrderBuilt{Order: o.Order, NGrams: o.NGrams, Contexts: o.Contexts, RulesApplied: o.Fallbacks}
		if o.Cut {
			kept := o.Kept
			ob.Kept = &kept
		}
		if len(o.Discounts) > 0 {
			ob.Discounts = map[string]float64{}
			for _, p := range o.Discounts {
				ob.Discounts[p.Name] = p.Value
			}
		}
		r.Orders = append(r.Orders, ob)
	}
	return r
}

// BudgetReport is compile's report with --max-size.
type BudgetReport struct {
	FileBytes      int64              `json:"file_bytes"`
	MaxBytes       int64              `json:"max_bytes"`
	Method         string             `json:"method"`
	Model          string             `json:"model"`
	NGramsPerOrder []int              `json:"ngrams_per_order"`
	Order          int                `json:"order"`
	OrdersCompared []budget.Candidate `json:"orders_compared"`
	// Perplexity is the chosen model's held-out perplexity (absent without
	// held-out text).
	Perplexity *inspect.Number `json:"perplexity,omitempty"`
	RankedBy   string          `json:"ranked_by"`
	Threshold  inspect.Number  `json:"threshold"`
}

// NewBudgetReport describes a model fitted to maxBytes and written to
// model.
func NewBudgetReport(model string, method estimate.Method, maxBytes int64, res *budget.Result) BudgetReport {
	r := BudgetReport{
		FileBytes: res.Chosen.FileBytes, MaxBytes: maxBytes, Method: string(method), Model: model,
		NGramsPerOrder: res.Chosen.NGrams, Order: res.Chosen.Order, OrdersCompared: res.Candidates,
		RankedBy: string(res.Ranking), Threshold: inspect.Number(res.Chosen.Threshold),
	}
	if res.Perplexity > 0 {
		p := inspect.Number(res.Perplexity)
		r.Perplexity = &p
	}
	return r
}

// ShrinkReport is the report of prune and quantize: the model written and
// the one it came from (the baseline), by size and, with held-out text, by
// perplexity with and without the predictions of <unk>.
type ShrinkReport struct {
	BaselineFileBytes int64 `json:"baseline_file_bytes"`
	// BaselineNGramsPerOrder and NGramsPerOrder: prune only.
	BaselineNGramsPerOrder       []int           `json:"baseline_ngrams_per_order,omitempty"`
	BaselinePerplexity           *inspect.Number `json:"baseline_perplexity,omitempty"`
	BaselinePerplexityWithoutUnk *inspect.Number `json:"baseline_perplexity_without_unk,omitempty"`
	FileBytes                    int64           `json:"file_bytes"`
	Model                        string          `json:"model"`
	NGramsPerOrder               []int           `json:"ngrams_per_order,omitempty"`
	// Orders: quantize only.
	Orders               []QuantizedOrder `json:"orders,omitempty"`
	Perplexity           *inspect.Number  `json:"perplexity,omitempty"`
	PerplexityWithoutUnk *inspect.Number  `json:"perplexity_without_unk,omitempty"`
	// Threshold: prune only, in nats.
	Threshold *inspect.Number `json:"threshold,omitempty"`
}

// SetPerplexities records held-out perplexities (with and without <unk>)
// of the baseline and of the model written.
func (r *ShrinkReport) SetPerplexities(baseline, baselineNoUnk, out, outNoUnk float64) {
	n := func(x float64) *inspect.Number { v := inspect.Number(x); return &v }
	r.BaselinePerplexity, r.BaselinePerplexityWithoutUnk = n(baseline), n(baselineNoUnk)
	r.Perplexity, r.PerplexityWithoutUnk = n(out), n(outNoUnk)
}

// SetPruned records prune's threshold and the n-grams per order before and
// after.
func (r *ShrinkReport) SetPruned(threshold float64, before, after *tables.Tables) {
	th := inspect.Number(threshold)
	r.Threshold = &th
	r.BaselineNGramsPerOrder, r.NGramsPerOrder = NGramsPerOrder(before), NGramsPerOrder(after)
}

// QuantizedOrder is one order of quantize's report.
type QuantizedOrder struct {
	Order           int            `json:"order"`
	ProbLevels      int            `json:"prob_levels"`
	ProbStep        inspect.Number `json:"prob_step"`
	ProbMaxError    inspect.Number `json:"prob_max_error"`
	BackoffBits     int            `json:"backoff_bits"`
	BackoffLevels   int            `json:"backoff_levels"`
	BackoffStep     inspect.Number `json:"backoff_step"`
	BackoffMaxError inspect.Number `json:"backoff_max_error"`
	Residual        inspect.Number `json:"residual"`
}

// SetQuantized records quantize's per-order report.
func (r *ShrinkReport) SetQuantized(reports []quantize.OrderReport) {
	for _, o := range reports {
		r.Orders = append(r.Orders, QuantizedOrder{o.Order, o.ProbLevels, inspect.Number(o.ProbStep), inspect.Number(o.ProbMaxError),
			o.BackoffBits, o.BackoffLevels, inspect.Number(o.BackoffStep), inspect.Number(o.BackoffMaxError), inspect.Number(o.Residual)})
	}
}

// NGramsPerOrder returns the entries of each order, unigrams first.
func NGramsPerOrder(t *tables.Tables) []int {
	n := make([]int, t.Order())
	for k := range n {
		n[k] = t.Len(k + 1)
	}
	return n
}
