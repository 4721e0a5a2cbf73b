package pipeline

import (
	"ingot/compile/budget"
	"ingot/compile/counts"
	"ingot/compile/estimate"
	"ingot/compile/tables"
	"ingot/inspect"
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
	FileBytes      int64           `json:"file_bytes"`
	MaxBytes       int64           `json:"max_bytes"`
	Method         string          `json:"method"`
	Model          string          `json:"model"`
	NGramsPerOrder []int           `json:"ngrams"`
	Order          int             `json:"order"`
	OrdersCompared []OrderCompared `json:"orders_compared"`
	// Perplexity is the chosen model's held-out perplexity (absent without
	// held-out text).
	Perplexity *inspect.Number `json:"perplexity,omitempty"`
	RankedBy   string          `json:"ranked_by"`
	Threshold  inspect.Number  `json:"threshold"`
}

// OrderCompared is one order's model fitted to the budget (the one
// written or one compared with it on held-out text).
type OrderCompared struct {
	Order          int            `json:"order"`
	Threshold      inspect.Number `json:"threshold"`
	NGramsPerOrder []int          `json:"ngrams"`
	FileBytes      int64          `json:"file_bytes"`
	// Perplexity is held-out perplexity before quantization (absent
	// without held-out text); Problem says why no model of the order fits.
	Perplexity *inspect.Number `json:"perplexity,omitempty"`
	Problem    string          `json:"problem,omitempty"`
	// Form is, for Kneser-Ney, the form of its unigrams: "interpolated" or
	// "back-off" (budget.Candidate.Form).
	Form string `json:"form,omitempty"`
}

// NewBudgetReport describes a model fitted to maxBytes and written to
// model.
func NewBudgetReport(model string, method estimate.Method, maxBytes int64, res *budget.Result) BudgetReport {
	r := BudgetReport{
		FileBytes: res.Chosen.FileBytes, MaxBytes: maxBytes, Method: string(method), Model: model,
		NGramsPerOrder: res.Chosen.NGrams, Order: res.Chosen.Order, OrdersCompared: []OrderCompared{},
		RankedBy: string(res.Ranking), Threshold: inspect.Number(res.Chosen.Threshold),
	}
	for _, c := range res.Candidates {
		oc := OrderCompared{Order: c.Order, Threshold: inspect.Number(c.Threshold), NGramsPerOrder: c.NGrams, FileBytes: c.FileBytes, Problem: c.Problem, Form: c.Form}
		if c.Perplexity > 0 {
			p := inspect.Number(c.Perplexity)
			oc.Perplexity = &p
		}
		r.OrdersCompared = append(r.OrdersCompared, oc)
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
	BaselineNGramsPerOrder       []int           `json:"baseline_ngrams,omitempty"`
	BaselinePerplexity           *inspect.Number `json:"baseline_perplexity,omitempty"`
	BaselinePerplexityWithoutUnk *inspect.Number `json:"baseline_perplexity_without_unk,omitempty"`
	FileBytes                    int64           `json:"file_bytes"`
	Model                        string          `json:"model"`
	NGramsPerOrder               []int           `json:"ngrams,omitempty"`
	// Orders: quantize only.
	Orders               []QuantizedOrder `json:"orders,omitempty"`
	Perplexity           *inspect.Number  `json:"perplexity,omitempty"`
	PerplexityWithoutUnk *inspect.Number  `json:"perplexity_without_unk,omitempty"`
	// Threshold: prune only, in nats.
	Threshold *inspect.Number `json:"threshold,omitempty"`
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

// NGramsPerOrder returns the entries of each order, unigrams first.
func NGramsPerOrder(t *tables.Tables) []int {
	n := make([]int, t.Order())
	for k := range n {
		n[k] = t.Len(k + 1)
	}
	return n
}

// CountReport is count's JSON report: the count file written, its size and
// the n-grams per order (for order 1, every word of the file's vocabulary,
// markers included).
type CountReport struct {
	Counts         string   `json:"counts"`
	FileBytes      int64    `json:"file_bytes"`
	Order          int      `json:"order"`
	NGramsPerOrder []uint64 `json:"ngrams"`
}

// NewCountReport describes the count file written to path (fileBytes
// long) by a count whose report is rep.
func NewCountReport(path string, fileBytes int64, rep *counts.Report) CountReport {
	per := append([]uint64{}, rep.Entries...)
	if len(per) > 0 {
		per[0] = uint64(rep.Words)
	}
	return CountReport{Counts: path, FileBytes: fileBytes, Order: len(per), NGramsPerOrder: per}
}
