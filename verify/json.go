package verify

import (
	"math"

	"ingot/inspect"
	"ingot/verify/gate"
)

// JSONReport is the report ingot verify --json prints (keys documented in
// the README). Numbers that may not be finite are inspect.Number, written
// as null.
type JSONReport struct {
	Model              string         `json:"model"`
	OK                 bool           `json:"ok"`
	Failed             []string       `json:"failed"`
	Checks             []JSONCheck    `json:"checks"`
	FormatVersion      int            `json:"format_version"`
	Order              int            `json:"order"`
	VocabularySize     int            `json:"vocabulary_size"`
	NGramsPerOrder     []int          `json:"ngrams"`
	ContextsChecked    int            `json:"contexts_checked"`
	MaxAbsDeviation    inspect.Number `json:"max_abs_deviation"`
	Tolerance          inspect.Number `json:"tolerance"`
	OverTolerance      int            `json:"contexts_over_tolerance"`
	WorstContexts      []JSONContext  `json:"worst_contexts"`
	DeviationHistogram []JSONBucket   `json:"deviation_histogram"`
	// ReleaseGate is present only with a baseline and held-out text.
	ReleaseGate *JSONGate `json:"release_gate,omitempty"`
}

// jsonChecks returns the names of the failed checks and every check as
// JSON prints them (empty lists, never null).
func jsonChecks(checks []Check) (failed []string, list []JSONCheck) {
	failed, list = append([]string{}, failedChecks(checks)...), []JSONCheck{}
	for _, c := range checks {
		list = append(list, JSONCheck{Name: c.Name, Status: string(c.Status), Detail: c.Detail, Problems: c.Problems, ProblemCount: c.Count})
	}
	return failed, list
}

// JSONCheck is one check of the report.
type JSONCheck struct {
	Name         string    `json:"name"`
	Status       string    `json:"status"`
	Detail       string    `json:"detail"`
	Problems     []Problem `json:"problems,omitempty"`
	ProblemCount int       `json:"problem_count"`
}

// JSONContext is one of the contexts whose sum is farthest from one.
type JSONContext struct {
	Context      []string       `json:"context"`
	Sum          inspect.Number `json:"sum"`
	AbsDeviation inspect.Number `json:"abs_deviation"`
}

// JSONBucket is one bucket of the histogram of |S(h) - 1|: from From up to
// To (null for the last, unbounded bucket).
type JSONBucket struct {
	From     inspect.Number `json:"from"`
	To       inspect.Number `json:"to"`
	Contexts int            `json:"contexts"`
}

// JSONGate is the release gate's verdict: the candidate (the model
// verified) against the baseline on held-out text. Keys without a prefix
// are the candidate's, as everywhere the model reported on.
type JSONGate struct {
	Baseline                     string          `json:"baseline"`
	Heldout                      string          `json:"heldout"`
	Sentences                    int             `json:"sentences"`
	Predictions                  int             `json:"predictions"`
	Perplexity                   inspect.Number  `json:"perplexity"`
	PerplexityWithoutUnk         inspect.Number  `json:"perplexity_without_unk"`
	UnkPredictions               int             `json:"unk_predictions"`
	BaselinePerplexity           inspect.Number  `json:"baseline_perplexity"`
	BaselinePerplexityWithoutUnk inspect.Number  `json:"baseline_perplexity_without_unk"`
	BaselineUnkPredictions       int             `json:"baseline_unk_predictions"`
	IncreasePercent              inspect.Number  `json:"perplexity_increase_percent"`
	MaxIncreasePercent           inspect.Number  `json:"max_perplexity_increase_percent"`
	Passed                       bool            `json:"passed"`
	NGramsAdded                  int             `json:"ngrams_added"`
	NGramsRemoved                int             `json:"ngrams_removed"`
	NGramsChanged                int             `json:"ngrams_changed"`
	NGramsByOrder                []JSONOrderDiff `json:"ngrams_by_order"`
	MeanKLNats                   inspect.Number  `json:"mean_kl_nats"`
	KLDirection                  string          `json:"kl_direction"`
	KLEvents                     int             `json:"kl_events"`
}

// JSONOrderDiff is the n-grams of one order added, removed and changed
// (compared by their words) from the baseline to the candidate.
type JSONOrderDiff struct {
	Order   int `json:"order"`
	Added   int `json:"added"`
	Removed int `json:"removed"`
	Changed int `json:"changed"`
}

// GateSettings names the release gate's inputs and limit for the report.
type GateSettings struct {
	Baseline, Heldout  string
	MaxIncreasePercent float64
}

// NewJSONReport describes rep, the verification of the file model, and,
// when res is not nil, the release gate's result. tolerance is the one
// asked for (0: the default, reported as the one used when normalisation
// ran, else null).
func NewJSONReport(model string, rep *Report, tolerance float64, res *gate.Result, g GateSettings) JSONReport {
	v := JSONReport{
		Model: model, OK: rep.OK(),
		FormatVersion: rep.Version, Order: rep.Order, VocabularySize: rep.VocabSize, NGramsPerOrder: rep.Counts,
		MaxAbsDeviation: inspect.Number(math.NaN()), Tolerance: inspect.Number(tolerance),
		WorstContexts: []JSONContext{}, DeviationHistogram: []JSONBucket{},
	}
	v.Failed, v.Checks = jsonChecks(rep.Checks)
	if v.NGramsPerOrder == nil {
		v.NGramsPerOrder = []int{}
	}
	if tolerance == 0 {
		v.Tolerance = inspect.Number(math.NaN())
	}
	if n := rep.Normalisation; n != nil {
		v.ContextsChecked = n.Contexts
		v.MaxAbsDeviation = inspect.Number(n.MaxDeviation)
		v.Tolerance = inspect.Number(n.Tolerance)
		v.OverTolerance = n.Exceeding
		for _, c := range n.Worst {
			v.WorstContexts = append(v.WorstContexts, JSONContext{append([]string{}, c.Context...), inspect.Number(c.Sum), inspect.Number(c.Deviation())})
		}
		for b, count := range n.Histogram {
			lower, upper := BucketBounds(b)
			v.DeviationHistogram = append(v.DeviationHistogram, JSONBucket{From: inspect.Number(lower), To: inspect.Number(upper), Contexts: count})
		}
	}
	if res != nil {
		v.ReleaseGate = &JSONGate{
			Baseline: g.Baseline, Heldout: g.Heldout,
			Sentences: res.Sentences, Predictions: res.Predictions,
			Perplexity:                   inspect.Number(res.Candidate.Perplexity),
			PerplexityWithoutUnk:         inspect.Number(res.Candidate.PerplexityWithoutUnknown),
			UnkPredictions:               res.Candidate.UnknownPredictions,
			BaselinePerplexity:           inspect.Number(res.Baseline.Perplexity),
			BaselinePerplexityWithoutUnk: inspect.Number(res.Baseline.PerplexityWithoutUnknown),
			BaselineUnkPredictions:       res.Baseline.UnknownPredictions,
			IncreasePercent:              inspect.Number(res.IncreasePercent),
			MaxIncreasePercent:           inspect.Number(g.MaxIncreasePercent),
			Passed:                       res.Passes(g.MaxIncreasePercent),
			NGramsAdded:                  res.Added, NGramsRemoved: res.Removed, NGramsChanged: res.Changed,
			MeanKLNats:  inspect.Number(res.MeanKL),
			KLDirection: "KL(baseline || candidate)",
			KLEvents:    res.Events,
		}
		for _, o := range res.Orders {
			v.ReleaseGate.NGramsByOrder = append(v.ReleaseGate.NGramsByOrder, JSONOrderDiff{o.Order, o.Added, o.Removed, o.Changed})
		}
	}
	return v
}
