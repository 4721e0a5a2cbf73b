// Package gate compares a candidate model with the baseline it is to
// replace, so that a release pipeline can refuse a model that got worse:
//
//   - the perplexity of both models on the same held-out text (scored as
//     package score scores it) and the candidate's relative increase, which
//     the gate holds to a limit (DefaultMaxIncreasePercent unless told
//     otherwise);
//   - the n-grams the candidate added, removed and changed, compared by
//     their words (the two vocabularies may differ);
//   - the mean Kullback-Leibler divergence KL(baseline || candidate), in
//     nats, between the two models' next-word distributions at every
//     prediction of the held-out text (see Divergence for the events it is
//     taken over).
//
// Only the perplexity decides; the other numbers say how much the model
// moved, for the person who reads the report.
package gate

import (
	"fmt"
	"io"
	"math"

	"github.com/RoaringBitmap/roaring/v2"

	"ingot/compile/text"
	"ingot/format"
	"ingot/format/score"
)

// DefaultMaxIncreasePercent is the largest relative perplexity increase, in
// percent, that the gate accepts by default. One percent is well above the
// noise of rebuilding a model from the same data (which changes nothing)
// and well below what a wrong order, a wrong discount or lost training
// data cost; a pipeline that expects a change sets its own limit.
const DefaultMaxIncreasePercent = 1.0

// ChangeEpsilon is how far, in log10 units, a stored log10 probability or
// back-off weight may move before the n-gram counts as changed. Values are
// stored as float32, whose spacing at the magnitudes of stored log10 values
// (up to about 16) is at most 2e-6, so a rebuild that rounds differently
// changes nothing, while a 0.0023 % change of a probability counts.
const ChangeEpsilon = 1e-5

// Side is one model's score on the held-out text.
type Side struct {
	Perplexity               float64
	PerplexityWithoutUnknown float64
	UnknownPredictions       int
}

// OrderDiff holds, for one order, the n-grams that only the candidate
// stores (added), that only the baseline stores (removed), and that both
// store with a log10 probability or back-off weight more than ChangeEpsilon
// apart (changed): the sets as roaring bitmaps of entry indexes (Chambi,
// Lemire, Kaser and Godin (2016), "Better bitmap performance with Roaring
// bitmaps", Softw. Pract. Exper. 46(5); recalled from memory), and their
// sizes. Model.Gram turns an index back into its words.
type OrderDiff struct {
	Order                   int
	Added, Removed, Changed int
	// AddedEntries and ChangedEntries index the candidate's entries of
	// this order, RemovedEntries the baseline's.
	AddedEntries, RemovedEntries, ChangedEntries *roaring.Bitmap
}

// Result is what Compare measured.
type Result struct {
	Sentences   int
	Predictions int
	Candidate   Side
	Baseline    Side
	// IncreasePercent is 100 (candidate perplexity / baseline perplexity
	// - 1), over all predictions.
	IncreasePercent float64
	// Orders holds the n-gram differences of orders 1 to the larger order
	// of the two models; Added, Removed and Changed are their totals.
	Orders                  []OrderDiff
	Added, Removed, Changed int
	// MeanKL is the mean over the predictions of KL(baseline || candidate)
	// in nats; Events is the number of events the distributions were
	// compared on (the shared words, and one event for every other word).
	MeanKL float64
	Events int
}

// Passes reports whether the candidate's perplexity rose by at most
// maxIncreasePercent percent.
func (r *Result) Passes(maxIncreasePercent float64) bool {
	return r.IncreasePercent <= maxIncreasePercent
}

// Compare scores the held-out text (named name in errors; one sentence per
// line, as package text reads it) with both models, and compares their
// n-grams and next-word distributions. It fails when the text cannot be
// read or holds no sentence, or when a model's trie is damaged.
func Compare(candidate, baseline *format.Model, name string, heldout io.Reader) (*Result, error) {
	return CompareWithProgress(candidate, baseline, name, heldout, nil)
}

// CompareWithProgress is Compare that calls progress, when not nil, with
// the number of sentences done after each one.
func CompareWithProgress(candidate, baseline *format.Model, name string, heldout io.Reader, progress func(sentences int)) (*Result, error) {
	res := &Result{}
	orders, err := Diff(candidate, baseline)
	if err != nil {
		return nil, err
	}
	res.Orders = orders
	for _, o := range orders {
		res.Added += o.Added
		res.Removed += o.Removed
		res.Changed += o.Changed
	}
	div := NewDivergence(baseline, candidate)
	sc, sb := score.NewScorer(candidate), score.NewScorer(baseline)
	var sumC, sumB score.Summary
	var kl float64
	err = text.HeldOut(name, heldout, func(tokens []string, _ int) error {
		sumC.Add(sc.Score(tokens))
		sumB.Add(sb.Score(tokens))
		kl += div.Sentence(tokens)
		if progress != nil {
			progress(sumC.Sentences)
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	if sumC.Predictions == 0 {
		return nil, fmt.Errorf("%s: no sentence to score", name)
	}
	res.Sentences, res.Predictions = sumC.Sentences, sumC.Predictions
	res.Candidate = side(&sumC)
	res.Baseline = side(&sumB)
	res.IncreasePercent = 100 * (res.Candidate.Perplexity/res.Baseline.Perplexity - 1)
	res.MeanKL = kl / float64(sumC.Predictions)
	res.Events = div.Events()
	if math.IsNaN(res.IncreasePercent) {
		return nil, fmt.Errorf("%s: perplexity is not a number (candidate %v, baseline %v)", name, res.Candidate.Perplexity, res.Baseline.Perplexity)
	}
	return res, nil
}

func side(s *score.Summary) Side {
	return Side{
		Perplexity:               s.Perplexity(),
		PerplexityWithoutUnknown: s.PerplexityWithoutUnknown(),
		UnknownPredictions:       s.Unk,
	}
}
